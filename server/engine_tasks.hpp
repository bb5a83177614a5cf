// The work the measurement engine accepts, as plain requests. Each is validated by
// validate() against the service's limits before it is queued, so a queued task can only
// fail for reasons of the bench (device, part, signal), never of the request.
#pragma once

#include <cstdint>
#include <optional>
#include <string>
#include <variant>
#include <vector>

#include <nlohmann/json.hpp>

#include "dsp/impedance.hpp"
#include "dsp/test_level.hpp"
#include "server/settings.hpp"

namespace tb {

/// One reading at the settings' layout and Rref. Unset fields take the settings' values.
/// part_class electrolytic or in_circuit caps the voltage across the part; without level_fs
/// such a reading chooses its level automatically (measurement.hpp).
struct ReadingTask {
  std::optional<double> freq_hz, level_fs, duration_s;
  std::optional<dsp::PartKind> force_kind;
  std::optional<dsp::PartClass> part_class;
  std::optional<std::int64_t> part_id;
  /// With part_id: "original" or "replacement" (PartRole in store.hpp).
  std::string role = "original";
  /// Swap-and-average (server/swap_average.hpp): a second capture with the inputs
  /// swapped; no channel match needed. On a real jig the task asks the technician to swap
  /// the inputs and to put them back (prompts). Single readings only, not watch.
  bool swap_average = false;
};

/// Readings one after another, at most per_s per second, until cancelled.
struct WatchTask {
  ReadingTask each;
  double per_s = 1;
};

/// A sweep, log spaced from start_hz to stop_hz inclusive. method "stepped": one reading
/// per frequency, duration_s each. method "multisine": all frequencies at once in one
/// capture (multisine_sweep.hpp) of `periods` analysed periods (2 .. 256), or as many as
/// fill duration_s (at least 2); level_fs is then the peak of the whole multisine.
struct SweepTask {
  double start_hz = 100, stop_hz = 10000;
  int points_per_decade = 10;
  std::optional<double> level_fs, duration_s;
  /// Add points where the curve is sharp (dsp/sweep_refine.hpp), at most 30.
  bool refine = true;
  /// Take a point again, longer, when its Type A (standard, relative, in %) is above this.
  std::optional<double> target_u_pct;
  std::string method = "stepped";
  std::optional<int> periods;  ///< multisine only
  /// Multisine only: "log" (every requested frequency on its nearest bin) or "odd_odd"
  /// (only bins b with b mod 4 = 1, so distortion lands on unexcited bins; dsp/multisine.hpp).
  std::string grid = "log";
  std::string label;
  std::optional<std::int64_t> part_id;
  /// With part_id: "original" or "replacement" (PartRole in store.hpp).
  std::string role = "original";
  int points() const;  ///< number of frequencies in the plan
  std::vector<double> frequencies() const;
};

/// One calibration step at a list of frequencies (calibration_guide.hpp says what each
/// needs connected): "channel_match" (both inputs on node A), "open" (nothing in the jig),
/// "short" (the jig's clips together), "load" (a known resistor in the jig: load_ohm and
/// its tolerance), "level" (the open jig while a multimeter reads node A: meter_vrms,
/// at one frequency).
struct CalibrationTask {
  std::string kind;
  std::vector<double> freqs_hz;
  std::optional<double> level_fs, duration_s;
  std::optional<double> load_ohm, load_tolerance_pct;  ///< load only
  std::optional<double> meter_vrms;                    ///< level only
};

/// Simulated bench only: take the part off the jig and put this one on (part_spec.hpp).
struct BenchPartTask {
  std::string part;
};

/// A steady test tone for `seconds` (1 .. 600) or until cancelled, for reading node A with
/// a multimeter before the level calibration. Nothing is measured or saved.
struct ToneTask {
  std::optional<double> freq_hz, level_fs;
  double seconds = 60;
};

using TaskRequest =
    std::variant<ReadingTask, WatchTask, SweepTask, CalibrationTask, BenchPartTask, ToneTask>;

std::string task_kind(const TaskRequest& t);  ///< "reading", "watch", "sweep", ...

/// Throws tb::Error request.out_of_range / request.bad_value naming the field, the value
/// and the allowed range: frequencies inside 10 Hz .. 0.45 fs, levels above 0 and at most
/// level_cap_fs, durations 0.1 .. 30 s, 1 .. 100 points per decade, at most 400 points,
/// watch rate above 0 and at most readings_per_s_max, known calibration kinds, 1 .. 64
/// calibration frequencies, a part description that parses.
void validate(const TaskRequest& t, const Settings& s);

/// The request as JSON (for task lists and the store).
nlohmann::json to_json(const TaskRequest& t);

}  // namespace tb
