// Reading a saved sweep from a file for `tonebridge analyze SWEEP.csv|SWEEP.json --fit`:
// this program's own exports (GET /api/v1/sweeps/{id}/export, `tonebridge sweep`) and CSV
// files from elsewhere.
//
// CSV: '#' lines are comments; the first other line names the columns. Frequency: freq_hz
// (or freq, frequency, f, hz). Impedance: z_real_ohm and z_imag_ohm (or re, im, real,
// imag, r, x), or z_mag_ohm and theta_deg (or mag, magnitude, impedance, |z|; phase,
// phase_deg, theta). Expanded uncertainties (k = 2), optional: u_z_mag_ohm and u_theta_deg.
// Without them every point gets the same relative weight (0.1 % and 1 mrad) and the fit's
// uncertainties come from the scatter about the model (chi-squared scaling). Rows with an
// empty or non-numeric cell in a needed column are skipped and counted. Separators: comma,
// semicolon or tab (the first that splits the header).
//
// JSON: an object with "columns" as the export writes them.
//
// Errors: tb::Error file.unreadable (cannot open), file.bad_sweep (no frequency column, no
// impedance columns, not a sweep export, fewer than 3 usable points) with what to fix.
#pragma once

#include <string>

#include "server/sweep_fit.hpp"

namespace tb {

/// True when the path ends in .csv or .json (case-insensitive): a sweep, not a recording.
bool is_sweep_file(const std::string& path);

/// Reads the file. uncertainties_given says whether it carried u columns.
struct SweepFile {
  FitInput input;
  bool uncertainties_given = false;
};
SweepFile read_sweep_file(const std::string& path);

/// The same from text already read (for tests); name is used in messages.
SweepFile parse_sweep_csv(const std::string& text, const std::string& name);

}  // namespace tb
