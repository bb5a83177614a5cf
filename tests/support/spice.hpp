// Test harness around ngspice (Debian package `ngspice`, run as `ngspice -b`): an independent
// circuit simulator whose answers serve as outside references for the bridge maths and
// the simulated bench.
//
// Netlist bodies are element lines (and dot cards such as .model/.options if needed), one per
// line, without a title, .control block or .end: the harness adds those. Each call writes the
// netlist to a fresh temporary directory, runs ngspice there with its output captured to a log,
// parses the `wrdata` files and removes the directory again.
//
// Errors: std::invalid_argument for bad arguments (empty node list, node names other than
// letters, digits and '_', non-positive or non-finite frequencies, rates or durations);
// std::runtime_error when ngspice is missing, exits non-zero, logs an error or writes output
// that does not parse. Runtime errors carry the tail of the ngspice log.
#pragma once

#include <complex>
#include <string>
#include <vector>

namespace tb::test {

/// True when the ngspice command (macro TB_NGSPICE, default "ngspice") can be run.
bool ngspice_available();

/// A number printed with round-trip precision (17 significant digits) for netlist text.
std::string spice_value(double value);

struct SpiceAcPoint {
  double freq_hz;                       ///< exactly the requested frequency
  std::vector<std::complex<double>> v;  ///< node voltages (V), in the order of `nodes`
};

/// Small-signal AC analysis at exactly the given frequencies (one `ac lin 1 f f` each), in the
/// order given. Node voltages are relative to ground for the AC magnitudes of the body's sources.
/// Precision: ngspice prints 10 significant digits (option numdgt=9).
std::vector<SpiceAcPoint> spice_ac(const std::string& netlist_body,
                                   const std::vector<std::string>& nodes,
                                   const std::vector<double>& freqs_hz);

struct SpiceTransient {
  double sample_rate_hz;
  std::vector<std::vector<double>> v;  ///< v[node][n] = voltage (V) at t = n / fs
};

/// Transient analysis resampled onto an exact grid: `tran 1/fs tstop 0 1/(k fs)`, then
/// `linearize`, with k = steps_per_sample (64 by default, >= 1). Returns round(duration_s * fs)
/// samples per node, at t = n / fs from n = 0.
/// Accuracy: linearize interpolates linearly between simulator time points up to 1/(k fs)
/// apart, so a sine of amplitude A at f is off by up to A (2 pi f / (k fs))^2 / 8 on top of the
/// integration error: with k = 64 and fs = 48 kHz about 2.6e-7 A at 1 kHz, 1e-4 A at 20 kHz.
/// Raise k for tighter references; run time grows in proportion.
SpiceTransient spice_transient(const std::string& netlist_body,
                               const std::vector<std::string>& nodes, double sample_rate_hz,
                               double duration_s, int steps_per_sample = 64);

}  // namespace tb::test
