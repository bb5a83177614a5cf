#include "dsp/part_spec.hpp"

#include <algorithm>
#include <array>
#include <charconv>
#include <cmath>
#include <cstddef>
#include <map>
#include <numbers>
#include <optional>
#include <span>
#include <utility>
#include <vector>

namespace tb::dsp {

namespace {

// ---------------------------------------------------------------------------------------
// Text helpers

std::string lower(std::string_view s) {
  std::string out(s);
  for (char& c : out)
    if (c >= 'A' && c <= 'Z') c = static_cast<char>(c - 'A' + 'a');
  return out;
}

bool is_digit(char c) {
  return c >= '0' && c <= '9';
}
bool is_ascii_letter(char c) {
  return (c >= 'a' && c <= 'z') || (c >= 'A' && c <= 'Z');
}
bool is_space(char c) {
  return c == ' ' || c == '\t' || c == '\r' || c == '\n' || c == '\v' || c == '\f';
}

/// 1-based column of byte offset `at`, counting characters: a "µ" is two bytes but one
/// column, as the technician sees it.
int column_of(std::string_view text, std::size_t at) {
  int col = 1;
  for (std::size_t i = 0; i < at && i < text.size(); ++i)
    if ((static_cast<unsigned char>(text[i]) & 0xC0) != 0x80) ++col;
  return col;
}

std::string quote(std::string_view s) {
  return "'" + std::string(s) + "'";
}

std::string join(const std::vector<std::string>& words, std::string_view sep) {
  std::string out;
  for (std::size_t i = 0; i < words.size(); ++i) {
    if (i > 0) out += sep;
    out += words[i];
  }
  return out;
}

/// Does the text start like a number ("6.8u", "-1", "+.5", ".5")?
bool looks_numeric(std::string_view s) {
  std::size_t i = 0;
  if (i < s.size() && (s[i] == '+' || s[i] == '-')) ++i;
  if (i < s.size() && is_digit(s[i])) return true;
  return i + 1 < s.size() && s[i] == '.' && is_digit(s[i + 1]);
}

/// A mantissa read with from_chars and the text after it.
struct NumberText {
  bool ok = false;
  bool overflow = false;
  double mantissa = 0;
  std::string_view rest;
};

NumberText split_number(std::string_view s) {
  NumberText out;
  if (!looks_numeric(s)) return out;
  std::size_t start = s[0] == '+' ? 1 : 0;  // from_chars takes '-' but not '+'
  if (start == 1 && s.size() > 1 && s[1] == '-') return out;
  const auto [end, ec] = std::from_chars(s.data() + start, s.data() + s.size(), out.mantissa);
  if (ec == std::errc::result_out_of_range) {
    out.overflow = true;
    return out;
  }
  if (ec != std::errc()) return out;
  out.ok = true;
  out.rest = s.substr(static_cast<std::size_t>(end - s.data()));
  return out;
}

/// A marking code such as 4n7, 4R7, µ47 or 2k2 (IEC 60062 "RKM": the letter is the decimal
/// point), turned into the decimal form we read ("4.7n", "4.7", "0.47µ", "2.2k"); empty when
/// the text is not one.
std::string marking_code_fix(std::string_view s) {
  static constexpr std::array<std::string_view, 11> letters{"p", "n", "u", "µ", "m", "k",
                                                            "K", "M", "G", "R", "r"};
  std::size_t digits_before = 0;
  while (digits_before < s.size() && is_digit(s[digits_before]))
    ++digits_before;
  for (std::string_view letter : letters) {
    if (s.substr(digits_before, letter.size()) != letter) continue;
    const std::string_view after = s.substr(digits_before + letter.size());
    if (after.empty() || !std::all_of(after.begin(), after.end(), is_digit)) continue;
    const std::string prefix = (letter == "R" || letter == "r") ? "" : std::string(letter);
    const std::string whole = digits_before == 0 ? "0" : std::string(s.substr(0, digits_before));
    return whole + "." + std::string(after) + prefix;
  }
  return {};
}

// ---------------------------------------------------------------------------------------
// Units, prefixes and how values are written back

enum class Unit { none, farad, henry, ohm, volt, ampere, hertz };

struct UnitInfo {
  std::string_view symbol;
  std::string_view quantity;  ///< "a capacitance"
  std::string_view in_words;  ///< "farads"
};

UnitInfo unit_info(Unit u) {
  switch (u) {
    case Unit::farad:
      return {"F", "a capacitance", "farads"};
    case Unit::henry:
      return {"H", "an inductance", "henries"};
    case Unit::ohm:
      return {"Ω", "a resistance", "ohms"};
    case Unit::volt:
      return {"V", "a voltage", "volts"};
    case Unit::ampere:
      return {"A", "a current", "amperes"};
    case Unit::hertz:
      return {"Hz", "a frequency", "hertz"};
    case Unit::none:
      break;
  }
  return {"", "a plain number", "no unit"};
}

std::optional<Unit> match_unit(std::string_view s) {
  const std::string l = lower(s);
  if (l == "f") return Unit::farad;
  if (l == "h") return Unit::henry;
  if (l == "ohm" || l == "ohms" || s == "Ω" || s == "Ω") return Unit::ohm;
  if (l == "v") return Unit::volt;
  if (l == "a") return Unit::ampere;
  if (l == "hz") return Unit::hertz;
  return std::nullopt;
}

/// What follows the digits in the expression language: [prefix][unit].
struct Suffix {
  bool ok = false;
  double scale = 1;
  std::string_view prefix;
  std::optional<Unit> unit;
};

Suffix read_suffix(std::string_view s) {
  if (s.empty()) return {true, 1, {}, std::nullopt};
  if (auto u = match_unit(s)) return {true, 1, {}, u};
  struct Prefix {
    std::string_view text;
    double scale;
  };
  // "meg" (any case) before "m"/"M"; the single letters are case-sensitive: m is milli,
  // M is mega, as in SI.
  if (s.size() >= 3 && lower(s.substr(0, 3)) == "meg") {
    const std::string_view rest = s.substr(3);
    if (rest.empty()) return {true, 1e6, s.substr(0, 3), std::nullopt};
    if (auto u = match_unit(rest)) return {true, 1e6, s.substr(0, 3), u};
    return {};
  }
  static constexpr std::array<Prefix, 10> prefixes{{{"p", 1e-12},
                                                    {"n", 1e-9},
                                                    {"u", 1e-6},
                                                    {"µ", 1e-6},  // micro sign U+00B5
                                                    {"μ", 1e-6},  // Greek mu U+03BC
                                                    {"m", 1e-3},
                                                    {"k", 1e3},
                                                    {"K", 1e3},
                                                    {"M", 1e6},
                                                    {"G", 1e9}}};
  for (const Prefix& p : prefixes) {
    if (!s.starts_with(p.text)) continue;
    const std::string_view rest = s.substr(p.text.size());
    if (rest.empty()) return {true, p.scale, p.text, std::nullopt};
    if (auto u = match_unit(rest)) return {true, p.scale, p.text, u};
    return {};
  }
  return {};
}

/// Shortest decimal text of x with at most `precision` significant digits, or nullopt when
/// it needs an exponent.
std::optional<std::string> plain_decimal(double x, int precision) {
  std::array<char, 64> buf{};
  const auto [end, ec] =
      std::to_chars(buf.data(), buf.data() + buf.size(), x, std::chars_format::general, precision);
  if (ec != std::errc()) return std::nullopt;
  std::string s(buf.data(), end);
  if (s.find('e') != std::string::npos) return std::nullopt;
  return s;
}

std::string shortest(double x) {
  std::array<char, 64> buf{};
  const auto [end, ec] = std::to_chars(buf.data(), buf.data() + buf.size(), x);
  return ec == std::errc() ? std::string(buf.data(), end) : std::string("?");
}

/// A value as the expression language writes it: "6.8µF", "20mΩ", "70.7Hz", "4.27". The
/// shortest mantissa whose reading lands within 1e-15 of the value, so that the text reads
/// back to the same netlist and stays the same when written again.
std::string format_value(double v, Unit unit) {
  const std::string symbol(unit_info(unit).symbol);
  if (unit == Unit::none || v == 0 || !std::isfinite(v)) return shortest(v) + symbol;
  struct Prefix {
    double scale;
    std::string_view text;
  };
  static constexpr std::array<Prefix, 8> table{{{1e9, "G"},
                                                {1e6, "M"},
                                                {1e3, "k"},
                                                {1, ""},
                                                {1e-3, "m"},
                                                {1e-6, "µ"},
                                                {1e-9, "n"},
                                                {1e-12, "p"}}};
  const double a = std::abs(v);
  const Prefix* chosen = &table.back();
  for (const Prefix& p : table) {
    if (a >= p.scale) {
      chosen = &p;
      break;
    }
  }
  for (int precision = 1; precision <= 17; ++precision) {
    const auto text = plain_decimal(v / chosen->scale, precision);
    if (!text) continue;
    double back = 0;
    std::from_chars(text->data(), text->data() + text->size(), back);
    if (std::abs(back * chosen->scale - v) <= 1e-15 * a)
      return *text + std::string(chosen->text) + symbol;
  }
  return shortest(v) + symbol;
}

/// A value for a message: four significant digits, "15.92kF".
std::string display_value(double v, Unit unit) {
  std::array<char, 64> buf{};
  const double rounded = [&] {
    const auto [end, ec] =
        std::to_chars(buf.data(), buf.data() + buf.size(), v, std::chars_format::general, 4);
    double r = v;
    if (ec == std::errc()) std::from_chars(buf.data(), end, r);
    return r;
  }();
  return format_value(rounded, unit);
}

// ---------------------------------------------------------------------------------------
// Limits shared by both forms. Values outside are not parts a technician puts on the
// bench, and most of them are a slipped prefix ("esl 15" for 15 nH).

struct Range {
  double min;  ///< smallest magnitude allowed (when not zero)
  double max;
  bool zero_means_none = false;
  bool negative_ok = false;
};

constexpr Range kResistor{1e-6, 1e9};
constexpr Range kInductor{1e-12, 1e3};
constexpr Range kCapacitor{1e-15, 1.0};
constexpr Range kCharge{0, 1000, true, true};

Range element_range(ElementKind k) {
  switch (k) {
    case ElementKind::resistor:
      return kResistor;
    case ElementKind::inductor:
      return kInductor;
    case ElementKind::capacitor:
      return kCapacitor;
    case ElementKind::voltage_source:
      break;
  }
  return {0, 1000, true, true};
}

Unit element_unit(ElementKind k) {
  switch (k) {
    case ElementKind::resistor:
      return Unit::ohm;
    case ElementKind::inductor:
      return Unit::henry;
    case ElementKind::capacitor:
      return Unit::farad;
    case ElementKind::voltage_source:
      break;
  }
  return Unit::volt;
}

bool in_range(double v, const Range& r) {
  if (!std::isfinite(v)) return false;
  if (v == 0) return r.zero_means_none;
  if (v < 0 && !r.negative_ok) return false;
  // A hair of slack at the edges so that "0.001p" reaches the 1 fF limit however the
  // product rounds.
  return std::abs(v) >= r.min * (1 - 1e-12) && std::abs(v) <= r.max * (1 + 1e-12);
}

/// "lies between 1µΩ and 1MΩ (0 for none)"
std::string range_text(const Range& r, Unit unit) {
  std::string s;
  if (r.negative_ok)
    s = "lies between " + format_value(-r.max, unit) + " and " + format_value(r.max, unit);
  else
    s = "lies between " + format_value(r.min, unit) + " and " + format_value(r.max, unit);
  if (r.zero_means_none && !r.negative_ok) s += " (0 for none)";
  return s;
}

/// Extra advice for a value that is out of range because of a likely slip of the prefix.
std::string prefix_advice(std::string_view written, double v, const Range& r) {
  const std::string_view digits_end =
      written.substr(std::min(written.size(), written.find_first_not_of("+-.0123456789eE")));
  if (std::abs(v) > r.max && digits_end.starts_with("M") && !digits_end.starts_with("Meg"))
    return " (M is mega; for milli write m)";
  return {};
}

// ---------------------------------------------------------------------------------------
// The expression language: words of each part

struct AttrSpec {
  std::string_view name;
  std::string_view alias;  ///< second spelling, or empty
  Unit unit;
  Range range;
  bool required;
  std::string_view what;     ///< "an ESR"
  std::string_view example;  ///< a typical value, "0.02"
};

enum class Form { cap, coil, res, driver, series, parallel };

struct FormSpec {
  Form form;
  std::array<std::string_view, 3> words;  ///< canonical first
  std::string_view kind;
  std::string_view a_part;  ///< "a capacitor"
  bool has_main;
  Unit main_unit;
  Range main_range;
  std::span<const AttrSpec> attrs;
  std::string_view example;
};

constexpr std::array<AttrSpec, 4> kCapAttrs{{
    {"esr", "", Unit::ohm, {1e-6, 1e6, true}, false, "an ESR", "0.02"},
    {"esl", "", Unit::henry, {1e-12, 1e-3, true}, false, "an ESL", "15n"},
    {"leak", "", Unit::ohm, {1e-6, 1e9, true}, false, "a leakage resistance", "10M"},
    {"charged", "", Unit::volt, kCharge, false, "a charge", "35"},
}};
constexpr std::array<AttrSpec, 3> kCoilAttrs{{
    {"r", "dcr", Unit::ohm, {1e-6, 1e6, true}, false, "a winding resistance", "0.42"},
    {"cp", "", Unit::farad, {1e-15, 1e-6, true}, false, "a self-capacitance", "80p"},
    {"sat", "", Unit::ampere, {1e-6, 1e3, true}, false, "a saturation current", "2.5"},
}};
constexpr std::array<AttrSpec, 2> kResAttrs{{
    {"ls", "", Unit::henry, {1e-12, 1e-3, true}, false, "a series inductance", "2u"},
    {"cp", "", Unit::farad, {1e-15, 1e-6, true}, false, "a parallel capacitance", "1p"},
}};
constexpr std::array<AttrSpec, 5> kDriverAttrs{{
    {"re", "", Unit::ohm, {1e-3, 1e3}, true, "Re (voice-coil resistance)", "6"},
    {"le", "", Unit::henry, {1e-12, 0.1, true}, false, "Le (voice-coil inductance)", "0.5m"},
    {"fs", "", Unit::hertz, {1, 2e4}, true, "fs (free-air resonance)", "70.7"},
    {"qms", "", Unit::none, {0.01, 100}, true, "Qms", "4.27"},
    {"qes", "", Unit::none, {0.01, 100}, true, "Qes", "0.34"},
}};
constexpr std::size_t kMaxAttrs = 5;

const std::array<FormSpec, 4>& simple_forms() {
  static const std::array<FormSpec, 4> forms{{
      {Form::cap,
       {"cap", "capacitor", ""},
       "capacitor",
       "a capacitor",
       true,
       Unit::farad,
       kCapacitor,
       kCapAttrs,
       "cap 6.8u esr 0.02"},
      {Form::coil,
       {"coil", "inductor", "choke"},
       "inductor",
       "a coil",
       true,
       Unit::henry,
       kInductor,
       kCoilAttrs,
       "coil 1.5m r 0.42"},
      {Form::res,
       {"res", "resistor", ""},
       "resistor",
       "a resistor",
       true,
       Unit::ohm,
       kResistor,
       kResAttrs,
       "res 4.7 ls 2u"},
      {Form::driver,
       {"driver", "speaker", ""},
       "driver",
       "a driver",
       false,
       Unit::none,
       {},
       kDriverAttrs,
       "driver re 6 le 0.5m fs 70.7 qms 4.27 qes 0.34"},
  }};
  return forms;
}

const FormSpec* find_form(std::string_view word) {
  const std::string w = lower(word);
  for (const FormSpec& f : simple_forms())
    for (std::string_view name : f.words)
      if (!name.empty() && w == name) return &f;
  return nullptr;
}

bool is_combo_word(std::string_view word) {
  const std::string w = lower(word);
  return w == "series" || w == "parallel";
}

bool is_any_attr_word(std::string_view word) {
  const std::string w = lower(word);
  for (const FormSpec& f : simple_forms())
    for (const AttrSpec& a : f.attrs)
      if (w == a.name || (!a.alias.empty() && w == a.alias)) return true;
  return false;
}

std::string attr_list(const FormSpec& f) {
  std::vector<std::string> names;
  for (const AttrSpec& a : f.attrs)
    names.emplace_back(a.name);
  return join(names, ", ");
}

std::string example_value(Unit u) {
  switch (u) {
    case Unit::farad:
      return "6.8u or 6.8uF";
    case Unit::henry:
      return "1.5m or 1.5mH";
    case Unit::ohm:
      return "4.7, 100k or 4.7ohm";
    case Unit::volt:
      return "35 or 35V";
    case Unit::ampere:
      return "2.5 or 2.5A";
    case Unit::hertz:
      return "70.7 or 70.7Hz";
    case Unit::none:
      break;
  }
  return "4.27";
}

/// A part as read, before it becomes elements.
struct Parsed {
  Form form = Form::cap;
  const FormSpec* spec = nullptr;  ///< null for series/parallel
  std::size_t at = 0;              ///< byte offset of its first word
  std::string_view word;
  double main = 0;
  std::array<double, kMaxAttrs> attr{};
  std::array<bool, kMaxAttrs> given{};
  std::vector<Parsed> children;
};

struct DriverAnalogue {
  double res_ohm, ces_f, les_h;
};

/// Thiele/Small electrical analogue of the moving mass, compliance and losses (Thiele 1961,
/// Small 1972): Res = Re Qms/Qes, Ces = Qes/(2 pi fs Re), Les = 1/((2 pi fs)^2 Ces).
DriverAnalogue driver_analogue(double re, double fs, double qms, double qes) {
  const double w = 2.0 * std::numbers::pi * fs;
  const double ces = qes / (w * re);
  return {re * qms / qes, ces, 1.0 / (w * w * ces)};
}

class ExprParser {
 public:
  explicit ExprParser(std::string_view text) : text_(text) { tokenize(); }

  Parsed parse() {
    if (tokens_.front().kind == Tok::end)
      fail("part.empty", 0,
           "no part given at column 1: write a part such as cap 6.8u esr 0.02, coil 1.5m r "
           "0.42 or series(cap 1u, res 10)");
    Parsed p = parse_one(0);
    const Token& t = peek();
    switch (t.kind) {
      case Tok::end:
        break;
      case Tok::close:
        fail("part.unbalanced", t.at, "')' at column " + col(t.at) + " closes no '(': remove it");
      case Tok::comma:
        fail("part.syntax", t.at,
             "',' at column " + col(t.at) +
                 " lies outside series(...) or parallel(...): join parts as series(cap 1u, "
                 "res 10)");
      default:
        fail("part.syntax", t.at,
             quote(t.text) + " at column " + col(t.at) +
                 " follows a complete part: join two parts with series(...) or parallel(...), "
                 "e.g. series(cap 1u, res 10)");
    }
    return p;
  }

 private:
  enum class Tok { word, open, close, comma, equals, end };
  struct Token {
    Tok kind;
    std::string_view text;
    std::size_t at;
  };

  void tokenize() {
    std::size_t i = 0;
    while (i < text_.size()) {
      const char c = text_[i];
      if (is_space(c)) {
        ++i;
        continue;
      }
      if (c == '(' || c == ')' || c == ',' || c == '=') {
        const Tok k = c == '('   ? Tok::open
                      : c == ')' ? Tok::close
                      : c == ',' ? Tok::comma
                                 : Tok::equals;
        tokens_.push_back({k, text_.substr(i, 1), i});
        ++i;
        continue;
      }
      const std::size_t start = i;
      while (i < text_.size() && !is_space(text_[i]) && text_[i] != '(' && text_[i] != ')' &&
             text_[i] != ',' && text_[i] != '=')
        ++i;
      tokens_.push_back({Tok::word, text_.substr(start, i - start), start});
    }
    tokens_.push_back({Tok::end, {}, text_.size()});
  }

  const Token& peek() const { return tokens_[pos_]; }
  const Token& next() { return tokens_[pos_ < tokens_.size() - 1 ? pos_++ : pos_]; }

  std::string col(std::size_t at) const { return std::to_string(column_of(text_, at)); }

  [[noreturn]] void fail(const std::string& id, std::size_t at, const std::string& message) const {
    throw PartSpecError(id, message, 0, column_of(text_, at));
  }

  Parsed parse_one(int depth) {
    const Token t = next();
    switch (t.kind) {
      case Tok::end:
        fail("part.missing_value", t.at,
             "a part is missing at column " + col(t.at) +
                 " (end of text): write one such as cap 6.8u");
      case Tok::open:
        fail("part.syntax", t.at,
             "'(' at column " + col(t.at) +
                 " needs series or parallel before it, e.g. series(cap 1u, res 10)");
      case Tok::close:
        fail("part.unbalanced", t.at, "')' at column " + col(t.at) + " closes no '(': remove it");
      case Tok::comma:
        fail("part.syntax", t.at,
             "',' at column " + col(t.at) + " has no part before it: remove it or add a part");
      case Tok::equals:
        fail("part.syntax", t.at,
             "'=' at column " + col(t.at) + " needs a word before it, e.g. esr=0.02");
      case Tok::word:
        break;
    }
    if (is_combo_word(t.text)) return parse_combo(t, depth);
    if (const FormSpec* f = find_form(t.text)) return parse_simple(*f, t, depth);
    if (looks_numeric(t.text))
      fail("part.syntax", t.at,
           quote(t.text) + " at column " + col(t.at) +
               " is a value without a part: start with cap, coil, res or driver, e.g. cap " +
               std::string(t.text));
    if (is_any_attr_word(t.text))
      fail("part.syntax", t.at,
           quote(t.text) + " at column " + col(t.at) +
               " belongs after a part: write e.g. cap 6.8u esr 0.02 or coil 1.5m r 0.42");
    fail("part.unknown_word", t.at,
         "unknown word " + quote(t.text) + " at column " + col(t.at) +
             ": a part starts with cap, coil, res, driver, series( or parallel(");
  }

  Parsed parse_combo(const Token& word, int depth) {
    Parsed p;
    p.form = lower(word.text) == "series" ? Form::series : Form::parallel;
    p.at = word.at;
    p.word = word.text;
    const std::string name = lower(word.text);
    const Token open = next();
    if (open.kind != Tok::open)
      fail("part.syntax", word.at,
           quote(word.text) + " at column " + col(word.at) + " needs '(' right after it: " + name +
               "(cap 1u, res 10)");
    auto unclosed = [&] {
      fail("part.unbalanced", open.at,
           "'(' at column " + col(open.at) + " is never closed: end the list with ')'");
    };
    if (peek().kind == Tok::close)
      fail("part.syntax", word.at,
           name + "() at column " + col(word.at) + " is empty: list two or more parts, e.g. " +
               name + "(cap 1u, res 10)");
    if (peek().kind == Tok::end) unclosed();
    p.children.push_back(parse_one(depth + 1));
    for (;;) {
      const Token t = next();
      if (t.kind == Tok::close) break;
      if (t.kind == Tok::end) unclosed();
      if (t.kind == Tok::comma) {
        if (peek().kind == Tok::end) unclosed();
        if (peek().kind == Tok::close)
          fail("part.syntax", t.at,
               "',' at column " + col(t.at) + " is followed by no part: remove it or add one");
        p.children.push_back(parse_one(depth + 1));
        continue;
      }
      fail("part.syntax", t.at,
           quote(t.text) + " at column " + col(t.at) +
               " follows a complete part: separate the parts with ','");
    }
    if (p.children.size() < 2)
      fail("part.syntax", word.at,
           name + "( at column " + col(word.at) +
               " holds one part: list two or more, separated by ',', e.g. " + name +
               "(cap 1u, res 10)");
    return p;
  }

  /// Reads one value (the token at the cursor, plus a unit written apart: "6.8 uF").
  /// Returns the value and the written text's byte span.
  struct Value {
    double v;
    std::size_t from, to;
  };

  Value read_value(Unit unit, std::string_view whose) {
    const Token t = next();
    const std::string c = col(t.at);
    const NumberText n = split_number(t.text);
    auto not_a_number = [&](std::string_view written) {
      const std::string fix = marking_code_fix(written);
      if (!fix.empty())
        fail("part.bad_number", t.at,
             quote(written) + " at column " + c + " is a marking code, not a number: write " + fix);
      fail("part.bad_number", t.at,
           quote(written) + " at column " + c + " is not " + std::string(unit_info(unit).quantity) +
               (unit == Unit::none ? ""
                                   : " (digits, then a prefix p n u µ m k M G and " +
                                         std::string(unit_info(unit).in_words) + ")") +
               ": " + std::string(whose) + " is written like " + example_value(unit));
    };
    if (n.overflow)
      fail("part.bad_number", t.at,
           quote(t.text) + " at column " + c + " is too large to be a number: write e.g. " +
               example_value(unit));
    if (!n.ok) not_a_number(t.text);
    Suffix s = read_suffix(n.rest);
    if (!s.ok) not_a_number(t.text);
    std::size_t to = t.at + t.text.size();
    // A unit written apart from the number: "6.8 uF", "4.7 kohm", "10 ohm".
    if (!s.unit && peek().kind == Tok::word) {
      const Token u = peek();
      const Suffix su = read_suffix(u.text);
      if (su.ok && !looks_numeric(u.text) && !find_form(u.text) && !is_combo_word(u.text) &&
          !is_any_attr_word(u.text)) {
        if (!su.unit)
          fail("part.bad_number", u.at,
               quote(u.text) + " at column " + col(u.at) +
                   " is a prefix on its own: write it against the number, e.g. " +
                   std::string(t.text) + std::string(u.text));
        if (!s.prefix.empty() && !su.prefix.empty())
          fail("part.bad_number", u.at,
               quote(std::string(t.text) + " " + std::string(u.text)) + " at column " + c +
                   " has two prefixes: keep one, e.g. " + example_value(unit));
        next();
        s.scale *= su.scale;
        s.prefix = s.prefix.empty() ? su.prefix : s.prefix;
        s.unit = su.unit;
        to = u.at + u.text.size();
      }
    }
    const std::string_view written = text_.substr(t.at, to - t.at);
    if (s.unit && *s.unit != unit) {
      if (unit == Unit::none)
        fail("part.wrong_unit", t.at,
             quote(written) + " at column " + c + " carries a unit, but " + std::string(whose) +
                 " is a plain number: write it without one, e.g. " + example_value(unit));
      fail("part.wrong_unit", t.at,
           quote(written) + " at column " + c + " is " + std::string(unit_info(*s.unit).quantity) +
               ", but " + std::string(whose) + " is " + std::string(unit_info(unit).quantity) +
               ": write it in " + std::string(unit_info(unit).in_words) + ", e.g. " +
               example_value(unit));
    }
    const double v = n.mantissa * s.scale;
    if (!std::isfinite(v))
      fail("part.bad_number", t.at, quote(written) + " at column " + c + " is not a finite number");
    return {v, t.at, to};
  }

  void check_range(const Value& v, const Range& r, Unit unit, std::string_view what) const {
    if (in_range(v.v, r)) return;
    const std::string_view written = text_.substr(v.from, v.to - v.from);
    fail("part.out_of_range", v.from,
         quote(written) + " at column " + col(v.from) + " is out of range: " + std::string(what) +
             " " + range_text(r, unit) + prefix_advice(written, v.v, r));
  }

  Parsed parse_simple(const FormSpec& f, const Token& word, int depth) {
    Parsed p;
    p.form = f.form;
    p.spec = &f;
    p.at = word.at;
    p.word = word.text;
    if (f.has_main) {
      const Token& t = peek();
      const bool value_next = t.kind == Tok::word && !find_form(t.text) && !is_combo_word(t.text) &&
                              !std::any_of(f.attrs.begin(), f.attrs.end(), [&](const AttrSpec& a) {
                                const std::string w = lower(t.text);
                                return w == a.name || (!a.alias.empty() && w == a.alias);
                              });
      if (!value_next)
        fail("part.missing_value", word.at,
             quote(word.text) + " at column " + col(word.at) + " needs its value next: " +
                 std::string(f.a_part) + " is written like " + std::string(f.example));
      const Value v = read_value(f.main_unit, std::string(f.a_part) + "'s value");
      check_range(v, f.main_range, f.main_unit, std::string(f.a_part) + "'s value");
      p.main = v.v;
    }
    std::array<std::size_t, kMaxAttrs> first_at{};
    while (peek().kind == Tok::word) {
      const Token t = next();
      const std::string w = lower(t.text);
      std::size_t index = f.attrs.size();
      for (std::size_t i = 0; i < f.attrs.size(); ++i)
        if (w == f.attrs[i].name || (!f.attrs[i].alias.empty() && w == f.attrs[i].alias)) index = i;
      if (index == f.attrs.size()) {
        if (find_form(t.text) || is_combo_word(t.text))
          fail("part.syntax", t.at,
               quote(t.text) + " at column " + col(t.at) + " starts another part: " +
                   (depth > 0 ? std::string("separate the parts with ','")
                              : std::string("join two parts with series(...) or parallel(...), "
                                            "e.g. series(cap 1u, res 10)")));
        if (looks_numeric(t.text))
          fail("part.syntax", t.at,
               quote(t.text) + " at column " + col(t.at) +
                   " is a value with no word before it: " + std::string(f.a_part) + " takes " +
                   attr_list(f) + ", e.g. " + std::string(f.example));
        fail("part.unknown_word", t.at,
             "unknown word " + quote(t.text) + " at column " + col(t.at) + ": " +
                 std::string(f.a_part) + " takes " + attr_list(f));
      }
      const AttrSpec& a = f.attrs[index];
      if (p.given[index])
        fail("part.duplicate", t.at,
             quote(t.text) + " at column " + col(t.at) + " is given twice (first at column " +
                 col(first_at[index]) + "): keep one");
      if (peek().kind == Tok::equals) next();
      const Token& v = peek();
      const bool has_value = v.kind == Tok::word && !find_form(v.text) && !is_combo_word(v.text) &&
                             !is_any_attr_word(v.text);
      if (!has_value)
        fail("part.missing_value", t.at,
             quote(t.text) + " at column " + col(t.at) + " needs a value after it, e.g. " +
                 std::string(a.name) + " " + std::string(a.example));
      const Value value = read_value(a.unit, a.name);
      check_range(value, a.range, a.unit, a.what);
      p.attr[index] = value.v;
      p.given[index] = true;
      first_at[index] = t.at;
    }
    if (peek().kind == Tok::equals)
      fail("part.syntax", peek().at,
           "'=' at column " + col(peek().at) + " must follow a word such as esr: esr=0.02");
    if (f.form == Form::driver) check_driver(p, f);
    return p;
  }

  void check_driver(const Parsed& p, const FormSpec& f) const {
    std::vector<std::string> missing;
    for (std::size_t i = 0; i < f.attrs.size(); ++i)
      if (f.attrs[i].required && !p.given[i]) missing.emplace_back(f.attrs[i].name);
    if (!missing.empty())
      fail("part.missing_value", p.at,
           quote(p.word) + " at column " + col(p.at) + " lacks " + join(missing, ", ") +
               ": a driver needs re, fs, qms and qes (le is optional), e.g. " +
               std::string(f.example));
    const DriverAnalogue d = driver_analogue(p.attr[0], p.attr[2], p.attr[3], p.attr[4]);
    const std::array<std::pair<double, ElementKind>, 3> parts{{{d.res_ohm, ElementKind::resistor},
                                                               {d.ces_f, ElementKind::capacitor},
                                                               {d.les_h, ElementKind::inductor}}};
    const std::array<std::string_view, 3> names{"Res", "Ces", "Les"};
    for (std::size_t i = 0; i < parts.size(); ++i) {
      const auto [value, kind] = parts[i];
      const Range r = element_range(kind);
      if (in_range(value, r)) continue;
      fail("part.out_of_range", p.at,
           quote(p.word) + " at column " + col(p.at) + " gives " + std::string(names[i]) + " = " +
               display_value(value, element_unit(kind)) + ", which " +
               range_text(r, element_unit(kind)).replace(0, 4, "does not lie") +
               ": check re, fs, qms and qes");
    }
  }

  std::string_view text_;
  std::vector<Token> tokens_;
  std::size_t pos_ = 0;
};

// ---------------------------------------------------------------------------------------
// From a parsed part to elements and to its canonical text

class Builder {
 public:
  Netlist netlist;

  void build(const Parsed& p, const std::string& hot, const std::string& cold) {
    switch (p.form) {
      case Form::series: {
        std::string a = hot;
        for (std::size_t i = 0; i < p.children.size(); ++i) {
          const std::string b = i + 1 == p.children.size() ? cold : new_node();
          build(p.children[i], a, b);
          a = b;
        }
        return;
      }
      case Form::parallel:
        for (const Parsed& c : p.children)
          build(c, hot, cold);
        return;
      case Form::cap:
      case Form::coil:
      case Form::res:
      case Form::driver:
        build_simple(p, hot, cold);
        return;
    }
  }

 private:
  int parts_ = 0;
  int nodes_ = 0;

  std::string new_node() { return "p_" + std::to_string(++nodes_); }

  Element& add(ElementKind kind, const std::string& name, const std::string& a,
               const std::string& b, double value) {
    return add_element(netlist, kind, name, a, b, value);
  }

  void build_simple(const Parsed& p, const std::string& hot, const std::string& cold) {
    const std::string k = std::to_string(++parts_);
    using EK = ElementKind;
    std::string a = hot;
    // One element in series from the current node to a new one.
    auto step = [&](EK kind, const std::string& name, double value) {
      const std::string b = new_node();
      add(kind, name, a, b, value);
      a = b;
    };
    switch (p.form) {
      case Form::cap: {
        const double esr = p.attr[0], esl = p.attr[1], leak = p.attr[2], charge = p.attr[3];
        if (esr != 0) step(EK::resistor, "R" + k + "_esr", esr);
        if (esl != 0) step(EK::inductor, "L" + k + "_esl", esl);
        add(EK::capacitor, "C" + k, a, cold, p.main).initial_voltage_v = charge;
        if (leak != 0) add(EK::resistor, "R" + k + "_leak", a, cold, leak);
        return;
      }
      case Form::coil: {
        const double r = p.attr[0], cp = p.attr[1], sat = p.attr[2];
        if (r != 0) {
          step(EK::inductor, "L" + k, p.main);
          netlist.elements.back().saturation_current_a = sat;
          add(EK::resistor, "R" + k + "_wind", a, cold, r);
        } else {
          add(EK::inductor, "L" + k, hot, cold, p.main).saturation_current_a = sat;
        }
        if (cp != 0) add(EK::capacitor, "C" + k + "_self", hot, cold, cp);
        return;
      }
      case Form::res: {
        const double ls = p.attr[0], cp = p.attr[1];
        if (ls != 0) {
          step(EK::resistor, "R" + k, p.main);
          add(EK::inductor, "L" + k + "_ser", a, cold, ls);
        } else {
          add(EK::resistor, "R" + k, hot, cold, p.main);
        }
        if (cp != 0) add(EK::capacitor, "C" + k + "_par", hot, cold, cp);
        return;
      }
      case Form::driver: {
        const double re = p.attr[0], le = p.attr[1];
        const DriverAnalogue d = driver_analogue(re, p.attr[2], p.attr[3], p.attr[4]);
        step(EK::resistor, "R" + k + "_re", re);
        if (le != 0) step(EK::inductor, "L" + k + "_le", le);
        add(EK::resistor, "R" + k + "_es", a, cold, d.res_ohm);
        add(EK::capacitor, "C" + k + "_es", a, cold, d.ces_f);
        add(EK::inductor, "L" + k + "_es", a, cold, d.les_h);
        return;
      }
      case Form::series:
      case Form::parallel:
        return;
    }
  }
};

std::string canonical(const Parsed& p) {
  if (p.form == Form::series || p.form == Form::parallel) {
    std::vector<std::string> parts;
    for (const Parsed& c : p.children)
      parts.push_back(canonical(c));
    return std::string(p.form == Form::series ? "series(" : "parallel(") + join(parts, ", ") + ")";
  }
  const FormSpec& f = *p.spec;
  std::string s(f.words[0]);
  if (f.has_main) s += " " + format_value(p.main, f.main_unit);
  for (std::size_t i = 0; i < f.attrs.size(); ++i)
    if (p.given[i] && p.attr[i] != 0)
      s += " " + std::string(f.attrs[i].name) + " " + format_value(p.attr[i], f.attrs[i].unit);
  return s;
}

// ---------------------------------------------------------------------------------------
// Netlist text

char element_letter(ElementKind k) {
  switch (k) {
    case ElementKind::resistor:
      return 'R';
    case ElementKind::inductor:
      return 'L';
    case ElementKind::capacitor:
      return 'C';
    case ElementKind::voltage_source:
      break;
  }
  return 'V';
}

std::string summarize(const Netlist& n) {
  if (n.elements.empty()) return "empty netlist";
  if (n.elements.size() <= 4) {
    std::vector<std::string> parts;
    for (const Element& e : n.elements) {
      std::string s = e.name + " " + format_value(e.value, element_unit(e.kind));
      if (e.kind == ElementKind::capacitor && e.initial_voltage_v != 0)
        s += " charged " + format_value(e.initial_voltage_v, Unit::volt);
      parts.push_back(s);
    }
    return "netlist: " + join(parts, ", ");
  }
  std::map<char, int> count;
  for (const Element& e : n.elements)
    ++count[element_letter(e.kind)];
  std::vector<std::string> parts;
  for (char letter : {'R', 'L', 'C', 'V'})
    if (count[letter] > 0) parts.push_back(std::to_string(count[letter]) + " " + letter);
  return "netlist: " + std::to_string(n.elements.size()) + " elements (" + join(parts, ", ") + ")";
}

struct NetToken {
  std::string_view text;
  int line;
  int col;
};

[[noreturn]] void net_fail(const std::string& id, const NetToken& at, const std::string& what) {
  throw PartSpecError(id, what, at.line, at.col);
}

std::string where(const NetToken& t) {
  return "at line " + std::to_string(t.line) + " column " + std::to_string(t.col);
}

/// A SPICE value: number, then an optional scale (f p n u m k meg g t, and mil = 25.4e-6),
/// case-insensitive, then any letters, which SPICE ignores ("10uF" = 10u, "1Mohm" = 1 milli!).
double spice_value(const NetToken& t, ElementKind kind, std::string_view role) {
  const NumberText n = split_number(t.text);
  const std::string w = where(t);
  if (n.overflow)
    net_fail("part.bad_number", t,
             quote(t.text) + " " + w + " is too large to be a number: write e.g. 4.7k or 100n");
  if (!n.ok) {
    const std::string fix = marking_code_fix(t.text);
    net_fail(
        "part.bad_number", t,
        quote(t.text) + " " + w + " is not " + std::string(role) +
            (fix.empty() ? std::string(": write a SPICE number such as 4.7, 4.7k, 100n or 1meg")
                         : ": it is a marking code; write " + fix));
  }
  const std::string rest = lower(n.rest);
  if (!std::all_of(rest.begin(), rest.end(), is_ascii_letter)) {
    const std::string fix = marking_code_fix(t.text);
    net_fail("part.bad_number", t,
             quote(t.text) + " " + w + " is not a SPICE number" +
                 (!fix.empty() ? ": it is a marking code; write " + fix
                               : ": after the digits come only ASCII letters (scale f p n u m k "
                                 "meg g t, then any unit letters); write µ as u and leave Ω out"));
  }
  double scale = 1;
  if (rest.starts_with("meg"))
    scale = 1e6;
  else if (rest.starts_with("mil"))
    scale = 25.4e-6;
  else if (!rest.empty()) {
    switch (rest[0]) {
      case 't':
        scale = 1e12;
        break;
      case 'g':
        scale = 1e9;
        break;
      case 'k':
        scale = 1e3;
        break;
      case 'm':
        scale = 1e-3;
        break;
      case 'u':
        scale = 1e-6;
        break;
      case 'n':
        scale = 1e-9;
        break;
      case 'p':
        scale = 1e-12;
        break;
      case 'f':
        scale = 1e-15;
        break;
      default:
        break;
    }
  }
  if (kind == ElementKind::capacitor && rest == "f")
    net_fail("part.ambiguous_unit", t,
             quote(t.text) + " " + w + " reads as " + shortest(n.mantissa) +
                 " femtofarads in SPICE, not farads: write " + shortest(n.mantissa) +
                 " for farads, " + shortest(n.mantissa) + "u for microfarads, or " +
                 shortest(n.mantissa) + "fF if femtofarads are meant");
  return n.mantissa * scale;
}

struct NetLine {
  std::vector<NetToken> tokens;
};

struct NodeInfo {
  NetToken first;  ///< where the name first appears
  int degree = 0;
  std::vector<std::string> elements;
};

}  // namespace

PartSpec parse_part(std::string_view text) {
  ExprParser parser(text);
  const Parsed parsed = parser.parse();
  Builder b;
  b.build(parsed, "p", "n");
  PartSpec spec;
  spec.netlist = std::move(b.netlist);
  spec.kind = parsed.spec ? std::string(parsed.spec->kind) : "network";
  spec.description = canonical(parsed);
  return spec;
}

PartSpec parse_netlist(std::string_view text) {
  // Physical lines -> tokens; '*' comment lines, ';' comments, '+' continuations, '.end'.
  std::vector<NetLine> lines;
  int line_no = 0;
  std::size_t start = 0;
  NetToken last{{}, 1, 1};
  while (start <= text.size()) {
    const std::size_t nl = text.find('\n', start);
    const std::size_t stop = nl == std::string_view::npos ? text.size() : nl;
    std::string_view line = text.substr(start, stop - start);
    start = stop + 1;
    ++line_no;
    last = {{}, line_no, 1};
    if (const std::size_t semi = line.find(';'); semi != std::string_view::npos)
      line = line.substr(0, semi);
    std::vector<NetToken> toks;
    for (std::size_t i = 0; i < line.size();) {
      if (is_space(line[i])) {
        ++i;
        continue;
      }
      const std::size_t from = i;
      if (line[i] == '=') {
        ++i;
      } else {
        while (i < line.size() && !is_space(line[i]) && line[i] != '=')
          ++i;
      }
      toks.push_back({line.substr(from, i - from), line_no, column_of(line, from)});
    }
    if (toks.empty() || toks[0].text.starts_with("*")) continue;
    if (lower(toks[0].text) == ".end") break;
    if (toks[0].text.starts_with("+")) {
      if (lines.empty())
        net_fail("part.syntax", toks[0],
                 "'+' " + where(toks[0]) +
                     " continues a line, but no element line comes before it: remove the '+'");
      if (toks[0].text == "+") {
        toks.erase(toks.begin());
      } else {
        toks[0].text.remove_prefix(1);
        ++toks[0].col;
      }
      lines.back().tokens.insert(lines.back().tokens.end(), toks.begin(), toks.end());
      continue;
    }
    lines.push_back({std::move(toks)});
  }
  if (lines.empty())
    net_fail("part.empty", last,
             "the netlist holds no element (it ends at line " + std::to_string(last.line) +
                 " column 1): write lines such as R1 p x 0.42 and L1 x n 1.5m");

  PartSpec spec;
  std::map<std::string, NetToken> names;  // lower-case element name -> where
  std::map<std::string, NodeInfo> nodes;  // node name -> first use, degree
  for (const NetLine& l : lines) {
    const auto& t = l.tokens;
    const NetToken& name = t[0];
    const bool first_line = name.line == 1;
    if (name.text.starts_with("."))
      net_fail("part.unknown_word", name,
               quote(name.text) + " " + where(name) +
                   " is a command a part netlist does not take: it holds R, L and C lines and "
                   "an optional .end");
    const char letter = static_cast<char>(lower(name.text.substr(0, 1))[0]);
    ElementKind kind = ElementKind::resistor;
    std::string_view role;
    if (letter == 'r') {
      kind = ElementKind::resistor;
      role = "a resistance";
    } else if (letter == 'l') {
      kind = ElementKind::inductor;
      role = "an inductance";
    } else if (letter == 'c') {
      kind = ElementKind::capacitor;
      role = "a capacitance";
    } else {
      net_fail("part.unknown_word", name,
               quote(name.text) + " " + where(name) +
                   " is not an R, L or C element: a part netlist holds lines such as R1 p x "
                   "0.42, L1 x n 1.5m, C1 p n 10u" +
                   (first_line ? "; a title line must start with *" : ""));
    }
    if (t.size() < 4 || t[1].text == "=" || t[2].text == "=" || t[3].text == "=")
      net_fail("part.missing_value", name,
               quote(name.text) + " " + where(name) +
                   " needs two nodes and a value: " + std::string(name.text) + " p n " +
                   (kind == ElementKind::resistor   ? "4.7"
                    : kind == ElementKind::inductor ? "1.5m"
                                                    : "10u"));
    const std::string key = lower(name.text);
    if (auto it = names.find(key); it != names.end())
      net_fail("part.duplicate", name,
               quote(name.text) + " " + where(name) + " is named like the element at line " +
                   std::to_string(it->second.line) + ": give each element its own name");
    names.emplace(key, name);
    const std::string a = lower(t[1].text), b = lower(t[2].text);
    if (a == b)
      net_fail("part.bad_node", name,
               quote(name.text) + " " + where(name) + " joins node " + quote(t[1].text) +
                   " to itself: put it between two different nodes");
    Element e;
    e.kind = kind;
    e.name = std::string(name.text);
    e.node_p = a;
    e.node_n = b;
    e.value = spice_value(t[3], kind, role);
    const Range r = element_range(kind);
    if (!in_range(e.value, r))
      net_fail("part.out_of_range", t[3],
               quote(t[3].text) + " " + where(t[3]) + " is out of range: " + std::string(role) +
                   " " + range_text(r, element_unit(kind)) +
                   (kind == ElementKind::capacitor && e.value < r.min &&
                            lower(t[3].text).find('f') != std::string::npos
                        ? " (in SPICE f is femto)"
                        : ""));
    std::size_t i = 4;
    if (i < t.size() && lower(t[i].text) == "ic") {
      if (kind != ElementKind::capacitor)
        net_fail("part.unknown_word", t[i],
                 quote(t[i].text) + " " + where(t[i]) +
                     " sets a starting state, which only a "
                     "capacitor takes here (IC=volts): remove it");
      const NetToken& ic = t[i];
      ++i;
      if (i < t.size() && t[i].text == "=") ++i;
      if (i >= t.size())
        net_fail("part.missing_value", ic,
                 quote(ic.text) + " " + where(ic) + " needs a voltage: IC=35");
      e.initial_voltage_v = spice_value(t[i], ElementKind::voltage_source, "a voltage");
      if (!in_range(e.initial_voltage_v, kCharge))
        net_fail("part.out_of_range", t[i],
                 quote(t[i].text) + " " + where(t[i]) + " is out of range: a charge " +
                     range_text(kCharge, Unit::volt));
      ++i;
    }
    if (i < t.size())
      net_fail("part.unknown_word", t[i],
               quote(t[i].text) + " " + where(t[i]) + " does not belong on " +
                   (letter == 'r'   ? "an R"
                    : letter == 'l' ? "an L"
                                    : "a C") +
                   " line: it ends after the value" +
                   (kind == ElementKind::capacitor ? " and an optional IC=volts" : ""));
    for (const NetToken* node : {&t[1], &t[2]}) {
      const std::string n = lower(node->text);
      const auto it = nodes.try_emplace(n, NodeInfo{*node, 0, {}}).first;
      ++it->second.degree;
      it->second.elements.push_back(e.name);
    }
    spec.netlist.elements.push_back(std::move(e));
  }

  // Terminals: p/n, or 1/0 as in a SPICE deck.
  const NetToken& first = lines.front().tokens.front();
  const bool has_p = nodes.count("p") > 0, has_n = nodes.count("n") > 0;
  if (has_p || has_n) {
    if (!has_p || !has_n)
      net_fail("part.no_terminal", first,
               std::string("the netlist has node ") +
                   (has_p ? "p but no node n" : "n but no node p") + " (its elements start " +
                   where(first) + "): the part lies between nodes p (hot) and n (cold)");
    if (auto it = nodes.find("0"); it != nodes.end())
      net_fail("part.bad_node", it->second.first,
               "node '0' " + where(it->second.first) +
                   " is the bench ground: inside a part give it another name (the part's "
                   "terminals are p and n)");
  } else if (nodes.count("1") > 0 && nodes.count("0") > 0) {
    for (Element& e : spec.netlist.elements) {
      for (std::string* n : {&e.node_p, &e.node_n}) {
        if (*n == "1")
          *n = "p";
        else if (*n == "0")
          *n = "n";
      }
    }
    nodes["p"] = nodes["1"];
    nodes["n"] = nodes["0"];
    nodes.erase("1");
    nodes.erase("0");
  } else {
    net_fail("part.no_terminal", first,
             "the netlist has no terminal nodes (its elements start " + where(first) +
                 "): put the part between nodes p (hot) and n (cold), or 1 and 0");
  }

  // Every inner node must join two or more elements (one alone is usually a misspelt name),
  // and everything must hang together between p and n.
  for (const auto& [name, info] : nodes) {
    if (name == "p" || name == "n" || info.degree >= 2) continue;
    net_fail("part.dangling_node", info.first,
             "node " + quote(info.first.text) + " " + where(info.first) + " touches only " +
                 info.elements.front() +
                 ": a node inside a part joins two or more elements; check its spelling");
  }
  std::map<std::string, std::string> parent;
  auto find = [&](std::string x) {
    while (parent[x] != x)
      x = parent[x];
    return x;
  };
  for (const auto& entry : nodes)
    parent[entry.first] = entry.first;
  for (const Element& e : spec.netlist.elements)
    parent[find(e.node_p)] = find(e.node_n);
  if (find("p") != find("n"))
    net_fail("part.disconnected", nodes["p"].first,
             "no path of elements joins node p " + where(nodes["p"].first) +
                 " to node n: the part must connect p to n");
  for (const auto& [name, info] : nodes)
    if (find(name) != find("p"))
      net_fail("part.disconnected", info.first,
               "node " + quote(info.first.text) + " " + where(info.first) +
                   " has no path to p or n: connect it or remove its elements");

  // Kind and description: one element between p and n reads like the expression language.
  const auto& els = spec.netlist.elements;
  if (els.size() == 1) {
    const Element& e = els.front();
    switch (e.kind) {
      case ElementKind::capacitor:
        spec.kind = "capacitor";
        spec.description = "cap " + format_value(e.value, Unit::farad);
        break;
      case ElementKind::inductor:
        spec.kind = "inductor";
        spec.description = "coil " + format_value(e.value, Unit::henry);
        break;
      default:
        spec.kind = "resistor";
        spec.description = "res " + format_value(e.value, Unit::ohm);
        break;
    }
    // A charge is stated for the p side; an element written "C1 n p ..." flips its sign.
    const double v = e.node_p == "p" ? e.initial_voltage_v : -e.initial_voltage_v;
    if (v != 0) spec.description += " charged " + format_value(v, Unit::volt);
  } else {
    spec.kind = "network";
    spec.description = summarize(spec.netlist);
  }
  return spec;
}

std::string describe(const PartSpec& spec) {
  return spec.description.empty() ? summarize(spec.netlist) : spec.description;
}

}  // namespace tb::dsp
