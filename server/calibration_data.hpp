// Calibrations as the store keeps them, and finding the ones that apply to a reading.
//
// A calibration record (store.hpp) holds one kind of step measured at a list of
// frequencies for one device, sample rate, layout and Rref. Its body:
//   channel_match: {"points":[{"freq_hz":1000,"h_re":..,"h_im":..,"u_gain_rel":..,
//                              "u_phase_rad":..}, ...]}
//   open, short:   {"points":[{"freq_hz":1000,"z":{uncertain complex}}, ...]}
// A reading uses a calibration point taken at its own requested frequency (within 0.1 %);
// between calibration points nothing is interpolated yet, and the reading says which
// corrections it lacks and how to get them.
#pragma once

#include <optional>
#include <string>
#include <vector>

#include <nlohmann/json.hpp>

#include "dsp/fixture_correction.hpp"
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

struct Corrections {
  std::optional<ChannelMatch> match;
  std::optional<dsp::FixtureStandards> fixture;
  nlohmann::json used = nlohmann::json::object();  ///< {"channel_match":{"id":..,"taken_at":..}}
  std::vector<ReadingNotice> missing;              ///< one per missing correction
};

/// The newest channel-match, open and short calibrations for `key` that hold a point at
/// freq_hz. `reconnect_half_width_ohm` is the jig's contact repeatability (see
/// bench_procedure.hpp); it enters the fixture compensation's budget.
Corrections find_corrections(const Store& store, const CalibrationKey& key, double freq_hz,
                             double reconnect_half_width_ohm);

}  // namespace tb
