#include "server/reading_text.hpp"

#include <cmath>
#include <cstdio>
#include <sstream>

namespace tb {

namespace {

struct Prefixed {
  double scale;
  const char* prefix;
};

Prefixed choose_prefix(double magnitude) {
  static constexpr Prefixed table[] = {{1e9, "G"},  {1e6, "M"},  {1e3, "k"},  {1, ""},
                                       {1e-3, "m"}, {1e-6, "µ"}, {1e-9, "n"}, {1e-12, "p"}};
  if (!(magnitude > 0) || !std::isfinite(magnitude)) return {1, ""};
  for (const auto& p : table)
    if (magnitude >= p.scale * 0.9995) return p;
  return table[std::size(table) - 1];
}

std::string fixed(double v, int decimals) {
  char buf[64];
  std::snprintf(buf, sizeof buf, "%.*f", std::max(decimals, 0), v);
  return buf;
}

}  // namespace

std::string format_si(double value, const std::string& unit, int digits) {
  if (!std::isfinite(value)) return value > 0 ? "∞" : "-∞";
  const auto p = unit.empty() ? Prefixed{1, ""} : choose_prefix(std::abs(value));
  const double scaled = value / p.scale;
  const int int_digits =
      std::abs(scaled) >= 1 ? static_cast<int>(std::floor(std::log10(std::abs(scaled)))) + 1 : 1;
  const int decimals =
      std::abs(scaled) >= 1 || scaled == 0
          ? digits - int_digits
          : digits - 1 - static_cast<int>(std::floor(std::log10(std::abs(scaled))));
  return fixed(scaled, std::min(decimals, 12)) + (unit.empty() && !*p.prefix ? "" : " ") +
         p.prefix + unit;
}

std::string format_measured(double value, double expanded_u, const std::string& unit) {
  if (!std::isfinite(value)) return value > 0 ? "∞" : "-∞";
  if (!(expanded_u > 0) || !std::isfinite(expanded_u)) return format_si(value, unit, 6);
  // Dimensionless numbers (D, Q) are shown plainly: "0.00086", never "860 µ".
  const auto p =
      unit.empty() ? Prefixed{1, ""} : choose_prefix(std::max(std::abs(value), expanded_u));
  const double v = value / p.scale, u = expanded_u / p.scale;
  // Two significant digits of U fix the last decimal shown for both numbers.
  const int decimals = std::min(9, 1 - static_cast<int>(std::floor(std::log10(u))));
  return fixed(v, decimals) + " ± " + fixed(u, decimals) + (unit.empty() ? "" : " ") + p.prefix +
         unit;
}

std::string format_reading(const dsp::ToneReading& r) {
  const auto& v = r.values;
  std::ostringstream out;
  const char* kind_word = r.kind == dsp::PartKind::capacitor  ? "capacitor"
                          : r.kind == dsp::PartKind::inductor ? "inductor"
                                                              : "resistor";
  out << "  " << fixed(r.freq_hz, r.freq_hz < 1000 ? 3 : 2) << " Hz   " << kind_word
      << (r.kind_forced ? " (as told)" : "") << "\n";
  auto line = [&out](const std::string& left, const std::string& right) {
    std::string l = "    " + left;
    // Pad by visible characters (UTF-8 continuation bytes take no column).
    std::size_t cols = 0;
    for (unsigned char c : l)
      cols += (c & 0xC0) != 0x80;
    if (cols < 40) l.append(40 - cols, ' ');
    out << l << right << "\n";
  };
  const std::string esr = r.r_below_resolution
                              ? "< " + format_si(r.u_r.expanded, "Ω", 2) + " (below resolution)"
                              : format_measured(v.r_ohm, r.u_r.expanded, "Ω");
  const std::string loss = r.r_below_resolution ? "< " + format_si(std::abs(r.u_d.expanded), "", 2)
                                                : format_measured(v.d, r.u_d.expanded, "");
  switch (r.kind) {
    case dsp::PartKind::capacitor:
      line("Cs   " + format_measured(v.cs_f, r.u_cs.expanded, "F"),
           "Cp   " + format_measured(v.cp_f, r.u_cp.expanded, "F"));
      line("ESR  " + esr, "D    " + loss);
      break;
    case dsp::PartKind::inductor:
      line("Ls   " + format_measured(v.ls_h, r.u_ls.expanded, "H"),
           "Lp   " + format_measured(v.lp_h, r.u_lp.expanded, "H"));
      line("Rs   " + esr,
           "Q    " + (r.r_below_resolution
                          ? "> " + format_si(std::abs(v.x_ohm) / r.u_r.expanded, "", 2)
                          : format_measured(v.q, r.u_q.expanded, "")));
      break;
    case dsp::PartKind::resistor:
      line("Rs   " + format_measured(v.r_ohm, r.u_r.expanded, "Ω"),
           "Xs   " + format_measured(v.x_ohm, r.u_x.expanded, "Ω"));
      if (!r.x_below_resolution) {
        line(v.x_ohm > 0 ? "Ls   " + format_measured(v.ls_h, r.u_ls.expanded, "H")
                         : "Cs   " + format_measured(v.cs_f, r.u_cs.expanded, "F"),
             "");
      }
      break;
  }
  line("|Z|  " + format_measured(v.mag_ohm, r.u_mag.expanded, "Ω"),
       "θ    " + format_measured(v.theta_deg, r.u_theta_deg.expanded, "°"));
  if (r.v_part_rms > 0) {
    line("test level  " + format_si(r.v_part_rms, "Vrms", 3) + ", " +
             format_si(r.i_part_rms, "Arms", 3),
         "");
  } else {
    line("test level  unknown (pass --full-scale-vrms to state it)", "");
  }
  out << "    " << r.blocks_used << " of " << r.blocks_total << " blocks, "
      << dsp::window_name(r.window) << (r.coherent ? " (whole periods)" : "") << ", SNR node A "
      << fixed(r.snr_a_db, 0) << " dB, node B " << fixed(r.snr_b_db, 0)
      << " dB, k = " << fixed(r.u_mag.k, 2) << "\n";
  if (r.settle.verdict != dsp::SettleVerdict::settled) {
    out << "    WARNING: not settled (" << dsp::settle_verdict_name(r.settle.verdict) << ", drift "
        << format_si(r.settle.drift_rel * 100, "%", 2)
        << "): wait longer before recording, or record for longer\n";
  }
  return out.str();
}

}  // namespace tb
