#include "dsp/sweep_refine.hpp"

#include <algorithm>
#include <cmath>
#include <numbers>

namespace tb::dsp {

namespace {

double wrap_deg(double d) {
  while (d > 180)
    d -= 360;
  while (d < -180)
    d += 360;
  return d;
}

bool usable(std::complex<double> z) {
  return std::isfinite(z.real()) && std::isfinite(z.imag()) && std::abs(z) > 0;
}

}  // namespace

std::vector<double> refine_frequencies(std::span<const double> freqs_hz,
                                       std::span<const std::complex<double>> z,
                                       const RefineConfig& config, int added_so_far) {
  std::vector<double> f;
  std::vector<std::complex<double>> v;
  for (std::size_t i = 0; i < freqs_hz.size() && i < z.size(); ++i) {
    if (usable(z[i]) && freqs_hz[i] > 0) {
      f.push_back(freqs_hz[i]);
      v.push_back(z[i]);
    }
  }
  std::vector<double> out;
  const std::size_t n = f.size();
  if (n < 2) return out;
  std::vector<bool> sharp(n - 1, false);  // interval i is [f[i], f[i+1]]
  for (std::size_t i = 0; i + 1 < n; ++i) {
    const double dphi = wrap_deg((std::arg(v[i + 1]) - std::arg(v[i])) * 180 / std::numbers::pi);
    if (std::abs(dphi) > config.max_phase_step_deg) sharp[i] = true;
  }
  for (std::size_t i = 1; i + 1 < n; ++i) {
    const double x0 = std::log(f[i - 1]), x1 = std::log(f[i]), x2 = std::log(f[i + 1]);
    const double y0 = std::log(std::abs(v[i - 1])), y1 = std::log(std::abs(v[i])),
                 y2 = std::log(std::abs(v[i + 1]));
    const double line = y0 + (y2 - y0) * (x1 - x0) / (x2 - x0);
    const bool bend = std::abs(y1 - line) > config.max_log_bend;
    const bool extreme = (y1 > y0 && y1 > y2) || (y1 < y0 && y1 < y2);
    // A straight slope that merely changes (a corner of an RC) bends mildly; a resonance
    // peak or dip is an extremum that also bends. Split both intervals beside it.
    if (bend || (extreme && std::abs(y1 - line) > config.max_log_bend / 4)) {
      sharp[i - 1] = true;
      sharp[i] = true;
    }
  }
  int budget = config.max_added - added_so_far;
  for (std::size_t i = 0; i + 1 < n && budget > 0; ++i) {
    if (!sharp[i] || f[i + 1] / f[i] < config.min_ratio * config.min_ratio) continue;
    out.push_back(std::sqrt(f[i] * f[i + 1]));
    --budget;
  }
  return out;
}

double settle_time_s(const SettleInputs& in) {
  double tau = std::max(in.group_delay_s, in.circuit_tau_s);
  if (in.coupling_hz > 0 && in.freq_hz < 20 * in.coupling_hz)
    tau = std::max(tau, 1 / (2 * std::numbers::pi * in.coupling_hz));
  return std::clamp(6 * tau, in.min_s, in.max_s);
}

double divider_group_delay_s(double f1_hz, std::complex<double> z1, double f2_hz,
                             std::complex<double> z2, double rref_ohm, bool part_high) {
  if (f1_hz == f2_hz) return 0;
  auto h = [&](std::complex<double> z) { return (part_high ? rref_ohm : z) / (z + rref_ohm); };
  const double dphi = std::arg(h(z2) / h(z1));  // wrapped to (-pi, pi]
  return std::abs(dphi / (2 * std::numbers::pi * (f2_hz - f1_hz)));
}

double circuit_time_constant_s(double f_hz, std::complex<double> z, double rref_ohm) {
  if (!usable(z) || !(f_hz > 0)) return 0;
  const double w = 2 * std::numbers::pi * f_hz;
  const double r = std::max(0.0, z.real()) + rref_ohm;
  if (z.imag() < 0) return r / (-z.imag() * w);  // (Rref + R) C with C = 1 / (w |X|)
  if (z.imag() > 0) return (z.imag() / w) / r;
  return 0;
}

double duration_for_target_s(double duration_now_s, double u_now_rel, double u_target_rel,
                             double min_s, double max_s) {
  if (!(u_target_rel > 0) || !(u_now_rel >= 0) || !(duration_now_s > 0)) return duration_now_s;
  const double r = u_now_rel / u_target_rel;
  return std::clamp(duration_now_s * r * r, min_s, max_s);
}

}  // namespace tb::dsp
