// Part checks on saved readings and sweeps, as the API reports them: a marking decoded
// (dsp/part_marking.hpp), a reading judged against the marking's tolerance or an
// electrolytic's loss limit, readings matched to each other or sorted into pairs, and two
// sweeps compared (dsp/part_verdict.hpp). JSON in (reading bodies as stored), JSON out.
//
// Matching needs each reading's uncertainty split in two: what the readings share (the
// reference resistor's tolerance, tempco and reactance, and the stored calibrations they
// were corrected with) and what differs from part to part (Type A, hum, reconnection). The
// split comes from the reading's own budget (its "uncertainty.budget" terms). Terms are
// shared only when the readings were taken on the same set-up (same Rref, layout and test
// frequency within 0.1 %); otherwise every term counts as independent, and the result says
// so.
//
// Errors: tb::Error check.* (docs/errors.md): check.kind_mismatch, check.no_tolerance,
// check.indicative, check.wrong_frequency, check.no_rated_voltage, check.too_few,
// check.mixed_kinds, check.not_measured; marking.* from the decoder.
#pragma once

#include <optional>
#include <string>
#include <vector>

#include <nlohmann/json.hpp>

#include "dsp/impedance.hpp"
#include "dsp/part_marking.hpp"
#include "dsp/part_verdict.hpp"

namespace tb {

/// The value a part is judged on, from a reading body: Cs for a capacitor, Ls for an
/// inductor, Rs for a resistor, with its expanded U and the standard uncertainty split into
/// shared and independent parts (see above).
struct PrimaryValue {
  dsp::PartKind kind = dsp::PartKind::resistor;
  std::string name;  ///< "Cs", "Ls", "Rs"
  std::string unit;  ///< "F", "H", "Ω"
  double value = 0;
  double expanded_u = 0;  ///< U, k as in the reading
  double u_shared = 0, u_independent = 0;
};

/// Throws check.not_measured when the reading has no usable value of that kind.
PrimaryValue primary_value(const nlohmann::json& reading, dsp::PartKind kind);

/// "C", "L", "R" or the words; nullopt for "" / "auto". Throws request.bad_value.
std::optional<dsp::PartKind> parse_kind(const std::string& text);

nlohmann::json to_json(const dsp::PartMarking& m);
nlohmann::json to_json(const dsp::LimitCheck& c);

/// Decoded marking plus the nearest preferred values (E6 .. E96) and the smallest series
/// the nominal belongs to.
nlohmann::json marking_json(const std::string& text, std::optional<dsp::PartKind> kind);

/// The tolerance verdict of one reading against a marking: {"kind":"tolerance", "outcome",
/// "text", "check": {...}, "marking": {...}, "measured": {...}, "notes": [...]}.
nlohmann::json tolerance_verdict(const nlohmann::json& reading, const std::string& marking,
                                 std::optional<dsp::PartKind> kind);

/// The loss verdict of an aluminium electrolytic at 100 or 120 Hz. rated_voltage_v from the
/// marking when not given; the limit uses the marking's nominal C, else the measured Cs.
nlohmann::json loss_verdict(const nlohmann::json& reading, const std::string& marking,
                            std::optional<double> rated_voltage_v);

/// Spread of two or more readings of one kind, with a verdict when max_spread_pct is given.
nlohmann::json match_json(const std::vector<nlohmann::json>& readings,
                          const std::vector<std::int64_t>& ids,
                          std::optional<double> max_spread_pct);

/// A bag of readings sorted into best-matched pairs (ids as given).
nlohmann::json pairs_json(const std::vector<nlohmann::json>& readings,
                          const std::vector<std::int64_t>& ids);

/// Two sweeps' points (stored bodies) compared on the first one's frequencies.
nlohmann::json compare_json(const std::vector<nlohmann::json>& first,
                            const std::vector<nlohmann::json>& second);

}  // namespace tb
