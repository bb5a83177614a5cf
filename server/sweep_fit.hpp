// Equivalent-circuit fits of saved sweeps, as the API and the CLI report them: the sweep's
// points (reading bodies, or the columns of an exported file) become a dsp::Sweep with the
// readings' own uncertainties as weights, the fit (dsp/circuit_fit.hpp) and, for a driver,
// the Thiele/Small parameters (dsp/driver_params.hpp) become JSON with the fitted model's
// curve ready to draw over the points.
#pragma once

#include <optional>
#include <string>
#include <vector>

#include <nlohmann/json.hpp>

#include "dsp/circuit_fit.hpp"
#include "dsp/driver_params.hpp"

namespace tb {

/// A sweep's usable points: frequency, Z and the readings' expanded U of |Z| and theta
/// with their k. Points with an error, or without a finite Z or a positive U, are skipped and
/// counted.
struct FitInput {
  dsp::Sweep sweep;
  int skipped = 0;
  /// Of the skipped: points without a correction (channel match, open/short) that most of the
  /// sweep's points have, e.g. above the calibration grid.
  int uncorrected = 0;
  double drive_v_rms = 0;  ///< the largest test voltage of the points (0 when not known)
};

/// From the JSON columns of a sweep (GET /api/v1/sweeps/{id} "columns", or an exported JSON
/// file): freq_hz, z_real_ohm, z_imag_ohm, u_z_mag_ohm, u_theta_deg; the U there are expanded
/// with k = 2 (the reading's coverage factor is used when a point carries it).
FitInput fit_input_from_columns(const nlohmann::json& columns);

/// From the points of a sweep as stored (bodies with "reading"); uses each reading's k, and
/// leaves out points lacking a correction most points have (counted in `uncorrected`).
FitInput fit_input_from_points(const std::vector<nlohmann::json>& point_bodies);

struct FitRequest {
  std::optional<dsp::FitFamily> family;  ///< nullopt: every model is tried
  std::optional<dsp::FitModel> model;    ///< one model only
  dsp::DriverConditions conditions;      ///< driver fits: mounting (drive level from the sweep)
};

/// "capacitor", "inductor", "resistor", "driver" or "auto" (nullopt). Throws tb::Error
/// request.bad_value naming the choices.
std::optional<dsp::FitFamily> parse_family(const std::string& text);

/// Fits and describes: {"model", "family", "description", "params": [{name, unit, value,
/// u}], "derived", "srf", "chi2_reduced", "dof", "u_scaled", "candidates", "points_used",
/// "points_skipped", "frequency_range_hz", "curve": {freq_hz, z_mag_ohm, theta_deg, z_real_ohm,
/// z_imag_ohm}, "residuals": {freq_hz, mag_pct, theta_deg}, "notes": [...], and for a driver
/// "driver": {"from_fit": {...}, "from_curve": {...} or null, "conditions"}}. Throws
/// dsp::FitError (fit.*) when nothing can be fitted.
nlohmann::json fit_json(const FitInput& in, const FitRequest& request);

/// Thiele/Small parameters as JSON (units in the names: re_ohm, fs_hz, ...).
nlohmann::json to_json(const dsp::DriverParams& p);

}  // namespace tb
