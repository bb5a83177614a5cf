// tonebridge-bench: how fast the lock-in and the whole-recording analysis run.
//
// Prints figures only (no pass/fail): seconds of stereo audio processed per CPU second
// ("x real time") on one thread, CPU time from CLOCK_PROCESS_CPUTIME_ID. Every figure is
// the best of several runs, each run repeating the work until it has used at least
// min_cpu_s of CPU. A checksum of the results is printed so that none of the work can be
// optimised away; it depends only on the inputs, not on how many repetitions ran.
//
// Usage: tonebridge-bench [--quick]
//   --quick  short signals and short runs (smoke test; the figures are rough)
#include <algorithm>
#include <cmath>
#include <complex>
#include <cstddef>
#include <cstdio>
#include <cstring>
#include <ctime>
#include <numbers>
#include <random>
#include <span>
#include <string>
#include <vector>

#include "dsp/lockin.hpp"
#include "dsp/recording_analysis.hpp"
#include "dsp/window.hpp"

namespace {

using tb::dsp::Window;
using cplx = std::complex<double>;

struct Options {
  bool quick = false;
  double signal_s = 10.0;  // length of the synthetic lock-in signals
  double min_cpu_s = 0.3;  // CPU time each timed run must reach
  int runs = 3;            // best of this many runs
};

// Accumulates the checksum of every repetition; volatile so the stores must happen.
volatile double g_sink = 0;

double cpu_seconds() {
  timespec ts{};
  clock_gettime(CLOCK_PROCESS_CPUTIME_ID, &ts);
  return static_cast<double>(ts.tv_sec) + 1e-9 * static_cast<double>(ts.tv_nsec);
}

struct Measurement {
  double x_real_time = 0;  // best run: audio seconds per CPU second
  std::size_t reps = 0;    // repetitions per timed run
  double checksum = 0;     // checksum of one call's results (deterministic)
};

// Times work(), which processes audio_s seconds of stereo audio and returns a checksum of
// what it computed. The first call warms caches and sizes the repetition count.
template <class Work>
Measurement measure(Work&& work, double audio_s, const Options& opt) {
  Measurement m;
  double t0 = cpu_seconds();
  m.checksum = work();
  const double first = std::max(cpu_seconds() - t0, 1e-6);
  std::size_t reps = static_cast<std::size_t>(std::ceil(1.1 * opt.min_cpu_s / first));
  reps = std::max<std::size_t>(reps, 1);
  for (int run = 0; run < opt.runs;) {
    double sum = 0;
    t0 = cpu_seconds();
    for (std::size_t r = 0; r < reps; ++r)
      sum += work();
    const double dt = cpu_seconds() - t0;
    g_sink = g_sink + sum;
    if (dt < opt.min_cpu_s) {  // too short to trust: more repetitions, run again
      reps = static_cast<std::size_t>(
          std::ceil(static_cast<double>(reps) * 1.2 * opt.min_cpu_s / std::max(dt, 1e-6)));
      continue;
    }
    m.x_real_time = std::max(m.x_real_time, static_cast<double>(reps) * audio_s / dt);
    m.reps = reps;
    ++run;
  }
  return m;
}

struct Stereo {
  std::vector<double> a, b;
};

// Node A holds the tones at equal amplitude (0.8 full scale in total); node B the same
// tones at 0.6 of the level and lagging 0.3 rad, as a bridge around a lossy part would.
Stereo make_tones(double fs, double seconds, std::span<const double> freqs) {
  const auto n = static_cast<std::size_t>(std::llround(fs * seconds));
  Stereo s{std::vector<double>(n, 0.0), std::vector<double>(n, 0.0)};
  const double amp = 0.8 / static_cast<double>(freqs.size());
  for (double f : freqs) {
    const double w = 2 * std::numbers::pi * f / fs;
    for (std::size_t i = 0; i < n; ++i) {
      const double ph = w * static_cast<double>(i);
      s.a[i] += amp * std::cos(ph + 0.2);
      s.b[i] += 0.6 * amp * std::cos(ph + 0.2 - 0.3);
    }
  }
  return s;
}

double checksum_of(cplx z) {
  return z.real() + 0.5 * z.imag();
}

struct LockinCase {
  const char* label;
  std::vector<double> freqs;
  Window window;
};

struct Row {
  std::string label;
  double fs_khz = 0;
  Measurement goertzel, reference;
  double max_diff = 0;  // largest |Goertzel - reference| over all blocks, tones, channels
};

Row run_case(const LockinCase& c, double fs, const Options& opt) {
  const Stereo sig = make_tones(fs, opt.signal_s, c.freqs);
  const auto block_len = static_cast<std::size_t>(std::llround(0.1 * fs));
  const std::size_t blocks = sig.a.size() / block_len;
  const double audio_s = static_cast<double>(sig.a.size()) / fs;
  const tb::dsp::LockinConfig config{
      .sample_rate_hz = fs, .tone_hz = c.freqs, .block_len = block_len, .window = c.window};
  // demodulate_reference takes the window itself (empty = rectangular) and normalises by
  // its sum, the same quantity as Lockin's 2 / sum(w) gain.
  const std::vector<double> window = c.window == Window::rectangular
                                         ? std::vector<double>{}
                                         : tb::dsp::make_window(c.window, block_len);

  std::vector<tb::dsp::LockinBlock> goertzel_blocks;
  auto goertzel = [&] {
    tb::dsp::Lockin lockin(config);
    lockin.push(sig.a, sig.b);
    double sum = 0;
    for (const auto& blk : lockin.result())
      for (std::size_t t = 0; t < blk.a.size(); ++t)
        sum += checksum_of(blk.a[t]) + checksum_of(blk.b[t]);
    if (goertzel_blocks.empty()) goertzel_blocks = lockin.result();
    return sum;
  };

  std::vector<cplx> reference_values;  // block-major, then tone, then channel A, B
  auto reference = [&] {
    double sum = 0;
    const bool keep = reference_values.empty();
    for (std::size_t k = 0; k < blocks; ++k) {
      const std::size_t n0 = k * block_len;
      const auto a = std::span<const double>(sig.a).subspan(n0, block_len);
      const auto b = std::span<const double>(sig.b).subspan(n0, block_len);
      for (double f : c.freqs) {
        const cplx za = tb::dsp::demodulate_reference(a, window, f, fs, n0);
        const cplx zb = tb::dsp::demodulate_reference(b, window, f, fs, n0);
        sum += checksum_of(za) + checksum_of(zb);
        if (keep) {
          reference_values.push_back(za);
          reference_values.push_back(zb);
        }
      }
    }
    return sum;
  };

  Row row;
  row.label = c.label;
  row.fs_khz = fs / 1000;
  row.goertzel = measure(goertzel, audio_s, opt);
  row.reference = measure(reference, audio_s, opt);
  std::size_t i = 0;
  for (const auto& blk : goertzel_blocks) {
    for (std::size_t t = 0; t < blk.a.size(); ++t) {
      row.max_diff = std::max(row.max_diff, std::abs(blk.a[t] - reference_values.at(i++)));
      row.max_diff = std::max(row.max_diff, std::abs(blk.b[t] - reference_values.at(i++)));
    }
  }
  return row;
}

// A 10 s jig recording at 48 kHz: a non-coherent 997.3 Hz tone at 0.5 full scale on node
// A, a 470 - j100 ohm part below a 1 kohm reference resistor (part_low), and independent
// white noise of 1e-4 rms on each channel.
Stereo make_recording(double fs, double seconds) {
  const double f = 997.3;
  const cplx z{470, -100};
  const cplx rref{1000, 0};
  const cplx r = z / (rref + z);  // V_B / V_A
  const auto n = static_cast<std::size_t>(std::llround(fs * seconds));
  Stereo s{std::vector<double>(n), std::vector<double>(n)};
  std::mt19937_64 rng(20240611);
  std::normal_distribution<double> noise(0.0, 1e-4);
  for (std::size_t i = 0; i < n; ++i) {
    const cplx v = std::polar(0.5, 2 * std::numbers::pi * f * static_cast<double>(i) / fs);
    s.a[i] = v.real() + noise(rng);
    s.b[i] = (v * r).real() + noise(rng);
  }
  return s;
}

}  // namespace

int main(int argc, char** argv) {
  Options opt;
  for (int i = 1; i < argc; ++i) {
    if (std::strcmp(argv[i], "--quick") == 0) {
      opt.quick = true;
      opt.signal_s = 1.0;
      opt.min_cpu_s = 0.02;
      opt.runs = 1;
    } else {
      std::fprintf(stderr, "usage: %s [--quick]\n", argv[0]);
      return 2;
    }
  }

  const std::vector<LockinCase> cases = {
      {"1 tone, rectangular", {997.3}, Window::rectangular},
      {"1 tone, Hann", {997.3}, Window::hann},
      {"8 tones, rectangular",
       {100, 200, 500, 1000, 2000, 5000, 10000, 20000},
       Window::rectangular},
  };

  std::printf("tonebridge-bench%s: CPU time on one thread, best of %d run%s of >= %.2f s CPU\n",
              opt.quick ? " --quick" : "", opt.runs, opt.runs == 1 ? "" : "s", opt.min_cpu_s);
  std::printf(
      "x RT = seconds of stereo audio per CPU second; lock-in: %.0f s signal, "
      "0.1 s blocks, Lockin::push of the whole signal\n\n",
      opt.signal_s);
  std::printf("%-22s %6s %12s %12s %9s %10s\n", "lock-in case", "fs", "Goertzel", "reference",
              "ratio", "max |diff|");
  std::printf("%-22s %6s %12s %12s %9s %10s\n", "", "kHz", "x RT", "x RT", "G/ref", "");

  double checksum = 0;
  double target_x = 0;
  for (const auto& c : cases) {
    for (double fs : {48000.0, 96000.0}) {
      const Row row = run_case(c, fs, opt);
      checksum += row.goertzel.checksum + row.reference.checksum;
      if (&c == &cases.front() && fs == 96000.0) target_x = row.goertzel.x_real_time;
      std::printf("%-22s %6.0f %12.0f %12.1f %9.1f %10.1e\n", row.label.c_str(), row.fs_khz,
                  row.goertzel.x_real_time, row.reference.x_real_time,
                  row.goertzel.x_real_time / row.reference.x_real_time, row.max_diff);
      std::fflush(stdout);
    }
  }

  // Whole-recording analysis: always the full 10 s, so --quick only shortens the runs.
  const double rec_fs = 48000, rec_s = 10.0;
  const Stereo rec = make_recording(rec_fs, rec_s);
  tb::dsp::AnalysisConfig ac;
  ac.sample_rate_hz = rec_fs;
  ac.bridge.layout = tb::dsp::Layout::part_low;
  ac.bridge.rref_ohm = 1000;
  std::string analysis_note;
  auto analyse = [&] {
    try {
      const auto res = tb::dsp::analyze_recording(rec.a, rec.b, ac);
      double sum = static_cast<double>(res.readings.size());
      for (const auto& r : res.readings) {
        sum += r.freq_hz + checksum_of(r.z.value);
        if (analysis_note.empty()) {
          char text[160];
          std::snprintf(
              text, sizeof text, "%.4f Hz, Z = %.3f %+.3fj ohm, %s window, %zu/%zu blocks",
              r.freq_hz, r.z.value.real(), r.z.value.imag(),
              std::string(tb::dsp::window_name(r.window)).c_str(), r.blocks_used, r.blocks_total);
          analysis_note = text;
        }
      }
      return sum;
    } catch (const tb::dsp::AnalysisError& e) {
      if (analysis_note.empty()) analysis_note = "analysis failed: " + e.id();
      return -1.0;
    }
  };
  const Measurement an = measure(analyse, rec_s, opt);
  checksum += an.checksum;

  std::printf("\n%-22s %6s %12s\n", "analyze_recording", "kHz", "x RT");
  std::printf("%-22s %6.0f %12.0f\n", "10 s, 997.3 Hz + noise", rec_fs / 1000, an.x_real_time);
  std::printf("  (%s)\n\n", analysis_note.c_str());

  std::printf("target >= 1000x real time (lock-in, stereo 96 kHz, 1 tone): %s (%.0fx)\n",
              target_x >= 1000 ? "met" : "not met", target_x);
  std::printf("checksum %.12e\n", checksum);
  return 0;
}
