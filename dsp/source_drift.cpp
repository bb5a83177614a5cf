#include "dsp/source_drift.hpp"

#include <algorithm>
#include <cmath>

namespace tb::dsp {

DriftCheck check_source_drift(const SourceReference& ref, double a_reading,
                              std::complex<double> y_reading, double tolerance_rel,
                              double max_loading_rel) {
  DriftCheck out;
  if (!(ref.a_open > 0) || !(ref.a_short > 0) || !(a_reading > 0) || ref.y_short == 0.0) return out;
  const double s = std::max(ref.a_open / ref.a_short, 1.0);
  const std::complex<double> rho = y_reading / ref.y_short;
  // x = s e^{i psi} - 1 on the circle |1 + x| = s; arg x = 0 at psi = 0 and -90° where
  // s cos(psi) = 1.
  const double psi_min = -std::acos(1 / s);
  double lo = 1, hi = 1;  // range of a_reading / a_open that loading alone explains
  constexpr int kSteps = 64;
  for (int i = 0; i <= kSteps; ++i) {
    const double psi = psi_min * i / kSteps;
    const auto x = std::polar(s, psi) - 1.0;
    const double ratio = 1 / std::abs(1.0 + x * rho);
    lo = std::min(lo, ratio);
    hi = std::max(hi, ratio);
  }
  out.loading_rel = std::max(1 - lo, hi - 1);
  out.change_rel = a_reading / ref.a_open - 1;
  out.decidable = out.loading_rel <= max_loading_rel;
  if (!out.decidable) return out;
  out.drifted = out.change_rel < lo - 1 - tolerance_rel || out.change_rel > hi - 1 + tolerance_rel;
  return out;
}

}  // namespace tb::dsp
