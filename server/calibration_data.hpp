// Calibrations as the store keeps them, and finding the ones that apply to a reading.
//
// A calibration record (store.hpp) holds one kind of step measured at a list of
// frequencies for one device, sample rate, layout and Rref. Its body:
//   channel_match: {"points":[{"freq_hz":1000,"h_re":..,"h_im":..,"u_gain_rel":..,
//                              "u_phase_rad":..,"a_per_fs":..}, ...]}
//   open, short:   {"points":[{"freq_hz":1000,"z":{uncertain complex},"a_per_fs":..}, ...]}
//   load:          the same, plus "load_ohm" and "load_tolerance_rel" beside "points"
//   level:         {"points":[{"freq_hz":..,"a_per_fs":..,"level_a_fs":..}],
//                   "meter_vrms":..,"volts_per_fs":..}  (layout "any", Rref 0)
// a_per_fs is the level at node A per unit of output level: the channel-1 level that a
// later reading compares with its own to find a card whose gain was changed.
// A reading uses the newest record of each kind for its device, rate, layout and Rref;
// it says which corrections it lacks, which are old, and which exist only for another
// set-up (and so are not applied).
#pragma once

#include <optional>
#include <string>
#include <vector>

#include <nlohmann/json.hpp>

#include "dsp/fixture_correction.hpp"
#include "dsp/source_drift.hpp"
#include "server/measurement.hpp"
#include "server/store.hpp"

namespace tb {

nlohmann::json to_json(const dsp::UncertainComplex& z);
/// Throws tb::Error store.bad_record for a body that is not an uncertain complex.
dsp::UncertainComplex uncertain_complex_from_json(const nlohmann::json& j);

nlohmann::json channel_match_point(double freq_hz, const ChannelMatch& m);
nlohmann::json impedance_point(double freq_hz, const dsp::UncertainComplex& z);

struct CalibrationKey {
  std::string device;
  double sample_rate_hz = 0;
  std::string layout;
  double rref_ohm = 0;
};

struct CorrectionPolicy {
  /// The jig's contact repeatability (see bench_procedure.hpp); it enters the fixture
  /// compensation's budget.
  double reconnect_half_width_ohm = 0;
  double max_age_h = 24;  ///< older calibrations are applied but called stale
  std::string now_iso;    ///< the reading's time (utc_now_iso() form)
};

struct Corrections {
  std::optional<ChannelMatch> match;
  std::optional<dsp::FixtureStandards> fixture;
  std::optional<double> volts_per_fs;              ///< peak volts at full scale, from a level step
  std::optional<dsp::SourceReference> source;      ///< node-A levels of the open and short steps
  nlohmann::json used = nlohmann::json::object();  ///< {"channel_match":{"id":..,"taken_at":..}}
  std::vector<ReadingNotice> missing;              ///< missing, stale or mismatched ones
};

/// The newest calibrations of every kind for `key` that hold a point at freq_hz.
Corrections find_corrections(const Store& store, const CalibrationKey& key, double freq_hz,
                             const CorrectionPolicy& policy);

/// After the reading: a node-A level that the jig's loading cannot explain means the
/// card's gain changed since the open/short steps (source_drift.hpp); adds
/// "calibration.drifted" to `notices`.
void check_level_drift(const Corrections& corrections, const MeasureResult& result,
                       const MeasureRequest& request, std::vector<ReadingNotice>& notices);

/// Hours from `earlier` to `later`, both utc_now_iso() strings; NaN if either is not one.
double hours_between(const std::string& earlier, const std::string& later);

/// Level calibrations are the same for every layout and Rref: they are stored and found
/// under this layout and an Rref of 0.
inline constexpr const char* kAnyLayout = "any";

}  // namespace tb
