// JSON form of analysis results (the dsp structs know nothing of JSON). Field names
// carry their unit; infinite values (Q of a lossless part) become null.
#pragma once

#include <nlohmann/json.hpp>

#include "dsp/recording_analysis.hpp"
#include "server/measurement.hpp"

namespace tb {

nlohmann::json to_json(const dsp::ToneReading& reading);
nlohmann::json to_json(const dsp::AnalysisResult& result);
/// A reading through a device: the tone reading plus how it was taken (layout, Rref,
/// requested frequency, output level used, which corrections were applied) and the
/// Rref/layout advice.
/// "warnings" holds result.notices as {"id","message","hint"} objects; callers append
/// their own (missing corrections) with to_json(notice).
nlohmann::json to_json(const MeasureResult& result, const MeasureRequest& request);
nlohmann::json to_json(const ReadingNotice& notice);

}  // namespace tb
