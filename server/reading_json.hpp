// JSON form of analysis results (the dsp structs know nothing of JSON). Field names
// carry their unit; infinite values (Q of a lossless part) become null.
#pragma once

#include <nlohmann/json.hpp>

#include "dsp/recording_analysis.hpp"

namespace tb {

nlohmann::json to_json(const dsp::ToneReading& reading);
nlohmann::json to_json(const dsp::AnalysisResult& result);

}  // namespace tb
