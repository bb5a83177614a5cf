// Uncertainty terms a reading owes to how it was corrected, beyond those of the analysis
// (reading's Type A, Rref, channel match's Type A) and of the fixture compensation
// (open/short/load Type A, reconnection):
//   calibration_drift     the channel match's gain may have moved since it was taken:
//                         half-width (10^(rate * age / 20) - 1), rectangular;
//   card_input_impedance  without open/short, input B's loading is not corrected: its
//                         admittance lies between 0 and 1 / (the lowest input impedance
//                         a card has, 10 kohm: common practice, no source);
//   leads_uncorrected     without open/short, the leads' and clips' resistance (up to
//                         0.1 ohm for the pair: common practice, no source);
//   swap_input_loading    a swap-and-average reading is loaded by the mean of the two
//                         inputs' admittances, the open step by input 2's alone: the
//                         difference, up to half of 1 / 10 kohm, is not compensated.
// Sensitivities are taken through the whole correction chain (bridge, channel match,
// compensation) by finite differences of the raw channel ratio.
#pragma once

#include "server/calibration_data.hpp"
#include "server/measurement.hpp"

namespace tb {

struct BudgetPolicy {
  double channel_drift_db_per_h = 0.01;
  double input_impedance_min_ohm = 10e3;
  double leads_half_width_ohm = 0.1;
};

/// Adds the terms above to result.reading.z and recomputes its derived values.
/// match_age_h: hours since the channel match (ignored without one).
void add_correction_terms(MeasureResult& result, const MeasureRequest& request,
                          const Corrections& corrections, double match_age_h,
                          const BudgetPolicy& policy);

}  // namespace tb
