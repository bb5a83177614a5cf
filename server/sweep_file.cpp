#include "server/sweep_file.hpp"

#include <algorithm>
#include <cctype>
#include <cmath>
#include <complex>
#include <fstream>
#include <numbers>
#include <sstream>
#include <vector>

#include "server/error.hpp"

namespace tb {

namespace {

std::string lower(std::string s) {
  std::transform(s.begin(), s.end(), s.begin(), [](unsigned char c) { return std::tolower(c); });
  return s;
}

std::string trim(const std::string& s) {
  const auto b = s.find_first_not_of(" \t\r\"");
  if (b == std::string::npos) return "";
  const auto e = s.find_last_not_of(" \t\r\"");
  return s.substr(b, e - b + 1);
}

std::vector<std::string> split(const std::string& line, char sep) {
  std::vector<std::string> out;
  std::string cell;
  std::istringstream in(line);
  while (std::getline(in, cell, sep))
    out.push_back(trim(cell));
  if (!line.empty() && line.back() == sep) out.emplace_back();
  return out;
}

int find_column(const std::vector<std::string>& header, std::initializer_list<const char*> names) {
  for (const char* n : names)
    for (std::size_t i = 0; i < header.size(); ++i)
      if (lower(header[i]) == n) return static_cast<int>(i);
  return -1;
}

bool number(const std::vector<std::string>& row, int col, double& v) {
  if (col < 0 || static_cast<std::size_t>(col) >= row.size() || row[col].empty()) return false;
  char* end = nullptr;
  v = std::strtod(row[col].c_str(), &end);
  return end && *end == '\0' && std::isfinite(v);
}

[[noreturn]] void bad(const std::string& name, const std::string& what, const std::string& fix) {
  throw Error("file.bad_sweep", name + ": " + what, fix);
}

}  // namespace

bool is_sweep_file(const std::string& path) {
  const auto l = lower(path);
  auto ends = [&](const std::string& s) {
    return l.size() >= s.size() && l.compare(l.size() - s.size(), s.size(), s) == 0;
  };
  return ends(".csv") || ends(".json");
}

SweepFile parse_sweep_csv(const std::string& text, const std::string& name) {
  std::istringstream in(text);
  std::string line;
  std::vector<std::string> header;
  char sep = ',';
  while (std::getline(in, line)) {
    if (trim(line).empty() || trim(line)[0] == '#') continue;
    for (char c : {',', ';', '\t'}) {
      if (line.find(c) != std::string::npos) {
        sep = c;
        break;
      }
    }
    header = split(line, sep);
    break;
  }
  if (header.empty()) bad(name, "the file holds no header line", "export the sweep again");
  const int f = find_column(header, {"freq_hz", "freq", "frequency", "f", "hz", "frequency_hz"});
  const int re = find_column(header, {"z_real_ohm", "re", "real", "r", "z_re"});
  const int im = find_column(header, {"z_imag_ohm", "im", "imag", "x", "z_im"});
  const int mag = find_column(header, {"z_mag_ohm", "mag", "magnitude", "impedance", "|z|", "z"});
  const int ph = find_column(header, {"theta_deg", "phase", "phase_deg", "theta", "angle"});
  const int um = find_column(header, {"u_z_mag_ohm"});
  const int ut = find_column(header, {"u_theta_deg"});
  if (f < 0) {
    bad(name, "no frequency column", "name one column freq_hz (or freq, frequency, hz)");
  }
  const bool cartesian = re >= 0 && im >= 0;
  if (!cartesian && (mag < 0 || ph < 0)) {
    bad(name, "no impedance columns",
        "give z_real_ohm and z_imag_ohm, or z_mag_ohm and theta_deg (phase in degrees)");
  }
  SweepFile out;
  out.uncertainties_given = um >= 0 && ut >= 0;
  nlohmann::json cols = {{"freq_hz", nlohmann::json::array()},
                         {"z_real_ohm", nlohmann::json::array()},
                         {"z_imag_ohm", nlohmann::json::array()},
                         {"u_z_mag_ohm", nlohmann::json::array()},
                         {"u_theta_deg", nlohmann::json::array()}};
  int skipped = 0;
  while (std::getline(in, line)) {
    if (trim(line).empty() || trim(line)[0] == '#') continue;
    const auto row = split(line, sep);
    double fv, a, b;
    std::complex<double> z;
    if (!number(row, f, fv)) {
      ++skipped;
      continue;
    }
    if (cartesian) {
      if (!number(row, re, a) || !number(row, im, b)) {
        ++skipped;
        continue;
      }
      z = {a, b};
    } else {
      if (!number(row, mag, a) || !number(row, ph, b)) {
        ++skipped;
        continue;
      }
      z = std::polar(a, b * std::numbers::pi / 180);
    }
    double u_mag = 0, u_th = 0;
    if (out.uncertainties_given) {
      if (!number(row, um, u_mag) || !number(row, ut, u_th)) {
        ++skipped;
        continue;
      }
    } else {
      // Equal relative weights (k = 2 figures, halved by the reader): 0.1 % and 1 mrad.
      u_mag = 2 * 1e-3 * std::abs(z);
      u_th = 2 * 1e-3 * 180 / std::numbers::pi;
    }
    cols["freq_hz"].push_back(fv);
    cols["z_real_ohm"].push_back(z.real());
    cols["z_imag_ohm"].push_back(z.imag());
    cols["u_z_mag_ohm"].push_back(u_mag);
    cols["u_theta_deg"].push_back(u_th);
  }
  out.input = fit_input_from_columns(cols);
  out.input.skipped += skipped;
  if (out.input.sweep.freq_hz.size() < 3) {
    bad(name, "fewer than 3 usable points (" + std::to_string(skipped) + " rows skipped)",
        "check the number format (a point as the decimal mark) and the column names");
  }
  return out;
}

SweepFile read_sweep_file(const std::string& path) {
  std::ifstream in(path, std::ios::binary);
  if (!in) {
    throw Error("file.unreadable", path + ": cannot open the sweep file",
                "give the path of a sweep exported as CSV or JSON");
  }
  std::stringstream s;
  s << in.rdbuf();
  const std::string text = s.str();
  if (lower(path).ends_with(".json")) {
    const auto j = nlohmann::json::parse(text, nullptr, false);
    if (j.is_discarded() || !j.is_object() || !j.contains("columns")) {
      bad(path, "not a sweep export (no \"columns\")",
          "export the sweep with ?format=json, or give a CSV file");
    }
    SweepFile out;
    out.uncertainties_given = true;
    out.input = fit_input_from_columns(j["columns"]);
    if (out.input.sweep.freq_hz.size() < 3)
      bad(path, "fewer than 3 usable points", "fit a sweep that measured more points");
    return out;
  }
  return parse_sweep_csv(text, path);
}

}  // namespace tb
