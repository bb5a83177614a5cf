// Helpers shared by the simulated-bench benchmarks (sim_bench.cpp, accuracy_bench.cpp):
// the part families and their netlists, one reading compared with the truth (the part's
// own impedance from an AC solve of its netlist), number formatting and the machine name.
#pragma once

#include <cmath>
#include <functional>
#include <string>
#include <vector>

#include "dsp/netlist.hpp"
#include "server/measurement.hpp"

namespace tb::bench {

enum class Family { resistor, capacitor, inductor };

const char* family_name(Family f);

/// A part of |Z| ~ z_mag_ohm at freq_hz in the part grammar of part_spec.hpp: an ideal
/// resistor, or a capacitor / inductor with a series loss of loss_ratio * |X|.
std::string part_text(Family f, double z_mag_ohm, double freq_hz, double loss_ratio);

/// The value of `set` nearest z_mag_ohm on a log scale (ties to the smaller).
double nearest_of(double z_mag_ohm, const std::vector<double>& set);

/// One reading against the truth, or the id of the error that stopped it.
struct Outcome {
  bool ok = false;
  std::string failure;  ///< error id when !ok
  double mag_err_pct = 0, theta_err_deg = 0;
  double u_mag_pct = 0, u_theta_deg = 0;  ///< expanded, as reported
  bool mag_within_u() const { return ok && std::abs(mag_err_pct) <= u_mag_pct; }
  bool theta_within_u() const { return ok && std::abs(theta_err_deg) <= u_theta_deg; }
  bool within_u() const { return mag_within_u() && theta_within_u(); }
};

/// Runs `measure` (a reading taken at sample_rate_hz on the simulated bench) and compares
/// it with the part as the bench simulates it: part_impedance(part) at the frequency the
/// bench's circuit answers (SimulatedCard::circuit_frequency_hz). tb::Error,
/// dsp::AnalysisError, dsp::CircuitError and other exceptions become a failed Outcome.
Outcome read_against_truth(const dsp::Netlist& part, double sample_rate_hz,
                           const std::function<MeasureResult()>& measure);

/// "4.7k" style: values of 1000 and above in k, of 1e6 and above in M.
std::string si(double v);

/// The CPU model from /proc/cpuinfo, or "unknown".
std::string cpu_model();

}  // namespace tb::bench
