#include "tests/bench/bench_common.hpp"

#include <algorithm>
#include <cmath>
#include <complex>
#include <cstdio>
#include <fstream>
#include <numbers>

#include "dsp/circuit.hpp"
#include "dsp/jig_model.hpp"
#include "server/error.hpp"
#include "server/simulated_card.hpp"

namespace tb::bench {

const char* family_name(Family f) {
  switch (f) {
    case Family::resistor:
      return "resistor";
    case Family::capacitor:
      return "capacitor";
    case Family::inductor:
      return "inductor";
  }
  return "?";
}

std::string part_text(Family f, double z_mag, double freq_hz, double loss_ratio) {
  const double w = 2 * std::numbers::pi * freq_hz;
  char buf[128];
  switch (f) {
    case Family::resistor:
      std::snprintf(buf, sizeof buf, "res %.6g", z_mag);
      break;
    case Family::capacitor:
      std::snprintf(buf, sizeof buf, "cap %.6g esr %.6g", 1 / (w * z_mag), loss_ratio * z_mag);
      break;
    case Family::inductor:
      std::snprintf(buf, sizeof buf, "coil %.6g r %.6g", z_mag / w, loss_ratio * z_mag);
      break;
  }
  return buf;
}

double nearest_of(double z_mag, const std::vector<double>& set) {
  double best = set.front();
  for (double r : set)
    if (std::abs(std::log(z_mag / r)) < std::abs(std::log(z_mag / best)) - 1e-12) best = r;
  return best;
}

Outcome read_against_truth(const dsp::Netlist& part, double sample_rate_hz,
                           const std::function<MeasureResult()>& measure) {
  Outcome o;
  try {
    const auto r = measure().reading;
    const std::complex<double> truth =
        dsp::part_impedance(part, SimulatedCard::circuit_frequency_hz(r.freq_hz, sample_rate_hz));
    const std::complex<double> z = r.z.value;
    o.mag_err_pct = 100 * (std::abs(z) / std::abs(truth) - 1);
    o.theta_err_deg = std::arg(z / truth) * 180 / std::numbers::pi;
    o.u_mag_pct = 100 * r.u_mag.expanded / std::abs(z);
    o.u_theta_deg = r.u_theta_deg.expanded;
    o.ok = true;
  } catch (const Error& e) {
    o.failure = e.id();
  } catch (const dsp::AnalysisError& e) {
    o.failure = e.id();
  } catch (const dsp::CircuitError& e) {
    o.failure = e.id();
  } catch (const std::exception& e) {
    o.failure = e.what();
  }
  return o;
}

std::string si(double v) {
  char buf[32];
  if (v >= 1e6)
    std::snprintf(buf, sizeof buf, "%gM", v / 1e6);
  else if (v >= 1e3)
    std::snprintf(buf, sizeof buf, "%gk", v / 1e3);
  else
    std::snprintf(buf, sizeof buf, "%g", v);
  return buf;
}

std::string cpu_model() {
  std::ifstream in("/proc/cpuinfo");
  std::string line;
  while (std::getline(in, line)) {
    if (line.rfind("model name", 0) == 0) {
      const auto colon = line.find(':');
      if (colon != std::string::npos) return line.substr(std::min(colon + 2, line.size()));
    }
  }
  return "unknown";
}

}  // namespace tb::bench
