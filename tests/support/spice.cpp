#include "tests/support/spice.hpp"

#include <sys/wait.h>

#include <algorithm>
#include <cctype>
#include <cmath>
#include <cstdio>
#include <cstdlib>
#include <filesystem>
#include <fstream>
#include <sstream>
#include <stdexcept>
#include <system_error>

#ifndef TB_NGSPICE
#define TB_NGSPICE "ngspice"
#endif

namespace tb::test {

namespace {

namespace fs = std::filesystem;

// A private working directory for one ngspice run, removed with everything in it.
class TempDir {
 public:
  TempDir() {
    std::string pattern = (fs::temp_directory_path() / "tb_spice_XXXXXX").string();
    if (::mkdtemp(pattern.data()) == nullptr) {
      throw std::runtime_error("spice: cannot create a temporary directory from " + pattern);
    }
    path_ = pattern;
  }
  ~TempDir() {
    std::error_code ignored;
    fs::remove_all(path_, ignored);
  }
  TempDir(const TempDir&) = delete;
  TempDir& operator=(const TempDir&) = delete;

  const fs::path& path() const { return path_; }

 private:
  fs::path path_;
};

std::string read_text(const fs::path& file) {
  std::ifstream in(file);
  std::ostringstream out;
  out << in.rdbuf();
  return out.str();
}

std::string log_tail(const fs::path& log_file) {
  const std::string text = read_text(log_file);
  constexpr std::size_t max_chars = 3000;
  if (text.size() <= max_chars) return text;
  return "..." + text.substr(text.size() - max_chars);
}

[[noreturn]] void fail(const std::string& what, const fs::path& log_file) {
  throw std::runtime_error("spice: " + what + "\n--- ngspice log (tail) ---\n" +
                           log_tail(log_file));
}

std::string shell_quote(const std::string& text) {
  std::string quoted = "'";
  for (char c : text) {
    if (c == '\'') {
      quoted += "'\\''";
    } else {
      quoted += c;
    }
  }
  return quoted + "'";
}

void check_nodes(const std::vector<std::string>& nodes) {
  if (nodes.empty()) throw std::invalid_argument("spice: no nodes requested");
  for (const auto& node : nodes) {
    const bool ok = !node.empty() && std::all_of(node.begin(), node.end(), [](char c) {
      return std::isalnum(static_cast<unsigned char>(c)) != 0 || c == '_';
    });
    // Anything else could break the control line or select a different vector.
    if (!ok) throw std::invalid_argument("spice: unusable node name '" + node + "'");
  }
}

std::string vector_list(const std::vector<std::string>& nodes) {
  std::string list;
  for (const auto& node : nodes)
    list += " v(" + node + ")";
  return list;
}

// ngspice reports most problems in the log and still exits 0 when the control block ends
// with `quit 0`, so the log is the place to look for them.
bool log_reports_error(const std::string& log_text) {
  std::string lower(log_text.size(), ' ');
  std::transform(log_text.begin(), log_text.end(), lower.begin(), [](char c) {
    return static_cast<char>(std::tolower(static_cast<unsigned char>(c)));
  });
  return lower.find("error") != std::string::npos ||
         lower.find("can't find model") != std::string::npos;
}

// Writes the deck, runs ngspice in `dir` and throws on any failure it can see.
void run_deck(const fs::path& dir, const std::string& netlist_body,
              const std::string& control_commands) {
  const fs::path deck = dir / "deck.cir";
  const fs::path log_file = dir / "ngspice.log";
  {
    std::ofstream out(deck);
    out << "* tonebridge test deck\n"
        << netlist_body << "\n"
        << ".control\n"
        << "set wr_singlescale\n"
        << "set wr_vecnames\n"
        << "option numdgt=9\n"
        << control_commands << "quit 0\n"
        << ".endc\n"
        << ".end\n";
    if (!out) throw std::runtime_error("spice: cannot write " + deck.string());
  }
  // A hung simulator must not hang the test run; stdin is closed so it can never wait on it.
  const std::string command = "cd " + shell_quote(dir.string()) +
                              " && timeout -k 5 600 " TB_NGSPICE
                              " -b deck.cir > ngspice.log 2>&1 < /dev/null";
  const int status = std::system(command.c_str());
  if (status == -1) fail("cannot start a shell for ngspice", log_file);
  if (!WIFEXITED(status)) fail("ngspice did not exit normally", log_file);
  const int code = WEXITSTATUS(status);
  if (code == 127) fail("ngspice command '" TB_NGSPICE "' not found", log_file);
  if (code == 124) fail("ngspice timed out", log_file);
  if (code != 0) fail("ngspice exited with status " + std::to_string(code), log_file);
  if (log_reports_error(read_text(log_file))) fail("ngspice reported an error", log_file);
}

// Parses a wrdata file written with wr_vecnames: one header line, then rows of numbers.
std::vector<std::vector<double>> read_wrdata(const fs::path& file, std::size_t columns,
                                             const fs::path& log_file) {
  std::ifstream in(file);
  if (!in) fail("no output file " + file.filename().string(), log_file);
  std::string line;
  if (!std::getline(in, line)) fail("empty output file " + file.filename().string(), log_file);
  std::vector<std::vector<double>> rows;
  while (std::getline(in, line)) {
    if (line.find_first_not_of(" \t\r") == std::string::npos) continue;
    std::vector<double> row;
    std::istringstream fields(line);
    std::string token;
    while (fields >> token) {
      char* end = nullptr;
      const double value = std::strtod(token.c_str(), &end);
      if (end != token.c_str() + token.size() || !std::isfinite(value)) {
        fail("unparsable value '" + token + "' in " + file.filename().string(), log_file);
      }
      row.push_back(value);
    }
    if (row.size() != columns) {
      fail("expected " + std::to_string(columns) + " columns, got " + std::to_string(row.size()) +
               " in " + file.filename().string(),
           log_file);
    }
    rows.push_back(std::move(row));
  }
  return rows;
}

}  // namespace

bool ngspice_available() {
  const int status = std::system(TB_NGSPICE " -v > /dev/null 2>&1 < /dev/null");
  return status != -1 && WIFEXITED(status) && WEXITSTATUS(status) == 0;
}

std::string spice_value(double value) {
  char buffer[32];
  std::snprintf(buffer, sizeof buffer, "%.17g", value);
  return buffer;
}

std::vector<SpiceAcPoint> spice_ac(const std::string& netlist_body,
                                   const std::vector<std::string>& nodes,
                                   const std::vector<double>& freqs_hz) {
  check_nodes(nodes);
  if (freqs_hz.empty()) throw std::invalid_argument("spice_ac: no frequencies");
  for (double f : freqs_hz) {
    if (!(std::isfinite(f) && f > 0.0)) {
      throw std::invalid_argument("spice_ac: frequencies must be finite and positive");
    }
  }

  TempDir dir;
  // One single-point analysis per frequency: the solution is at exactly that frequency,
  // with no dependence on how a sweep would place its points.
  std::string commands;
  for (std::size_t i = 0; i < freqs_hz.size(); ++i) {
    const std::string f = spice_value(freqs_hz[i]);
    commands += "ac lin 1 " + f + " " + f + "\n";
    commands += "wrdata ac" + std::to_string(i) + ".txt" + vector_list(nodes) + "\n";
  }
  run_deck(dir.path(), netlist_body, commands);

  const fs::path log_file = dir.path() / "ngspice.log";
  std::vector<SpiceAcPoint> points;
  points.reserve(freqs_hz.size());
  for (std::size_t i = 0; i < freqs_hz.size(); ++i) {
    // Columns: frequency, then real and imaginary part of each vector.
    const auto rows = read_wrdata(dir.path() / ("ac" + std::to_string(i) + ".txt"),
                                  1 + 2 * nodes.size(), log_file);
    if (rows.size() != 1) {
      fail("expected one AC row at " + spice_value(freqs_hz[i]) + " Hz, got " +
               std::to_string(rows.size()),
           log_file);
    }
    const auto& row = rows.front();
    if (std::abs(row[0] - freqs_hz[i]) > 1e-8 * freqs_hz[i]) {
      fail("AC point at " + spice_value(row[0]) + " Hz, asked for " + spice_value(freqs_hz[i]),
           log_file);
    }
    SpiceAcPoint point{freqs_hz[i], {}};
    for (std::size_t k = 0; k < nodes.size(); ++k) {
      point.v.emplace_back(row[1 + 2 * k], row[2 + 2 * k]);
    }
    points.push_back(std::move(point));
  }
  return points;
}

SpiceTransient spice_transient(const std::string& netlist_body,
                               const std::vector<std::string>& nodes, double sample_rate_hz,
                               double duration_s, int steps_per_sample) {
  check_nodes(nodes);
  if (steps_per_sample < 1) {
    throw std::invalid_argument("spice_transient: steps_per_sample must be at least 1");
  }
  if (!(std::isfinite(sample_rate_hz) && sample_rate_hz > 0.0)) {
    throw std::invalid_argument("spice_transient: sample rate must be finite and positive");
  }
  if (!(std::isfinite(duration_s) && duration_s > 0.0)) {
    throw std::invalid_argument("spice_transient: duration must be finite and positive");
  }
  const double count_real = std::round(duration_s * sample_rate_hz);
  if (count_real < 1.0 || count_real > 1e8) {
    throw std::invalid_argument("spice_transient: duration gives no samples or far too many");
  }
  const auto count = static_cast<std::size_t>(count_real);
  const double step = 1.0 / sample_rate_hz;

  TempDir dir;
  // Simulating to count/fs makes linearize produce count + 1 points; the last one is dropped,
  // so rounding in ngspice's point count cannot cost a sample.
  const std::string commands =
      "tran " + spice_value(step) + " " + spice_value(count_real / sample_rate_hz) + " 0 " +
      spice_value(step / steps_per_sample) + "\n" + "linearize" + vector_list(nodes) + "\n" +
      "wrdata tran.txt" + vector_list(nodes) + "\n";
  run_deck(dir.path(), netlist_body, commands);

  const fs::path log_file = dir.path() / "ngspice.log";
  const auto rows = read_wrdata(dir.path() / "tran.txt", 1 + nodes.size(), log_file);
  if (rows.size() < count) {
    fail("expected at least " + std::to_string(count) + " transient rows, got " +
             std::to_string(rows.size()),
         log_file);
  }
  SpiceTransient result{sample_rate_hz, std::vector<std::vector<double>>(nodes.size())};
  for (auto& samples : result.v)
    samples.reserve(count);
  for (std::size_t n = 0; n < count; ++n) {
    const double expected_t = static_cast<double>(n) * step;
    // 10 printed digits resolve the time far better than this; a larger gap means a wrong grid.
    if (std::abs(rows[n][0] - expected_t) > 1e-3 * step) {
      fail("transient row " + std::to_string(n) + " at t = " + spice_value(rows[n][0]) +
               " s, expected " + spice_value(expected_t),
           log_file);
    }
    for (std::size_t k = 0; k < nodes.size(); ++k)
      result.v[k].push_back(rows[n][1 + k]);
  }
  return result;
}

}  // namespace tb::test
