#include "dsp/part_marking.hpp"

#include <algorithm>
#include <array>
#include <cctype>
#include <cmath>
#include <cstddef>
#include <cstdio>
#include <cstdlib>
#include <limits>
#include <vector>

namespace tb::dsp {
namespace {

// The part kind while reading: unknown until a unit says it.
enum class Kind { unknown, capacitor, inductor, resistor };

std::string_view kind_word(Kind kind) {
  switch (kind) {
    case Kind::capacitor:
      return "capacitor";
    case Kind::inductor:
      return "inductor";
    case Kind::resistor:
      return "resistor";
    case Kind::unknown:
      break;
  }
  return "part";
}

// ---- text helpers (built by appending: no temporaries glued with operator+) ----

std::string quoted(std::string_view text) {
  std::string s;
  s.reserve(text.size() + 2);
  s += '\'';
  s.append(text);
  s += '\'';
  return s;
}

template <typename... Parts>
std::string cat(const Parts&... parts) {
  std::string s;
  (s.append(std::string_view(parts)), ...);
  return s;
}

[[noreturn]] void fail(const char* id, const std::string& message) {
  throw MarkingError(id, message);
}

bool is_digit(char c) {
  return c >= '0' && c <= '9';
}
bool is_alpha(char c) {
  return (c >= 'a' && c <= 'z') || (c >= 'A' && c <= 'Z');
}
char lower(char c) {
  return static_cast<char>(std::tolower(static_cast<unsigned char>(c)));
}

bool iequals(std::string_view a, std::string_view b) {
  if (a.size() != b.size()) return false;
  for (std::size_t i = 0; i < a.size(); ++i)
    if (lower(a[i]) != lower(b[i])) return false;
  return true;
}

double to_number(std::string_view digits) {
  std::string s(digits);
  for (char& c : s)
    if (c == ',') c = '.';
  return std::strtod(s.c_str(), nullptr);
}

std::string_view unit_symbol(Kind kind) {
  switch (kind) {
    case Kind::capacitor:
      return "F";
    case Kind::inductor:
      return "H";
    case Kind::resistor:
      return "Ω";
    case Kind::unknown:
      break;
  }
  return "";
}

std::string_view quantity_word(Kind kind) {
  switch (kind) {
    case Kind::capacitor:
      return "a capacitance";
    case Kind::inductor:
      return "an inductance";
    case Kind::resistor:
      return "a resistance";
    case Kind::unknown:
      break;
  }
  return "a value";
}

const char* kHowToWrite =
    "write a value with a unit (4.7uF), an RKM code (4n7) or a three-digit code (472)";

// The typed text in plain ASCII: µ/μ -> u, Ω/Ω -> "ohm", ± / "+-" / "+/-" -> '~',
// minus sign and en dash -> '-', tabs -> spaces. Anything else outside ASCII is refused.
std::string normalise(std::string_view text) {
  static const std::array<std::pair<std::string_view, std::string_view>, 8> kSwaps = {{
      {"\xC2\xB5", "u"},        // µ micro sign
      {"\xCE\xBC", "u"},        // μ Greek mu
      {"\xCE\xA9", "ohm"},      // Ω Greek omega
      {"\xE2\x84\xA6", "ohm"},  // Ω ohm sign
      {"\xC2\xB1", "~"},        // ±
      {"\xE2\x88\x92", "-"},    // minus sign
      {"\xE2\x80\x93", "-"},    // en dash
      {"+/-", "~"},
  }};
  std::string out;
  for (std::size_t i = 0; i < text.size();) {
    bool swapped = false;
    for (const auto& [from, to] : kSwaps) {
      if (text.substr(i, from.size()) == from) {
        out.append(to);
        i += from.size();
        swapped = true;
        break;
      }
    }
    if (swapped) continue;
    const char c = text[i];
    if (c == '+' && i + 1 < text.size() && text[i + 1] == '-') {
      out += '~';
      i += 2;
      continue;
    }
    if (static_cast<unsigned char>(c) >= 0x80)
      fail("marking.unreadable",
           cat(quoted(text), " holds a character that is not part of a marking: ", kHowToWrite));
    // "100nF/63V", "2200uF/25V": a slash before the voltage separates like a space (the
    // slash of "+80/-20%" is followed by a sign and stays).
    const bool slash_before_number =
        c == '/' && i + 1 < text.size() && std::isdigit(static_cast<unsigned char>(text[i + 1]));
    out += (c == '\t' || slash_before_number) ? ' ' : c;
    ++i;
  }
  return out;
}

// Without a kind, an RKM code still says what it most likely is (IEC 60062): p, n, u as the
// decimal point are capacitor letters ("4n7", "100n", "u47"); R, K, M, G with digits after
// them are resistor letters ("4R7", "1k5", "R22", "2M2"), and so is a trailing R ("10R").
// A trailing K or M alone ("47K", "103M") stays ambiguous: on a capacitor it is a tolerance.
// The reply states the kind it read, so a small ceramic's "2R2" read as 2.2 ohm shows.
Kind infer_kind(const std::string& word) {
  const auto letter = word.find_first_not_of("0123456789.,");
  if (letter == std::string::npos) return Kind::unknown;
  const char c = word[letter];
  const std::string rest = word.substr(letter + 1);
  const bool digits_after = !rest.empty() && std::isdigit(static_cast<unsigned char>(rest[0]));
  const bool only_tolerance_after =
      rest.empty() || (rest.size() == 1 && std::isalpha(static_cast<unsigned char>(rest[0])));
  if ((c == 'p' || c == 'n' || c == 'u') && (digits_after || only_tolerance_after) &&
      (rest.empty() || std::isdigit(static_cast<unsigned char>(rest[0])) ||
       std::string("FGJKMZBCD").find(rest[0]) != std::string::npos))
    return Kind::capacitor;
  if ((c == 'R' || c == 'r') && (digits_after || rest.empty() || letter == 0))
    return Kind::resistor;
  if ((c == 'k' || c == 'K' || c == 'M' || c == 'G') && digits_after && letter > 0)
    return Kind::resistor;
  return Kind::unknown;
}

std::vector<std::string> split_words(const std::string& s) {
  std::vector<std::string> words;
  std::string current;
  for (char c : s) {
    if (c == ' ') {
      if (!current.empty()) words.push_back(current);
      current.clear();
    } else {
      current += c;
    }
  }
  if (!current.empty()) words.push_back(current);
  return words;
}

// ---- units ----

struct UnitSuffix {
  double scale = 1;
  Kind kind = Kind::unknown;  ///< unknown: a prefix without a unit
};

std::optional<double> si_prefix(char c) {
  switch (c) {
    case 'p':
    case 'P':
      return 1e-12;
    case 'n':
    case 'N':
      return 1e-9;
    case 'u':
    case 'U':
      return 1e-6;
    case 'm':
      return 1e-3;
    case 'k':
    case 'K':
      return 1e3;
    case 'M':
      return 1e6;
    case 'G':
      return 1e9;
    default:
      return std::nullopt;
  }
}

// A unit written out after a number: [prefix] (F | H | ohm | ohms). A capacitance needs its
// prefix (a lone F is the tolerance letter); "mf", "MF" and "mfd" are refused because old
// American prints use them for microfarads.
std::optional<UnitSuffix> explicit_unit(std::string_view s, std::string_view original) {
  if (s.empty()) return std::nullopt;
  double scale = 1;
  std::string_view rest = s;
  for (std::string_view ohm : {"ohms", "ohm"}) {
    if (iequals(s, ohm)) return UnitSuffix{1, Kind::resistor};
    if (s.size() == ohm.size() + 1 && iequals(s.substr(1), ohm)) {
      const auto p = si_prefix(s[0]);
      if (!p) return std::nullopt;
      return UnitSuffix{*p, Kind::resistor};
    }
  }
  if (iequals(s, "mfd") || s == "MF" || s == "mf" || s == "Mf")
    fail("marking.ambiguous",
         cat(quoted(original), ": '", s,
             "' means microfarads on old prints and millifarads in SI: write uF or mF"));
  if (s.size() == 2) {
    const auto p = si_prefix(s[0]);
    if (!p) return std::nullopt;
    scale = *p;
    rest = s.substr(1);
  }
  if (rest == "H" || rest == "h") return UnitSuffix{scale, Kind::inductor};
  if ((rest == "F" || rest == "f") && s.size() == 2) return UnitSuffix{scale, Kind::capacitor};
  return std::nullopt;
}

// The scale of an RKM point letter (or a prefix after a decimal number) for the part kind.
double point_scale(char letter, Kind kind, std::string_view original) {
  const char l = lower(letter);
  switch (kind) {
    case Kind::capacitor:
      if (l == 'r') return 1e-12;  // small ceramics: R is the point in pF (IEC 60062)
      if (l == 'p') return 1e-12;
      if (l == 'n') return 1e-9;
      if (l == 'u') return 1e-6;
      if (letter == 'm') return 1e-3;
      break;
    case Kind::inductor:
      if (l == 'r') return 1e-6;  // R is the point in µH
      if (l == 'n') return 1e-9;
      if (l == 'u') return 1e-6;
      if (letter == 'm') return 1e-3;
      break;
    case Kind::resistor:
      if (l == 'r') return 1;
      if (l == 'k') return 1e3;
      if (letter == 'M') return 1e6;
      if (letter == 'G') return 1e9;
      if (letter == 'm')
        fail("marking.ambiguous",
             cat(quoted(original),
                 ": a lower-case m on a resistor could be milli or mega: write 1M0 for 1 MΩ "
                 "or 1 mohm for 1 mΩ"));
      break;
    case Kind::unknown:
      fail("marking.ambiguous",
           cat(quoted(original),
               " has no unit that tells the part: choose capacitor, inductor or resistor, or "
               "type the unit (4.7uF, 4.7mH, 4.7kohm)"));
  }
  if ((kind == Kind::capacitor || kind == Kind::inductor) && letter == 'M')
    fail("marking.ambiguous", cat(quoted(original), ": M on a ", kind_word(kind),
                                  " is the ±20 % letter: write m for milli (4m7)"));
  if (std::string_view("pPnNuUmMrRkKG").find(letter) == std::string_view::npos)
    fail("marking.unreadable", cat(quoted(original), " is not a marking: ", kHowToWrite));
  std::string letters;
  switch (kind) {
    case Kind::capacitor:
      letters = "p, n, u (µ), m or R (pF)";
      break;
    case Kind::inductor:
      letters = "n, u (µ), m or R (µH)";
      break;
    default:
      letters = "R, K, M or G";
  }
  fail("marking.unreadable", cat(quoted(original), ": '", std::string(1, letter),
                                 "' is not a decimal-point letter for a ", kind_word(kind),
                                 ": use ", letters, " (4n7, 4R7), or ", kHowToWrite));
}

// ---- tolerance ----

struct Tolerance {
  double minus = 0;  ///< relative, or absolute in SI when absolute
  double plus = 0;
  bool absolute = false;
};

bool is_tolerance_letter(char c) {
  switch (std::toupper(static_cast<unsigned char>(c))) {
    case 'B':
    case 'C':
    case 'D':
    case 'F':
    case 'G':
    case 'J':
    case 'K':
    case 'M':
    case 'Z':
      return true;
    default:
      return false;
  }
}

// IEC 60062:2016 letter codes. B/C/D are absolute (pF) on capacitors below 10 pF; the
// percentages used for them otherwise are from memory.
Tolerance letter_tolerance(char letter, Kind kind, double nominal, std::string_view original) {
  const char c = static_cast<char>(std::toupper(static_cast<unsigned char>(letter)));
  const bool small_cap = kind == Kind::capacitor && nominal < 10e-12;
  auto sym = [](double t) { return Tolerance{t, t, false}; };
  auto abs_pf = [](double pf) { return Tolerance{pf * 1e-12, pf * 1e-12, true}; };
  switch (c) {
    case 'B':
      return small_cap ? abs_pf(0.1) : sym(0.001);
    case 'C':
      return small_cap ? abs_pf(0.25) : sym(0.0025);
    case 'D':
      return small_cap ? abs_pf(0.5) : sym(0.005);
    case 'F':
      return sym(0.01);
    case 'G':
      return sym(0.02);
    case 'J':
      return sym(0.05);
    case 'K':
      return sym(0.10);
    case 'M':
      return sym(0.20);
    case 'Z':
      return Tolerance{0.20, 0.80, false};
    default:
      break;
  }
  fail("marking.unknown_tolerance",
       cat(quoted(original), ": '", std::string(1, letter),
           "' is not a tolerance letter: the known ones are B C D F G J K M Z; write other "
           "tolerances out (±5%, +80/-20%)"));
}

// Reads "12.5" at the front of s; returns the number of characters used (0: none).
std::size_t read_number(std::string_view s, double& value) {
  std::size_t i = 0;
  while (i < s.size() && is_digit(s[i]))
    ++i;
  if (i < s.size() && (s[i] == '.' || s[i] == ',') && i + 1 < s.size() && is_digit(s[i + 1])) {
    ++i;
    while (i < s.size() && is_digit(s[i]))
      ++i;
  }
  if (i == 0) return 0;
  value = to_number(s.substr(0, i));
  return i;
}

// "~5%", "5%", "+80/-20%", "+80%/-20%", "-20/+80%", "~0.25pF".
Tolerance written_tolerance(std::string_view word, Kind kind, std::string_view original) {
  auto bad = [&]() -> Tolerance {
    fail("marking.unreadable",
         cat(quoted(original), ": tolerance ", quoted(word),
             " is not readable: write it as ±5%, 5%, +80/-20%, ±0.25pF or a letter (J)"));
  };
  double v = 0;
  if (word[0] == '~') {
    const std::string_view rest = word.substr(1);
    const std::size_t n = read_number(rest, v);
    if (n == 0) bad();
    const std::string_view unit = rest.substr(n);
    if (unit == "%") return Tolerance{v / 100, v / 100, false};
    const auto u = explicit_unit(unit, original);
    if (!u || (u->kind != kind && kind != Kind::unknown)) bad();
    return Tolerance{v * u->scale, v * u->scale, true};
  }
  if (is_digit(word[0])) {
    const std::size_t n = read_number(word, v);
    if (word.substr(n) != "%") bad();
    return Tolerance{v / 100, v / 100, false};
  }
  if (word[0] != '+' && word[0] != '-') bad();
  const std::size_t slash = word.find('/');
  if (slash == std::string_view::npos) bad();
  Tolerance t;
  bool seen_plus = false, seen_minus = false;
  for (std::string_view part : {word.substr(0, slash), word.substr(slash + 1)}) {
    if (part.size() < 2 || (part[0] != '+' && part[0] != '-')) bad();
    const std::size_t n = read_number(part.substr(1), v);
    if (n == 0) bad();
    const std::string_view tail = part.substr(1 + n);
    if (!tail.empty() && tail != "%") bad();
    if (part[0] == '+') {
      if (seen_plus) bad();
      seen_plus = true;
      t.plus = v / 100;
    } else {
      if (seen_minus) bad();
      seen_minus = true;
      t.minus = v / 100;
    }
  }
  if (word.back() != '%') bad();
  return t;
}

// "25V", "1kV", "100VDC".
std::optional<double> voltage_word(std::string_view word) {
  double v = 0;
  const std::size_t n = read_number(word, v);
  if (n == 0) return std::nullopt;
  std::string_view rest = word.substr(n);
  if (!rest.empty() && (rest[0] == 'k' || rest[0] == 'K')) {
    v *= 1e3;
    rest = rest.substr(1);
  }
  if (rest == "V" || rest == "v" || iequals(rest, "vdc")) return v;
  return std::nullopt;
}

// ---- the value ----

struct ValueRead {
  double nominal = 0;
  Kind kind = Kind::unknown;
  std::string read_as;
  std::optional<char> tolerance_letter;
};

// Two significant digits (three for a four-digit code) and an exponent digit; 8 and 9 are
// x0.01 and x0.1 (EIA-198 convention, IEC 60062).
double digit_code(std::string_view digits) {
  const double significant = to_number(digits.substr(0, digits.size() - 1));
  const int e = digits.back() - '0';
  if (e == 8) return significant * 0.01;
  if (e == 9) return significant * 0.1;
  return significant * std::pow(10.0, e);
}

ValueRead digits_only(std::string_view digits, Kind kind, std::string_view original) {
  const std::size_t n = digits.size();
  switch (kind) {
    case Kind::capacitor:
      if (n <= 2) return {to_number(digits) * 1e-12, kind, "two-digit code", {}};
      if (n == 3) return {digit_code(digits) * 1e-12, kind, "three-digit code", {}};
      fail("marking.ambiguous",
           cat(quoted(original), ": ", std::to_string(n),
               " bare digits on a capacitor are no code: add the unit (2200p, 2.2n) or type "
               "the three-digit code (222)"));
    case Kind::resistor:
      if (n <= 2) return {to_number(digits), kind, "plain value", {}};
      if (n == 3) return {digit_code(digits), kind, "three-digit code", {}};
      if (n == 4) return {digit_code(digits), kind, "four-digit code", {}};
      fail("marking.ambiguous",
           cat(quoted(original), ": ", std::to_string(n),
               " bare digits on a resistor are no code: add the unit (100k, 100 kohm) or type "
               "the code (104, 1003)"));
    case Kind::inductor:
      if (n == 3) return {digit_code(digits) * 1e-6, kind, "three-digit code", {}};
      fail("marking.ambiguous",
           cat(quoted(original),
               ": bare digits on an inductor are read only as a three-digit code in µH (101 = "
               "100 µH): add the unit (47uH) or type the code"));
    case Kind::unknown:
      break;
  }
  fail("marking.ambiguous",
       cat(quoted(original),
           " is a code without a unit: choose capacitor, inductor or resistor, or type the unit "
           "(4.7uF, 4.7mH, 4.7kohm)"));
}

// word = d1 [. frac] L1 [d2 L2]; see the header for the forms.
ValueRead read_value(std::string_view w, Kind kind, std::string_view original) {
  auto unreadable = [&]() -> ValueRead {
    fail("marking.unreadable", cat(quoted(original), " is not a marking: ", kHowToWrite));
  };
  std::size_t i = 0;
  while (i < w.size() && is_digit(w[i]))
    ++i;
  const std::string_view d1 = w.substr(0, i);
  bool has_point = false;
  if (i < w.size() && (w[i] == '.' || w[i] == ',')) {
    if (i + 1 >= w.size() || !is_digit(w[i + 1])) unreadable();
    has_point = true;
    ++i;
    while (i < w.size() && is_digit(w[i]))
      ++i;
  }
  const std::string_view number = w.substr(0, i);
  std::size_t j = i;
  while (j < w.size() && is_alpha(w[j]))
    ++j;
  const std::string_view l1 = w.substr(i, j - i);
  std::size_t k = j;
  while (k < w.size() && is_digit(w[k]))
    ++k;
  const std::string_view d2 = w.substr(j, k - j);
  std::size_t m = k;
  while (m < w.size() && is_alpha(w[m]))
    ++m;
  const std::string_view l2 = w.substr(k, m - k);
  if (m != w.size()) unreadable();
  if (number.empty() && d2.empty()) unreadable();

  if (!d2.empty()) {  // RKM: the letter is the decimal point
    if (has_point || l1.size() != 1 || l2.size() > 1) unreadable();
    const double scale = point_scale(l1[0], kind, original);
    std::string text(d1.empty() ? "0" : d1);
    text += '.';
    text.append(d2);
    ValueRead r{to_number(text) * scale, kind, "RKM", {}};
    if (!l2.empty()) r.tolerance_letter = l2[0];
    return r;
  }
  if (l1.empty()) {
    if (!has_point) return digits_only(d1, kind, original);
    if (kind == Kind::resistor) return {to_number(number), kind, "plain value", {}};
    fail("marking.ambiguous", cat(quoted(original), " has no unit: write it with one (",
                                  kind == Kind::inductor ? "4.7uH, 4.7mH" : "4.7uF, 4.7nF", ")"));
  }
  if (const auto unit = explicit_unit(l1, original)) {
    if (unit->kind != kind && kind != Kind::unknown)
      fail("marking.wrong_unit",
           cat(quoted(original), " is ", quantity_word(unit->kind), " but the part is a ",
               kind_word(kind), ": type the ", kind_word(kind), "'s value in ", unit_symbol(kind),
               " or change the part kind"));
    return {to_number(number) * unit->scale, unit->kind, "plain value", {}};
  }
  // The trap of IEC 60062 codes: after 1-3 digits on a capacitor or inductor a single
  // tolerance letter is a tolerance ("47K" = 47 pF ±10 %), never kilo. Lower-case m stays
  // milli (47m = 47 mF / mH).
  const bool coded_part = kind == Kind::capacitor || kind == Kind::inductor;
  if (coded_part && !has_point && l1.size() == 1 && l1[0] != 'm' && is_tolerance_letter(l1[0]) &&
      d1.size() <= 3) {
    ValueRead r = digits_only(d1, kind, original);
    r.tolerance_letter = l1[0];
    return r;
  }
  // A trailing point letter ("47n", "47K", "47R") or a prefix after a decimal number
  // ("4.7k"), with an optional tolerance letter ("47KJ").
  if (l1.size() <= 2) {
    if (kind == Kind::unknown) point_scale(l1[0], kind, original);
    const bool letter_is_point =
        (kind == Kind::resistor)
            ? std::string_view("rRkKMG").find(l1[0]) != std::string_view::npos
            : std::string_view("rRpPnNuUm").find(l1[0]) != std::string_view::npos;
    if (!letter_is_point) {
      if (l1.size() == 1 && coded_part && std::isupper(static_cast<unsigned char>(l1[0])))
        letter_tolerance(l1[0], kind, 1, original);  // throws marking.unknown_tolerance
      if (l1[0] == 'M' || l1[0] == 'm') point_scale(l1[0], kind, original);
      unreadable();
    }
    const double scale = point_scale(l1[0], kind, original);
    ValueRead r{to_number(number) * scale, kind, has_point ? "plain value" : "RKM", {}};
    if (l1.size() == 2) r.tolerance_letter = l1[1];
    return r;
  }
  return unreadable();
}

std::string format_tolerance(const PartMarking& p, Kind kind) {
  if (!p.has_tolerance) return "";
  const std::string_view unit = unit_symbol(kind);
  if (p.tolerance_absolute) {
    const double minus = p.nominal - p.lower, plus = p.upper - p.nominal;
    if (std::abs(minus - plus) <= 1e-9 * p.nominal) return cat(" ±", format_si(plus, unit));
    return cat(" +", format_si(plus, unit), "/-", format_si(minus, unit));
  }
  if (std::abs(p.tol_minus_rel - p.tol_plus_rel) <= 1e-12)
    return cat(" ±", format_si(p.tol_plus_rel * 100, ""), " %");
  return cat(" +", format_si(p.tol_plus_rel * 100, ""), "/-", format_si(p.tol_minus_rel * 100, ""),
             " %");
}

struct Range {
  double lo, hi;
  const char* text;
};

Range range_of(Kind kind) {
  switch (kind) {
    case Kind::capacitor:
      return {1e-15, 1, "1 fF to 1 F"};
    case Kind::inductor:
      return {1e-12, 1e3, "1 pH to 1 kH"};
    default:
      return {1e-6, 1e9, "1 µΩ to 1 GΩ"};
  }
}

}  // namespace

PartMarking parse_marking(std::string_view text, std::optional<PartKind> part_kind) {
  Kind kind = Kind::unknown;
  if (part_kind) {
    switch (*part_kind) {
      case PartKind::capacitor:
        kind = Kind::capacitor;
        break;
      case PartKind::inductor:
        kind = Kind::inductor;
        break;
      case PartKind::resistor:
        kind = Kind::resistor;
        break;
    }
  }
  const std::string norm = normalise(text);
  std::vector<std::string> words = split_words(norm);
  if (words.empty()) fail("marking.empty", cat("the marking is empty: ", kHowToWrite));
  if (kind == Kind::unknown) kind = infer_kind(words[0]);
  // Glue what people type with a space: "4.7 uF", "5 %", "100 V", "± 5%".
  if (words.size() >= 2 && words[0].find_first_not_of("0123456789.,") == std::string::npos &&
      explicit_unit(words[1], text)) {
    words[0] += words[1];
    words.erase(words.begin() + 1);
  }
  if (kind == Kind::resistor && words.size() >= 2 &&
      words[0].find_first_not_of("0123456789.,") == std::string::npos &&
      (words[1] == "k" || words[1] == "K" || words[1] == "M" || words[1] == "G"))
    fail("marking.ambiguous",
         cat(quoted(text), ": a separate '", words[1],
             "' after a resistor's number could be a multiplier or a tolerance letter: write ",
             words[0], words[1], " (no space) for the multiplier, or the tolerance as ±10%"));
  for (std::size_t i = 1; i < words.size();) {
    const std::string& w = words[i];
    const bool suffix = w == "%" || w == "V" || w == "v" || iequals(w, "vdc");
    const bool after_sign = words[i - 1] == "~";
    if (suffix || after_sign) {
      words[i - 1] += w;
      words.erase(words.begin() + static_cast<std::ptrdiff_t>(i));
    } else {
      ++i;
    }
  }

  const ValueRead value = read_value(words[0], kind, text);
  PartMarking p;
  p.kind = value.kind == Kind::capacitor  ? PartKind::capacitor
           : value.kind == Kind::inductor ? PartKind::inductor
                                          : PartKind::resistor;
  const Kind kind_read = value.kind;
  p.nominal = value.nominal;
  p.read_as = value.read_as;
  const Range range = range_of(kind_read);
  if (!(p.nominal >= range.lo * (1 - 1e-9) && p.nominal <= range.hi * (1 + 1e-9)))
    fail("marking.out_of_range",
         cat(quoted(text), " reads as ", format_si(p.nominal, unit_symbol(kind_read)), ", outside ",
             range.text, " for a ", kind_word(kind_read), ": check the marking and the part kind"));

  std::optional<Tolerance> tol;
  std::string tol_text;
  auto set_tolerance = [&](const Tolerance& t, std::string_view from) {
    if (tol)
      fail("marking.unreadable", cat(quoted(text), " gives two tolerances (", quoted(tol_text),
                                     " and ", quoted(from), "): keep one"));
    tol = t;
    tol_text = std::string(from);
  };
  if (value.tolerance_letter) {
    const char c = *value.tolerance_letter;
    set_tolerance(letter_tolerance(c, kind_read, p.nominal, text), std::string(1, c));
  }
  for (std::size_t i = 1; i < words.size(); ++i) {
    const std::string& w = words[i];
    if (w.size() == 1 && is_alpha(w[0])) {
      set_tolerance(letter_tolerance(w[0], kind_read, p.nominal, text), w);
    } else if (const auto v = voltage_word(w)) {
      if (p.rated_voltage_v)
        fail("marking.unreadable", cat(quoted(text), " gives two rated voltages: keep one (100V)"));
      if (!(*v > 0 && *v <= 1e5))
        fail("marking.out_of_range", cat(quoted(text), ": rated voltage ", quoted(w),
                                         " is outside 0 to 100 kV: check the print"));
      p.rated_voltage_v = *v;
    } else if (w.find('%') != std::string::npos || w[0] == '~' || w[0] == '+' || w[0] == '-') {
      set_tolerance(written_tolerance(w, kind_read, text), w);
    } else {
      fail("marking.unreadable",
           cat(quoted(text), ": ", quoted(w),
               " after the value is neither a tolerance (J, ±5%) nor a rated voltage (100V); "
               "write e.g. '4n7 J 100V'"));
    }
  }

  p.lower = p.upper = p.nominal;
  if (tol) {
    p.has_tolerance = true;
    p.tolerance_absolute = tol->absolute;
    if (tol->absolute) {
      p.lower = std::max(0.0, p.nominal - tol->minus);
      p.upper = p.nominal + tol->plus;
      p.tol_minus_rel = (p.nominal - p.lower) / p.nominal;
      p.tol_plus_rel = (p.upper - p.nominal) / p.nominal;
    } else {
      if (!(tol->minus >= 0 && tol->minus < 1 && tol->plus >= 0 && tol->plus <= 10))
        fail("marking.out_of_range", cat(quoted(text), ": tolerance ", quoted(tol_text),
                                         " is outside -100 % to +1000 %: check the print"));
      p.tol_minus_rel = tol->minus;
      p.tol_plus_rel = tol->plus;
      p.lower = p.nominal * (1 - tol->minus);
      p.upper = p.nominal * (1 + tol->plus);
    }
  }
  p.canonical = cat(format_si(p.nominal, unit_symbol(kind_read)), format_tolerance(p, kind_read));
  if (p.rated_voltage_v) p.canonical += cat(", ", format_si(*p.rated_voltage_v, "V"));
  return p;
}

std::string format_si(double value, std::string_view unit) {
  if (!std::isfinite(value)) return std::isnan(value) ? "nan" : (value > 0 ? "inf" : "-inf");
  char buf[64];
  if (unit.empty() || unit == "%") {
    std::snprintf(buf, sizeof buf, "%.4g", value);
    return unit.empty() ? std::string(buf) : cat(buf, " %");
  }
  static const std::array<std::pair<int, std::string_view>, 8> kPrefixes = {
      {{-12, "p"}, {-9, "n"}, {-6, "µ"}, {-3, "m"}, {0, ""}, {3, "k"}, {6, "M"}, {9, "G"}}};
  int e3 = 0;
  if (value != 0) {
    e3 = static_cast<int>(std::floor(std::log10(std::abs(value)) / 3.0)) * 3;
    // 999.96 rounds to 1000 at 4 digits: move up a prefix
    const double m = std::abs(value) / std::pow(10.0, e3);
    if (m >= 999.95) e3 += 3;
    e3 = std::clamp(e3, -12, 9);
  }
  std::string_view prefix;
  for (const auto& [e, p] : kPrefixes)
    if (e == e3) prefix = p;
  std::snprintf(buf, sizeof buf, "%.4g", value / std::pow(10.0, e3));
  return cat(buf, " ", prefix, unit);
}

// ---- IEC 60063:2015 preferred numbers ----

namespace {

// E6, E12, E24 as published (IEC 60063:2015; E24 is not the rounded formula at 2.7 3.0 3.3
// 3.6 3.9 4.3 4.7 8.2). E48, E96, E192 from memory; each agrees with round(10^(i/n), 3
// significant figures) except E192's 9.20 (the formula gives 9.19), as published.
constexpr std::array<double, 6> kE6 = {1.0, 1.5, 2.2, 3.3, 4.7, 6.8};
constexpr std::array<double, 12> kE12 = {1.0, 1.2, 1.5, 1.8, 2.2, 2.7,
                                         3.3, 3.9, 4.7, 5.6, 6.8, 8.2};
constexpr std::array<double, 24> kE24 = {1.0, 1.1, 1.2, 1.3, 1.5, 1.6, 1.8, 2.0,
                                         2.2, 2.4, 2.7, 3.0, 3.3, 3.6, 3.9, 4.3,
                                         4.7, 5.1, 5.6, 6.2, 6.8, 7.5, 8.2, 9.1};
constexpr std::array<double, 48> kE48 = {
    1.00, 1.05, 1.10, 1.15, 1.21, 1.27, 1.33, 1.40, 1.47, 1.54, 1.62, 1.69, 1.78, 1.87, 1.96, 2.05,
    2.15, 2.26, 2.37, 2.49, 2.61, 2.74, 2.87, 3.01, 3.16, 3.32, 3.48, 3.65, 3.83, 4.02, 4.22, 4.42,
    4.64, 4.87, 5.11, 5.36, 5.62, 5.90, 6.19, 6.49, 6.81, 7.15, 7.50, 7.87, 8.25, 8.66, 9.09, 9.53};
constexpr std::array<double, 96> kE96 = {
    1.00, 1.02, 1.05, 1.07, 1.10, 1.13, 1.15, 1.18, 1.21, 1.24, 1.27, 1.30, 1.33, 1.37, 1.40, 1.43,
    1.47, 1.50, 1.54, 1.58, 1.62, 1.65, 1.69, 1.74, 1.78, 1.82, 1.87, 1.91, 1.96, 2.00, 2.05, 2.10,
    2.15, 2.21, 2.26, 2.32, 2.37, 2.43, 2.49, 2.55, 2.61, 2.67, 2.74, 2.80, 2.87, 2.94, 3.01, 3.09,
    3.16, 3.24, 3.32, 3.40, 3.48, 3.57, 3.65, 3.74, 3.83, 3.92, 4.02, 4.12, 4.22, 4.32, 4.42, 4.53,
    4.64, 4.75, 4.87, 4.99, 5.11, 5.23, 5.36, 5.49, 5.62, 5.76, 5.90, 6.04, 6.19, 6.34, 6.49, 6.65,
    6.81, 6.98, 7.15, 7.32, 7.50, 7.68, 7.87, 8.06, 8.25, 8.45, 8.66, 8.87, 9.09, 9.31, 9.53, 9.76};
constexpr std::array<double, 192> kE192 = {
    1.00, 1.01, 1.02, 1.04, 1.05, 1.06, 1.07, 1.09, 1.10, 1.11, 1.13, 1.14, 1.15, 1.17, 1.18, 1.20,
    1.21, 1.23, 1.24, 1.26, 1.27, 1.29, 1.30, 1.32, 1.33, 1.35, 1.37, 1.38, 1.40, 1.42, 1.43, 1.45,
    1.47, 1.49, 1.50, 1.52, 1.54, 1.56, 1.58, 1.60, 1.62, 1.64, 1.65, 1.67, 1.69, 1.72, 1.74, 1.76,
    1.78, 1.80, 1.82, 1.84, 1.87, 1.89, 1.91, 1.93, 1.96, 1.98, 2.00, 2.03, 2.05, 2.08, 2.10, 2.13,
    2.15, 2.18, 2.21, 2.23, 2.26, 2.29, 2.32, 2.34, 2.37, 2.40, 2.43, 2.46, 2.49, 2.52, 2.55, 2.58,
    2.61, 2.64, 2.67, 2.71, 2.74, 2.77, 2.80, 2.84, 2.87, 2.91, 2.94, 2.98, 3.01, 3.05, 3.09, 3.12,
    3.16, 3.20, 3.24, 3.28, 3.32, 3.36, 3.40, 3.44, 3.48, 3.52, 3.57, 3.61, 3.65, 3.70, 3.74, 3.79,
    3.83, 3.88, 3.92, 3.97, 4.02, 4.07, 4.12, 4.17, 4.22, 4.27, 4.32, 4.37, 4.42, 4.48, 4.53, 4.59,
    4.64, 4.70, 4.75, 4.81, 4.87, 4.93, 4.99, 5.05, 5.11, 5.17, 5.23, 5.30, 5.36, 5.42, 5.49, 5.56,
    5.62, 5.69, 5.76, 5.83, 5.90, 5.97, 6.04, 6.12, 6.19, 6.26, 6.34, 6.42, 6.49, 6.57, 6.65, 6.73,
    6.81, 6.90, 6.98, 7.06, 7.15, 7.23, 7.32, 7.41, 7.50, 7.59, 7.68, 7.77, 7.87, 7.96, 8.06, 8.16,
    8.25, 8.35, 8.45, 8.56, 8.66, 8.76, 8.87, 8.98, 9.09, 9.20, 9.31, 9.42, 9.53, 9.65, 9.76, 9.88};

void require_positive(double value) {
  if (!(value > 0) || !std::isfinite(value))
    throw std::invalid_argument("a preferred value needs a finite value > 0");
}

}  // namespace

std::string_view series_name(ESeries series) {
  switch (series) {
    case ESeries::E6:
      return "E6";
    case ESeries::E12:
      return "E12";
    case ESeries::E24:
      return "E24";
    case ESeries::E48:
      return "E48";
    case ESeries::E96:
      return "E96";
    case ESeries::E192:
      break;
  }
  return "E192";
}

std::span<const double> series_values(ESeries series) {
  switch (series) {
    case ESeries::E6:
      return kE6;
    case ESeries::E12:
      return kE12;
    case ESeries::E24:
      return kE24;
    case ESeries::E48:
      return kE48;
    case ESeries::E96:
      return kE96;
    case ESeries::E192:
      break;
  }
  return kE192;
}

PreferredValue nearest_preferred(double value, ESeries series) {
  require_positive(value);
  const double decade = std::pow(10.0, std::floor(std::log10(value)));
  // Candidates: this decade's members, the top of the decade below (the mantissa may sit
  // just under 1 by rounding) and the first member of the next decade.
  const std::span<const double> members = series_values(series);
  double best = 0, best_distance = std::numeric_limits<double>::infinity();
  for (double scale : {decade / 10, decade, decade * 10}) {
    for (double m : members) {
      const double candidate = m * scale;
      const double distance = std::abs(std::log(value / candidate));
      if (distance < best_distance - 1e-12) {
        best = candidate;
        best_distance = distance;
      }
    }
  }
  return {best, 100.0 * (value - best) / best};
}

std::optional<ESeries> smallest_series_of(double value) {
  require_positive(value);
  for (ESeries s :
       {ESeries::E6, ESeries::E12, ESeries::E24, ESeries::E48, ESeries::E96, ESeries::E192}) {
    const PreferredValue p = nearest_preferred(value, s);
    if (std::abs(value - p.value) <= 1e-6 * p.value) return s;
  }
  return std::nullopt;
}

}  // namespace tb::dsp
