#include "dsp/setup_advice.hpp"

#include <algorithm>
#include <cmath>
#include <stdexcept>

#include "dsp/uncertainty.hpp"

namespace tb::dsp {

SetupPrediction predict_setup(const SetupModel& m, std::complex<double> z_ohm, Layout layout,
                              double rref_ohm) {
  if (!(std::abs(z_ohm) > 0) || !std::isfinite(std::abs(z_ohm)))
    throw std::invalid_argument("impedance must be finite and non-zero");
  if (!(rref_ohm > 0) || !std::isfinite(rref_ohm))
    throw std::invalid_argument("reference resistor must be > 0 ohm");
  if (!(m.freq_hz > 0)) throw std::invalid_argument("frequency must be > 0");
  SetupPrediction p;
  p.rref_ohm = rref_ohm;
  p.layout = layout;
  const cplx r = ratio_from_impedance(layout, rref_ohm, z_ohm);
  // Relative sensitivities of Z to V_A and V_B with V_A = 1; the same magnitudes in both
  // layouts (their signs differ), evaluated at each layout's own ratio.
  const double s_a = 1 / std::abs(1.0 - r);
  const double s_b = 1 / std::abs(r * (1.0 - r));
  p.u_noise_rel = std::hypot(s_a * m.noise_a_rel, s_b * m.noise_b_rel_a);
  p.u_floor_rel = std::hypot(s_a, s_b) * m.crosstalk_rel;
  const cplx zin = m.input.at(m.freq_hz);
  p.u_loading_rel =
      m.input_residual_rel *
      (layout == Layout::part_low ? std::abs(z_ohm / zin) : std::abs(rref_ohm / (rref_ohm + zin)));
  p.u_rref_rel = rectangular_u(m.rref_tolerance_rel);
  p.u_rel = std::sqrt(p.u_noise_rel * p.u_noise_rel + p.u_floor_rel * p.u_floor_rel +
                      p.u_loading_rel * p.u_loading_rel + p.u_rref_rel * p.u_rref_rel);
  return p;
}

std::vector<SetupPrediction> predict_setups(const SetupModel& model, std::complex<double> z_ohm,
                                            std::span<const double> rrefs) {
  std::vector<SetupPrediction> out;
  for (Layout layout : {Layout::part_low, Layout::part_high})
    for (double r : rrefs)
      out.push_back(predict_setup(model, z_ohm, layout, r));
  return out;
}

SetupPrediction best_setup(const SetupModel& model, std::complex<double> z_ohm,
                           std::span<const double> rrefs) {
  if (rrefs.empty()) throw std::invalid_argument("no reference resistors to choose from");
  const auto all = predict_setups(model, z_ohm, rrefs);
  return *std::min_element(all.begin(), all.end(),
                           [](const auto& p, const auto& q) { return p.u_rel < q.u_rel; });
}

}  // namespace tb::dsp
