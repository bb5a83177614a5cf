// The guided calibration: which steps there are, what to connect for each, the frequency
// grid they are taken on, and how far the stored calibrations for the present set-up
// (device, rate, layout, Rref) cover it. Served as GET /api/v1/calibrations/guide and
// walked by `tonebridge calibrate`.
//
// Order: level (optional: test volts), channel match, open, short, load (optional: the
// absolute scale from a known resistor instead of Rref's tolerance). Each step's drawing
// is an SVG served from web/img/.
#pragma once

#include <string>
#include <string_view>
#include <vector>

#include <nlohmann/json.hpp>

#include "server/calibration_data.hpp"

namespace tb {

struct CalibrationStep {
  std::string kind;     ///< the CalibrationTask kind
  std::string title;    ///< a few words
  std::string connect;  ///< exactly what to connect before taking the step
  std::string why;      ///< what the step corrects
  std::string drawing;  ///< path under the web root
  bool optional = false;
};

const std::vector<CalibrationStep>& calibration_steps();
/// nullptr for an unknown kind.
const CalibrationStep* find_calibration_step(std::string_view kind);

/// The grid calibrations are taken on: three per decade from 20 Hz (rounded to 10 Hz)
/// plus the usual test frequencies 100 Hz, 120 Hz, 1 kHz and 10 kHz, up to 0.4 fs
/// (never above 20 kHz). Example: at 48 kHz, 20, 40, 90, 100, 120, 200, ... 20000 Hz.
std::vector<double> calibration_grid_hz(double sample_rate_hz);

/// The guide for this set-up: {"setup":{..},"grid_hz":[..],"steps":[{kind, title,
/// connect, why, drawing, optional, status, calibration_id, taken_at, age_h,
/// freq_range_hz}], "next": kind or null}. status: "missing", "partial" (does not span
/// the grid), "stale" (older than max_age_h) or "current".
nlohmann::json calibration_guide(const Store& store, const CalibrationKey& key, double max_age_h,
                                 const std::string& now_iso);

}  // namespace tb
