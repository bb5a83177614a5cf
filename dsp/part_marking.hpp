// What a technician types from a part's print, read into a nominal value, a tolerance and a
// rated voltage; and the IEC 60063 preferred-number series (E6 ... E192).
//
// Markings (IEC 60062:2016, "Marking codes for resistors and capacitors"):
//   RKM code        the letter is the decimal point and the scale.
//                   capacitor: p n u/µ m (pF nF µF mF), and R = point in pF ("2R2" = 2.2 pF);
//                   resistor:  R K M G (Ω kΩ MΩ GΩ), "4R7" = 4.7 Ω, "47K3" = 47.3 kΩ;
//                   inductor:  R = point in µH ("4R7" = 4.7 µH), n u m (nH µH mH).
//                   p, n, u, R and K may be upper or lower case; "m" is milli only in lower
//                   case and "M" mega only on resistors (an "m" RKM on a resistor is refused
//                   as ambiguous).
//   digit codes     three digits: two significant digits and a multiplier exponent, in pF
//                   (capacitor), Ω (resistor) or µH (inductor): "104" = 100 nF; exponent 8 is
//                   x0.01 and 9 is x0.1 ("109" = 1.0 pF). Four digits on a resistor: three
//                   significant digits ("4702" = 47.0 kΩ). One or two bare digits are pF on a
//                   capacitor ("47" = 47 pF) and Ω on a resistor; on an inductor they are
//                   refused (write a unit), as are four or more bare digits on a capacitor or
//                   inductor ("2200": write 2200p or 222) and five or more on a resistor.
//   plain value     number [prefix] [unit]: "4.7uF", "4.7 µF", "0.47mH", "8.2 ohm", "8.2Ω",
//                   "10H", "4.7k" (a resistor). Prefixes p n u µ m k K M G. A capacitance needs
//                   its prefix: a lone "F" is the tolerance letter (±1 %), never farads.
//                   A decimal comma is read as a point ("4,7uF").
// Tolerance: a letter glued to the end of the value ("4n7J", "104K", "1R0C") or standing alone
// ("4n7 J"), or written out: "±5%", "5%", "+-5%", "+80/-20%", "±0.25pF" (absolute).
// Letters: F ±1 %, G ±2 %, J ±5 %, K ±10 %, M ±20 %, Z +80/-20 %; B C D are ±0.1/±0.25/±0.5 pF
// on a capacitor below 10 pF and ±0.1/±0.25/±0.5 % otherwise. No other letter is accepted
// (makers use A, E, H, L, N, ... inconsistently).
// The trap: on a capacitor or inductor a K or M after 1-3 digits is the tolerance, not kilo or
// mega: "47K" on a ceramic is 47 pF ±10 %. On a resistor "47K" and "104K" are RKM (47 kΩ,
// 104 kΩ); a resistor's tolerance letter stands apart ("4702 F"), and a separate K, M or G
// right after a resistor's number ("47 K") is refused as ambiguous.
// Rated voltage: number [k] V ["DC"], e.g. "25V", "1kV", "100 VDC".
// Ranges (outside: marking.out_of_range): C 1 fF..1 F, L 1 pH..1 kH, R 1 µΩ..1 GΩ (as
// dsp/part_spec.hpp); a rated voltage 0 < V <= 100 kV.
#pragma once

#include <optional>
#include <span>
#include <stdexcept>
#include <string>
#include <string_view>
#include <utility>

#include "dsp/impedance.hpp"  // PartKind

namespace tb::dsp {

struct PartMarking {
  PartKind kind = PartKind::resistor;
  double nominal = 0;  ///< SI: F, H or Ω; > 0
  /// Tolerance limits in SI. Without a tolerance in the marking both equal the nominal
  /// and has_tolerance is false (a verdict then needs a tolerance from somewhere else).
  double lower = 0;
  double upper = 0;
  /// The same limits relative to the nominal: lower = nominal (1 - tol_minus_rel),
  /// upper = nominal (1 + tol_plus_rel). Z gives 0.20 and 0.80.
  double tol_minus_rel = 0;
  double tol_plus_rel = 0;
  bool has_tolerance = false;
  /// The tolerance was absolute (B/C/D below 10 pF, or "±0.25pF"): lower/upper are the truth,
  /// the relative figures are derived from them.
  bool tolerance_absolute = false;
  std::optional<double> rated_voltage_v;
  std::string canonical;  ///< "4.7 nF ±5 %, 100 V"
  /// How the value was read: "RKM", "three-digit code", "four-digit code",
  /// "two-digit code" (bare pF on a capacitor) or "plain value".
  std::string read_as;
};

/// A marking that cannot be read. id() is stable: "marking.empty", "marking.unreadable",
/// "marking.unknown_tolerance", "marking.wrong_unit", "marking.ambiguous",
/// "marking.out_of_range". what() quotes the text and says what to type instead, e.g.
/// "'4x7' is not a marking: write a value with a unit (4.7uF), an RKM code (4n7) or a
/// three-digit code (472)".
class MarkingError : public std::runtime_error {
 public:
  MarkingError(std::string id, const std::string& message)
      : std::runtime_error(message), id_(std::move(id)) {}
  const std::string& id() const { return id_; }

 private:
  std::string id_;
};

/// Reads a marking for a part of the given kind. With no kind (nullopt) the kind comes from
/// an explicit unit (F, H, ohm/Ω) and without one the marking is refused
/// (marking.ambiguous) asking for the kind. Throws MarkingError.
/// Example: parse_marking("4n7 J 100V", PartKind::capacitor).canonical == "4.7 nF ±5 %, 100 V".
PartMarking parse_marking(std::string_view text, std::optional<PartKind> kind);

/// A value with an SI prefix and up to 4 significant digits, trailing zeros dropped:
/// format_si(4.7e-9, "F") == "4.7 nF"; format_si(0.252, "Ω") == "252 mΩ".
/// An empty unit gives the plain number ("0.19"). Non-finite values print as "inf"/"nan".
std::string format_si(double value, std::string_view unit);

// ---- IEC 60063:2015 preferred numbers ----

enum class ESeries { E6, E12, E24, E48, E96, E192 };

/// "E6" ... "E192".
std::string_view series_name(ESeries series);

/// The series' members in one decade, 1 <= m < 10, ascending (literal tables, not the formula).
std::span<const double> series_values(ESeries series);

struct PreferredValue {
  double value = 0;          ///< the preferred value, same unit as the input
  double deviation_pct = 0;  ///< 100 (input - preferred) / preferred
};

/// The member of the series nearest to value > 0 (finite) in geometric distance
/// (|log(value / preferred)|; ties to the lower one). Otherwise std::invalid_argument.
/// Example: nearest_preferred(4.6e3, ESeries::E24).value == 4.7e3 (deviation -2.13 %).
PreferredValue nearest_preferred(double value, ESeries series);

/// The series with the fewest members in which value > 0 is a member (relative match
/// within 1e-6, any decade), or nullopt when it is in none.
/// Example: smallest_series_of(4.7e-9) == ESeries::E6; smallest_series_of(1.05) == E48.
std::optional<ESeries> smallest_series_of(double value);

}  // namespace tb::dsp
