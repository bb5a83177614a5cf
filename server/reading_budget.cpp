#include "server/reading_budget.hpp"

#include <cmath>

#include "dsp/bridge.hpp"
#include "dsp/compensation.hpp"

namespace tb {

namespace {

using cplx = std::complex<double>;

// The part's impedance from a raw ratio through the same chain the reading went: the
// channel match divided out, the bridge, then the fixture compensation.
cplx chain(cplx raw_ratio, const MeasureRequest& req, const Corrections& c) {
  const cplx h = c.match ? c.match->h : cplx(1, 0);
  const cplx zm = dsp::impedance_from_ratio(req.layout, req.rref_ohm, raw_ratio / h);
  if (!c.fixture) return zm;
  return dsp::compensate_open_short(zm, c.fixture->open.value, c.fixture->short_.value);
}

}  // namespace

void add_correction_terms(MeasureResult& result, const MeasureRequest& request,
                          const Corrections& corrections, double match_age_h,
                          const BudgetPolicy& policy) {
  auto& z = result.reading.z;
  const cplx r = result.reading.ratio;
  bool added = false;
  if (corrections.match && match_age_h > 0 && policy.channel_drift_db_per_h > 0) {
    const double half = std::pow(10, policy.channel_drift_db_per_h * match_age_h / 20) - 1;
    constexpr double kStep = 1e-7;
    try {
      const cplx s =
          (chain(r * (1 + kStep), request, corrections) - chain(r, request, corrections)) / kStep;
      z.type_b.push_back({"calibration_drift", s, half / std::sqrt(3.0)});
      added = true;
    } catch (const std::domain_error&) {
      // A singular bridge at this ratio: the reading itself already failed or said so.
    }
  }
  // part-low: Zm = Z / (1 + Z y), dZm/dy = -Z^2; part-high: Rref || Zin scales Z,
  // dZ/dy = -Z Rref.
  const cplx zv = z.value;
  const double y_max = 1 / policy.input_impedance_min_ohm;
  const cplx s_load = request.layout == dsp::Layout::part_low ? -zv * zv : -zv * request.rref_ohm;
  if (!corrections.fixture) {
    z.type_b.push_back({"card_input_impedance", s_load, y_max / std::sqrt(3.0)});
    z.type_b.push_back(
        {"leads_uncorrected", cplx(1, 0), policy.leads_half_width_ohm / std::sqrt(3.0)});
    added = true;
  } else if (result.swap_averaged) {
    z.type_b.push_back({"swap_input_loading", s_load, y_max / 2 / std::sqrt(3.0)});
    added = true;
  }
  if (added) dsp::update_derived(result.reading, request.force_kind);
}

}  // namespace tb
