// tonebridge-fit-bench: CPU time of the equivalent-circuit fits (dsp/circuit_fit.hpp).
//
// For each model, a 60-point sweep (20 Hz - 20 kHz, log-spaced) of that model with 0.05 %
// noise is fitted again and again; the figure is the median CPU time per fit
// (CLOCK_PROCESS_CPUTIME_ID) over the runs, next to its ratio to a baseline measured in the
// same process: evaluating the fitted model's 60-point curve 1000 times. The ratio travels
// between machines better than the milliseconds do. The target is 50 ms per fit. Prints
// figures only (no pass/fail); every result is stored to a volatile so no work is optimised
// away.
//
// Usage: tonebridge-fit-bench [--runs N]   (N >= 1, default 25)
#include <algorithm>
#include <cmath>
#include <complex>
#include <cstdio>
#include <cstdlib>
#include <cstring>
#include <ctime>
#include <optional>
#include <random>
#include <string>
#include <utility>
#include <vector>

#include "dsp/circuit_fit.hpp"

namespace {

using tb::dsp::FitFamily;
using tb::dsp::FitModel;
using cplx = std::complex<double>;

volatile double g_sink = 0;

double cpu_seconds() {
  timespec ts{};
  clock_gettime(CLOCK_PROCESS_CPUTIME_ID, &ts);
  return static_cast<double>(ts.tv_sec) + 1e-9 * static_cast<double>(ts.tv_nsec);
}

template <class Work>
double median_cpu_s(Work&& work, int runs) {
  std::vector<double> t;
  for (int r = 0; r < runs; ++r) {
    const double t0 = cpu_seconds();
    work();
    t.push_back(cpu_seconds() - t0);
  }
  std::sort(t.begin(), t.end());
  return t[t.size() / 2];
}

struct Case {
  FitModel model;
  std::vector<double> params;
};

tb::dsp::Sweep sweep_of(const Case& c) {
  std::mt19937 rng(1);
  std::normal_distribution<double> g(0.0, 5e-4);
  tb::dsp::Sweep s;
  for (int i = 0; i < 60; ++i) {
    const double f = 20 * std::pow(1000.0, i / 59.0);
    const cplx z = tb::dsp::model_impedance(c.model, c.params, f);
    s.freq_hz.push_back(f);
    s.z_ohm.push_back(z * cplx(1 + g(rng), g(rng)));
    s.u_re_ohm.push_back(5e-4 * std::abs(z));
    s.u_im_ohm.push_back(5e-4 * std::abs(z));
  }
  return s;
}

}  // namespace

int main(int argc, char** argv) {
  int runs = 25;
  for (int i = 1; i < argc; ++i) {
    if (std::strcmp(argv[i], "--runs") == 0 && i + 1 < argc) {
      runs = std::max(1, std::atoi(argv[++i]));
    } else {
      std::fprintf(stderr, "usage: tonebridge-fit-bench [--runs N]\n");
      return 2;
    }
  }
  const std::vector<Case> cases = {
      {FitModel::c_esr, {470e-6, 0.12}},
      {FitModel::c_esr_esl, {6.8e-6, 0.05, 20e-9}},
      {FitModel::l_r, {1.5e-3, 0.42}},
      {FitModel::l_r_cp, {1.5e-3, 0.42, 40e-12}},
      {FitModel::l_r_rp, {3.3e-3, 0.25, 800}},
      {FitModel::l_r_rp_cp, {3.3e-3, 0.25, 800, 200e-12}},
      {FitModel::r, {8.2}},
      {FitModel::r_ls, {4.7, 2e-6}},
      {FitModel::r_cp, {100e3, 20e-12}},
      {FitModel::driver_le, {6.2, 0.6e-3, 38, 3.8, 0.45}},
      {FitModel::driver_l2r2, {6.2, 0.35e-3, 0.9e-3, 3.5, 38, 3.8, 0.45}},
  };

  // Baseline: 1000 evaluations of a 60-point model curve (the l2r2 driver, the costliest).
  const tb::dsp::Sweep base_sweep = sweep_of(cases.back());
  const auto base_fit = tb::dsp::fit_model(base_sweep, FitModel::driver_l2r2);
  const double base_s = median_cpu_s(
      [&] {
        double acc = 0;
        for (int k = 0; k < 1000; ++k)
          for (cplx z : base_fit.curve(base_sweep.freq_hz))
            acc += z.real();
        g_sink = g_sink + acc;
      },
      runs);

  std::printf("CPU time per fit, 60-point sweep, median of %d runs\n", runs);
  std::printf("baseline (1000 evaluations of a 60-point curve): %.3f ms\n\n", 1e3 * base_s);
  std::printf("%-22s %10s %10s %6s %10s\n", "fit", "ms", "x base", "iter", "chi2_red");
  auto row = [&](const char* name, double s, int iter, double chi2) {
    std::printf("%-22s %10.3f %10.4f %6d %10.3f\n", name, 1e3 * s, s / base_s, iter, chi2);
  };
  for (const Case& c : cases) {
    const tb::dsp::Sweep s = sweep_of(c);
    tb::dsp::CircuitFit last;
    const double t = median_cpu_s(
        [&] {
          last = tb::dsp::fit_model(s, c.model);
          g_sink = g_sink + last.params.front().value;
        },
        runs);
    row(std::string(tb::dsp::fit_model_name(c.model)).c_str(), t, last.iterations,
        last.chi2_reduced);
  }
  // Model choice: every candidate of the family, as the service runs it.
  const std::vector<std::pair<FitFamily, std::size_t>> families = {{FitFamily::capacitor, 1},
                                                                   {FitFamily::inductor, 5},
                                                                   {FitFamily::resistor, 7},
                                                                   {FitFamily::driver, 10}};
  for (const auto& [fam, ci] : families) {
    const tb::dsp::Sweep s = sweep_of(cases[ci]);
    tb::dsp::FitSelection sel;
    const double t = median_cpu_s(
        [&] {
          sel = tb::dsp::fit_best(s, fam);
          g_sink = g_sink + sel.best.chi2;
        },
        runs);
    const std::string name = "best of " + std::string(tb::dsp::fit_family_name(fam));
    row(name.c_str(), t, sel.best.iterations, sel.best.chi2_reduced);
  }
  return 0;
}
