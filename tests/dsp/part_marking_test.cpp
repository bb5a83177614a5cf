#include "dsp/part_marking.hpp"

#include <catch2/catch.hpp>

#include <cmath>
#include <optional>
#include <string>
#include <vector>

using tb::dsp::ESeries;
using tb::dsp::format_si;
using tb::dsp::MarkingError;
using tb::dsp::nearest_preferred;
using tb::dsp::parse_marking;
using tb::dsp::PartKind;
using tb::dsp::PartMarking;
using tb::dsp::series_values;
using tb::dsp::smallest_series_of;

namespace {

constexpr PartKind kCap = PartKind::capacitor;
constexpr PartKind kRes = PartKind::resistor;
constexpr PartKind kInd = PartKind::inductor;

/// Reads a marking and checks the nominal to 1e-9 relative.
PartMarking reads(const std::string& text, PartKind kind, double nominal) {
  INFO(text);
  const PartMarking p = parse_marking(text, kind);
  CHECK(p.nominal == Approx(nominal).epsilon(1e-9));
  return p;
}

void check_relative(const PartMarking& p, double minus, double plus) {
  CHECK(p.has_tolerance);
  CHECK_FALSE(p.tolerance_absolute);
  CHECK(p.tol_minus_rel == Approx(minus));
  CHECK(p.tol_plus_rel == Approx(plus));
  CHECK(p.lower == Approx(p.nominal * (1 - minus)));
  CHECK(p.upper == Approx(p.nominal * (1 + plus)));
}

/// The marking is refused with this id, and the message quotes the text and contains `hint`.
void refused(const std::string& text, std::optional<PartKind> kind, const std::string& id,
             const std::string& hint) {
  INFO(text);
  try {
    parse_marking(text, kind);
    FAIL("accepted");
  } catch (const MarkingError& e) {
    CHECK(e.id() == id);
    const std::string message = e.what();
    INFO(message);
    if (text.find_first_not_of(" ") != std::string::npos)
      CHECK(message.find("'" + text + "'") != std::string::npos);
    CHECK(message.find(hint) != std::string::npos);
  }
}

}  // namespace

TEST_CASE("worked decodes of IEC 60062 read as published", "[marking]") {
  // IEC 60062:2016 worked decodes (references.md)
  check_relative(reads("104K", kCap, 100e-9), 0.10, 0.10);  // IEC 60062:2016: 100 nF ±10 %
  check_relative(reads("103J", kCap, 10e-9), 0.05, 0.05);   // IEC 60062:2016: 10 nF ±5 %
  check_relative(reads("474J", kCap, 470e-9), 0.05, 0.05);  // IEC 60062:2016: 470 nF ±5 %
  reads("223", kCap, 22e-9);                                // IEC 60062:2016: 22 nF
  reads("109", kCap, 1.0e-12);  // IEC 60062:2016 / EIA-198: multiplier 9 is x0.1
  reads("108", kCap, 0.1e-12);  // IEC 60062:2016 / EIA-198: multiplier 8 is x0.01
  reads("47", kCap, 47e-12);    // IEC 60062:2016: a bare two-digit marking is pF
  CHECK(parse_marking("104", kCap).read_as == "three-digit code");

  // IEC 60062:2016 trap: "47K" on a ceramic is 47 pF ±10 %, not 47 k-anything
  const PartMarking trap = reads("47K", kCap, 47e-12);
  check_relative(trap, 0.10, 0.10);
  CHECK(trap.canonical == "47 pF ±10 %");
  // ... while on a resistor it is RKM: 47 kΩ (IEC 60062:2016)
  CHECK_FALSE(reads("47K", kRes, 47e3).has_tolerance);

  // IEC 60062:2016: 1R0C = 1.0 pF ±0.25 pF (C is absolute below 10 pF)
  const PartMarking small = reads("1R0C", kCap, 1.0e-12);
  CHECK(small.tolerance_absolute);
  CHECK(small.lower == Approx(0.75e-12));
  CHECK(small.upper == Approx(1.25e-12));
  CHECK(small.tol_minus_rel == Approx(0.25));
  CHECK(small.canonical == "1 pF ±0.25 pF");
}

TEST_CASE("RKM codes put the point where the letter is", "[marking]") {
  // IEC 60062:2016 RKM examples (references.md)
  CHECK(reads("4n7", kCap, 4.7e-9).read_as == "RKM");
  reads("p47", kCap, 0.47e-12);
  reads(
      "\xC2\xB5"
      "47",
      kCap, 0.47e-6);  // µ47, micro sign
  reads("u47", kCap, 0.47e-6);
  reads("2n2", kCap, 2.2e-9);
  reads("2R2", kCap, 2.2e-12);  // R is the point in pF on small ceramics
  reads("4R7", kRes, 4.7);
  reads("47K3", kRes, 47.3e3);
  reads("R22", kRes, 0.22);
  reads("1M0", kRes, 1.0e6);
  reads("4k7", kRes, 4.7e3);
  reads("47R", kRes, 47);
  reads("47n", kCap, 47e-9);
  // inductors: R is the point in µH (common practice for moulded chokes, no source)
  reads("4R7", kInd, 4.7e-6);
  reads("2u2", kInd, 2.2e-6);
  reads("1m5", kInd, 1.5e-3);
  reads("47n", kInd, 47e-9);
  // tolerance glued after an RKM code
  check_relative(reads("4n7J", kCap, 4.7e-9), 0.05, 0.05);
  check_relative(reads("4R7M", kInd, 4.7e-6), 0.20, 0.20);
  check_relative(reads("47KJ", kRes, 47e3), 0.05, 0.05);
}

TEST_CASE("digit codes are read per part kind", "[marking]") {
  // IEC 60062:2016: three digits = two significant + multiplier, in the kind's base unit
  reads("100", kRes, 10);  // a resistor's "100" is 10 Ω, not 100 Ω
  reads("472", kRes, 4.7e3);
  CHECK(reads("4702", kRes, 47.0e3).read_as == "four-digit code");  // IEC 60062:2016
  reads("1001", kRes, 1.0e3);
  reads("101", kInd, 100e-6);  // µH for inductors (common practice, no source)
  check_relative(reads("101K", kInd, 100e-6), 0.10, 0.10);
  reads("47", kRes, 47);
  CHECK(parse_marking("4702 F", kRes).tol_plus_rel == Approx(0.01));
}

TEST_CASE("plain values with units read as typed", "[marking]") {
  reads("4.7uF", kCap, 4.7e-6);
  reads(
      "4.7 \xC2\xB5"
      "F",
      kCap, 4.7e-6);
  reads("4,7uF", kCap, 4.7e-6);
  reads("0.47mH", kInd, 0.47e-3);
  reads("10H", kInd, 10);
  reads("8.2 ohm", kRes, 8.2);
  reads("8.2\xCE\xA9", kRes, 8.2);  // 8.2Ω
  reads("4.7 kohm", kRes, 4.7e3);
  reads("8R2", kRes, 8.2);
  reads("4.7k", kRes, 4.7e3);
  reads("2200u", kCap, 2200e-6);
  check_relative(reads("100nF 5%", kCap, 100e-9), 0.05, 0.05);
  check_relative(reads("100nF ±5%", kCap, 100e-9), 0.05, 0.05);
  check_relative(reads("100nF \xC2\xB1 5 %", kCap, 100e-9), 0.05, 0.05);
  check_relative(reads("100nF +-5%", kCap, 100e-9), 0.05, 0.05);

  const PartMarking big = reads(
      "2200\xC2\xB5"
      "F 25V",
      kCap, 2200e-6);
  REQUIRE(big.rated_voltage_v);
  CHECK(*big.rated_voltage_v == 25);
  CHECK_FALSE(big.has_tolerance);
  CHECK(big.canonical == "2.2 mF, 25 V");

  const PartMarking film = reads("4n7 J 100V", kCap, 4.7e-9);
  check_relative(film, 0.05, 0.05);
  CHECK(*film.rated_voltage_v == 100);
  CHECK(film.canonical == "4.7 nF ±5 %, 100 V");
  CHECK(*parse_marking("10n 1kV", kCap).rated_voltage_v == 1000);
  CHECK(*parse_marking("10n 63 VDC", kCap).rated_voltage_v == 63);

  // an absolute tolerance typed out
  const PartMarking abs_tol = reads("3.3pF ±0.25pF", kCap, 3.3e-12);
  CHECK(abs_tol.tolerance_absolute);
  CHECK(abs_tol.upper == Approx(3.55e-12));
}

TEST_CASE("Z and the B C D letters give their limits", "[marking]") {
  // IEC 60062:2016: Z = +80/-20 %
  const PartMarking z = reads("104Z", kCap, 100e-9);
  check_relative(z, 0.20, 0.80);
  CHECK(z.lower == Approx(80e-9));
  CHECK(z.upper == Approx(180e-9));
  CHECK(z.canonical == "100 nF +80/-20 %");
  check_relative(reads("10uF +80/-20%", kCap, 10e-6), 0.20, 0.80);
  check_relative(reads("10uF -20/+80%", kCap, 10e-6), 0.20, 0.80);

  // IEC 60062:2016: B/C/D absolute in pF below 10 pF
  CHECK(reads("2R2B", kCap, 2.2e-12).upper == Approx(2.3e-12));
  CHECK(reads("4R7D", kCap, 4.7e-12).lower == Approx(4.2e-12));
  // B/C/D as ±0.1/±0.25/±0.5 % at 10 pF and above: from memory
  check_relative(reads("101D", kCap, 100e-12), 0.005, 0.005);
  check_relative(reads("100C", kCap, 10e-12), 0.0025, 0.0025);
  check_relative(reads("1001 B", kRes, 1e3), 0.001, 0.001);
  // IEC 60062:2016 F G M
  check_relative(reads("1002 F", kRes, 10e3), 0.01, 0.01);
  check_relative(reads("221G", kCap, 220e-12), 0.02, 0.02);
  check_relative(reads("4u7 M", kCap, 4.7e-6), 0.20, 0.20);
}

TEST_CASE("an unknown part kind is taken from the unit or the RKM letter", "[marking]") {
  CHECK(parse_marking("4.7uF", std::nullopt).kind == kCap);
  CHECK(parse_marking("1.5mH", std::nullopt).kind == kInd);
  CHECK(parse_marking("8.2 ohm", std::nullopt).kind == kRes);
  // IEC 60062:2016 RKM letters: p, n, u mark capacitance; R, K, M, G resistance.
  CHECK(parse_marking("4n7", std::nullopt).nominal == Approx(4.7e-9));
  CHECK(parse_marking("100n", std::nullopt).kind == kCap);
  CHECK(parse_marking("4n7J", std::nullopt).tol_minus_rel == Approx(0.05));
  CHECK(parse_marking("1k5 1%", std::nullopt).nominal == Approx(1500));
  CHECK(parse_marking("4R7", std::nullopt).kind == kRes);
  CHECK(parse_marking("10R", std::nullopt).nominal == Approx(10));
  CHECK(parse_marking("R22", std::nullopt).nominal == Approx(0.22));
  // As typed from a can: a slash before the voltage.
  CHECK(parse_marking("2200uF/25V", std::nullopt).rated_voltage_v == Approx(25));
  CHECK(parse_marking("100nF/63V", std::nullopt).nominal == Approx(100e-9));
  refused("47K", std::nullopt, "marking.ambiguous", "capacitor, inductor or resistor");
  refused("104", std::nullopt, "marking.ambiguous", "capacitor, inductor or resistor");
  refused("103M", std::nullopt, "marking.ambiguous", "capacitor, inductor or resistor");
}

TEST_CASE("bad markings are refused with what to type", "[marking]") {
  refused("", kCap, "marking.empty", "4.7uF");
  refused("   ", kCap, "marking.empty", "4.7uF");
  refused("4x7", kCap, "marking.unreadable", "4.7uF");
  refused("4x7", kCap, "marking.unreadable", "(472)");
  refused("4n7n", kCap, "marking.unknown_tolerance", "B C D F G J K M Z");
  refused("4K7", kCap, "marking.unreadable", "use p, n, u");
  refused("n", kCap, "marking.unreadable", "4.7uF");
  refused("104Q", kCap, "marking.unknown_tolerance", "B C D F G J K M Z");
  refused("4n7 A", kCap, "marking.unknown_tolerance", "±5%");
  refused("4.7uF", kRes, "marking.wrong_unit", "resistor");
  refused("10 mH", kCap, "marking.wrong_unit", "in F");
  refused("4.7", kCap, "marking.ambiguous", "4.7uF");
  refused("2200", kCap, "marking.ambiguous", "222");
  refused("47", kInd, "marking.ambiguous", "47uH");
  refused("1m0", kRes, "marking.ambiguous", "1M0");
  refused("47 K", kRes, "marking.ambiguous", "47K (no space)");
  refused("4M7", kCap, "marking.ambiguous", "4m7");
  refused("10 mf", kCap, "marking.ambiguous", "uF or mF");
  refused("10G", kRes, "marking.out_of_range", "1 GΩ");
  reads("999", kRes, 9.9);  // IEC 60062:2016 / EIA-198: multiplier 9 is x0.1
  refused("0", kRes, "marking.out_of_range", "check the marking");
  refused("104K J", kCap, "marking.unreadable", "keep one");
  refused("10uF 25V 35V", kCap, "marking.unreadable", "keep one");
  refused("10uF +80%", kCap, "marking.unreadable", "+80/-20%");
  refused("10uF blue", kCap, "marking.unreadable", "'4n7 J 100V'");
  refused("4n7 \xE2\x98\x83", kCap, "marking.unreadable", "4.7uF");  // a snowman
}

TEST_CASE("values print with an SI prefix", "[marking]") {
  CHECK(format_si(4.7e-9, "F") == "4.7 nF");
  CHECK(format_si(0.252, "\xCE\xA9") == "252 m\xCE\xA9");
  CHECK(format_si(0.47e-12, "F") == "0.47 pF");
  CHECK(format_si(47.3e3, "\xCE\xA9") == "47.3 k\xCE\xA9");
  CHECK(format_si(999.99, "V") == "1 kV");
  CHECK(format_si(0.19, "") == "0.19");
}

TEST_CASE("E-series tables are the published ones", "[marking]") {
  CHECK(series_values(ESeries::E6).size() == 6);
  CHECK(series_values(ESeries::E12).size() == 12);
  CHECK(series_values(ESeries::E24).size() == 24);
  CHECK(series_values(ESeries::E48).size() == 48);
  CHECK(series_values(ESeries::E96).size() == 96);
  CHECK(series_values(ESeries::E192).size() == 192);

  // IEC 60063:2015: E24 is not the rounded formula at 2.7 3.0 3.3 3.6 3.9 4.3 4.7 8.2
  // (formula [calc] gives 2.6 2.9 3.2 3.5 3.8 4.2 4.6 8.3); everywhere else it is.
  const std::vector<double> traps = {2.7, 3.0, 3.3, 3.6, 3.9, 4.3, 4.7, 8.2};
  const auto e24 = series_values(ESeries::E24);
  std::vector<double> differ;
  for (std::size_t i = 0; i < e24.size(); ++i) {
    const double formula = std::round(10 * std::pow(10.0, static_cast<double>(i) / 24)) / 10;
    if (std::abs(formula - e24[i]) > 1e-9) differ.push_back(e24[i]);
  }
  CHECK(differ == traps);

  // IEC 60063:2015: E48 and E96 are round(10^(i/n), 3 significant figures) [calc];
  // E192 too except 9.20 where the formula gives 9.19.
  for (ESeries s : {ESeries::E48, ESeries::E96, ESeries::E192}) {
    const auto v = series_values(s);
    std::vector<double> exceptions;
    for (std::size_t i = 0; i < v.size(); ++i) {
      const double formula =
          std::round(100 * std::pow(10.0, static_cast<double>(i) / static_cast<double>(v.size()))) /
          100;
      if (std::abs(formula - v[i]) > 1e-9) exceptions.push_back(v[i]);
    }
    if (s == ESeries::E192)
      CHECK(exceptions == std::vector<double>{9.20});
    else
      CHECK(exceptions.empty());
  }
  // each smaller series of a family is every other member of the next one
  const auto e48 = series_values(ESeries::E48), e96 = series_values(ESeries::E96),
             e192 = series_values(ESeries::E192);
  for (std::size_t i = 0; i < 48; ++i)
    CHECK(e48[i] == e96[2 * i]);
  for (std::size_t i = 0; i < 96; ++i)
    CHECK(e96[i] == e192[2 * i]);
}

TEST_CASE("nearest preferred value and the smallest series", "[marking]") {
  // IEC 60063:2015 E24 members
  const auto p = nearest_preferred(4.6e3, ESeries::E24);
  CHECK(p.value == Approx(4.7e3));
  CHECK(p.deviation_pct == Approx(100.0 * (4.6 - 4.7) / 4.7));
  CHECK(nearest_preferred(2.65e-9, ESeries::E24).value == Approx(2.7e-9));
  // geometric distance across the decade: 9.6 is nearer 10 than 8.2 (9.6/8.2 > 10/9.6)
  CHECK(nearest_preferred(9.6, ESeries::E12).value == Approx(10));
  CHECK(nearest_preferred(0.96, ESeries::E6).value == Approx(1.0));
  CHECK(nearest_preferred(9.195, ESeries::E192).value == Approx(9.20));
  // geometric midpoint between 1.0 and 1.5 is sqrt(1.5) = 1.2247: 1.22 goes down, 1.23 up
  CHECK(nearest_preferred(1.22, ESeries::E6).value == Approx(1.0));
  CHECK(nearest_preferred(1.23, ESeries::E6).value == Approx(1.5));
  CHECK_THROWS_AS(nearest_preferred(0, ESeries::E6), std::invalid_argument);
  CHECK_THROWS_AS(nearest_preferred(-1, ESeries::E6), std::invalid_argument);

  CHECK(smallest_series_of(4.7e-9) == ESeries::E6);
  CHECK(smallest_series_of(2.7e3) == ESeries::E12);
  CHECK(smallest_series_of(4.3) == ESeries::E24);
  CHECK(smallest_series_of(1.05e-6) == ESeries::E48);
  CHECK(smallest_series_of(10.2e3) == ESeries::E96);
  CHECK(smallest_series_of(1.01) == ESeries::E192);
  CHECK(smallest_series_of(9.2) == ESeries::E192);
  CHECK_FALSE(smallest_series_of(9.19).has_value());
  CHECK_FALSE(smallest_series_of(1.234).has_value());
}
