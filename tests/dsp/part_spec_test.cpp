#include "dsp/part_spec.hpp"

#include <catch2/catch.hpp>

#include <cmath>
#include <complex>
#include <cstddef>
#include <map>
#include <numbers>
#include <optional>
#include <set>
#include <string>
#include <utility>
#include <vector>

using tb::dsp::describe;
using tb::dsp::Element;
using tb::dsp::ElementKind;
using tb::dsp::Netlist;
using tb::dsp::parse_netlist;
using tb::dsp::parse_part;
using tb::dsp::PartSpec;
using tb::dsp::PartSpecError;

namespace {

using cd = std::complex<double>;
constexpr double kPi = std::numbers::pi;

/// Impedance between nodes p and n by nodal analysis (n is the reference, 1 A into p), so
/// that the tests check what the elements do together, not only how they are listed.
cd impedance(const Netlist& net, double f_hz) {
  std::map<std::string, std::size_t> index;
  for (const Element& e : net.elements)
    for (const std::string* node : {&e.node_p, &e.node_n})
      if (*node != "n" && !index.count(*node)) index.emplace(*node, index.size());
  const std::size_t size = index.size();
  std::vector<std::vector<cd>> m(size, std::vector<cd>(size + 1));
  const double w = 2.0 * kPi * f_hz;
  const cd j(0, 1);
  auto at = [&](const std::string& node) -> std::optional<std::size_t> {
    if (node == "n") return std::nullopt;
    return index.at(node);
  };
  for (const Element& e : net.elements) {
    cd y;
    switch (e.kind) {
      case ElementKind::resistor:
        y = 1.0 / e.value;
        break;
      case ElementKind::inductor:
        y = 1.0 / (j * w * e.value);
        break;
      case ElementKind::capacitor:
        y = j * w * e.value;
        break;
      case ElementKind::voltage_source:
        FAIL("a part holds no sources");
    }
    const auto a = at(e.node_p), b = at(e.node_n);
    if (a) m[*a][*a] += y;
    if (b) m[*b][*b] += y;
    if (a && b) {
      m[*a][*b] -= y;
      m[*b][*a] -= y;
    }
  }
  const std::size_t p = index.at("p");
  m[p][size] = 1.0;
  for (std::size_t col = 0; col < size; ++col) {
    std::size_t pivot = col;
    for (std::size_t r = col + 1; r < size; ++r)
      if (std::abs(m[r][col]) > std::abs(m[pivot][col])) pivot = r;
    std::swap(m[col], m[pivot]);
    for (std::size_t r = 0; r < size; ++r) {
      if (r == col) continue;
      const cd factor = m[r][col] / m[col][col];
      for (std::size_t c = col; c <= size; ++c)
        m[r][c] -= factor * m[col][c];
    }
  }
  return m[p][size] / m[p][p];
}

/// Nodal analysis of a chain such as 0.02 ohm + 15 nH + 6.8 uF at 20 Hz spans admittances
/// over nine decades, so it agrees with the closed forms to about 1e-8, not to the last bit;
/// a wrongly wired element is off by far more at one of the frequencies tried.
bool close(cd a, cd b, double rel = 1e-7) {
  return std::abs(a - b) <= rel * std::abs(b);
}

const Element& only(const PartSpec& s, ElementKind kind) {
  const Element* found = nullptr;
  int count = 0;
  for (const Element& e : s.netlist.elements)
    if (e.kind == kind) {
      found = &e;
      ++count;
    }
  REQUIRE(count == 1);
  return *found;
}

const Element& named(const PartSpec& s, const std::string& name) {
  for (const Element& e : s.netlist.elements)
    if (e.name == name) return e;
  FAIL("no element " << name);
  throw;  // not reached
}

/// Runs `parse` on `text`, expecting PartSpecError; returns it for inspection.
template <class Parse>
PartSpecError error_of(Parse parse, const std::string& text) {
  try {
    parse(text);
  } catch (const PartSpecError& e) {
    return e;
  }
  FAIL("accepted: " << text);
  throw;  // not reached
}

PartSpecError part_error(const std::string& text) {
  return error_of([](const std::string& t) { return parse_part(t); }, text);
}
PartSpecError netlist_error(const std::string& text) {
  return error_of([](const std::string& t) { return parse_netlist(t); }, text);
}

cd parallel(cd a, cd b) {
  return a * b / (a + b);
}

}  // namespace

// ---------------------------------------------------------------------------------------
// The expression language

TEST_CASE("cap: value, ESR and ESL in series between p and n", "[part_spec]") {
  const PartSpec s = parse_part("cap 6.8u esr 0.02 esl 15n");
  CHECK(s.kind == "capacitor");
  CHECK(s.description == "cap 6.8µF esr 20mΩ esl 15nH");
  REQUIRE(s.netlist.elements.size() == 3);
  CHECK(only(s, ElementKind::capacitor).value == Approx(6.8e-6).epsilon(1e-14));
  CHECK(only(s, ElementKind::resistor).value == Approx(0.02).epsilon(1e-14));
  CHECK(only(s, ElementKind::inductor).value == Approx(15e-9).epsilon(1e-14));
  for (double f : {20.0, 1e3, 100e3, 10e6}) {
    const double w = 2 * kPi * f;
    INFO(f);
    CHECK(close(impedance(s.netlist, f), cd(0.02, w * 15e-9 - 1 / (w * 6.8e-6))));
  }
  // A bare capacitor is one element from p to n.
  const PartSpec bare = parse_part("cap 100n");
  REQUIRE(bare.netlist.elements.size() == 1);
  CHECK(bare.netlist.elements[0].node_p == "p");
  CHECK(bare.netlist.elements[0].node_n == "n");
  CHECK(bare.description == "cap 100nF");
}

TEST_CASE("cap: leakage across the dielectric, inside the ESR", "[part_spec]") {
  const PartSpec s = parse_part("capacitor 10u esr 1 leak 1M");
  const double f = 50;
  const double w = 2 * kPi * f;
  const cd zc = parallel(cd(0, -1 / (w * 10e-6)), cd(1e6, 0));
  CHECK(close(impedance(s.netlist, f), 1.0 + zc));
  CHECK(s.description == "cap 10µF esr 1Ω leak 1MΩ");
}

TEST_CASE("coil: winding resistance, self-capacitance across both, saturating core",
          "[part_spec]") {
  const PartSpec s = parse_part("coil 1.5m r 0.42 cp 80p sat 2.5");
  CHECK(s.kind == "inductor");
  CHECK(s.description == "coil 1.5mH r 420mΩ cp 80pF sat 2.5A");
  REQUIRE(s.netlist.elements.size() == 3);
  const Element& l = only(s, ElementKind::inductor);
  CHECK(l.value == Approx(1.5e-3).epsilon(1e-14));
  CHECK(l.saturation_current_a == 2.5);
  CHECK(only(s, ElementKind::resistor).saturation_current_a == 0);
  for (double f : {100.0, 10e3, 1e6}) {
    const double w = 2 * kPi * f;
    INFO(f);
    CHECK(close(impedance(s.netlist, f), parallel(cd(0.42, w * 1.5e-3), cd(0, -1 / (w * 80e-12)))));
  }
  // Near self-resonance 1/(2 pi sqrt(L C)) = 459 kHz the coil reads far above its wL.
  const double f0 = 1 / (2 * kPi * std::sqrt(1.5e-3 * 80e-12));
  CHECK(std::abs(impedance(s.netlist, f0)) > 100 * 2 * kPi * f0 * 1.5e-3);

  // "dcr" is the trade's other word for r; without extras the coil is one element.
  CHECK(parse_part("inductor 1.5m dcr 0.42").description == "coil 1.5mH r 420mΩ");
  const PartSpec plain = parse_part("choke 10m sat 1");
  REQUIRE(plain.netlist.elements.size() == 1);
  CHECK(plain.netlist.elements[0].saturation_current_a == 1);
  CHECK(plain.netlist.elements[0].node_p == "p");
  CHECK(plain.netlist.elements[0].node_n == "n");
}

TEST_CASE("res: series inductance and parallel capacitance", "[part_spec]") {
  const double f = 100e3;
  const double w = 2 * kPi * f;
  const PartSpec ls = parse_part("res 4.7 ls 2u");
  CHECK(ls.kind == "resistor");
  CHECK(ls.description == "res 4.7Ω ls 2µH");
  CHECK(close(impedance(ls.netlist, f), cd(4.7, w * 2e-6)));

  const PartSpec cp = parse_part("res 100k cp 1p");
  CHECK(cp.description == "res 100kΩ cp 1pF");
  CHECK(close(impedance(cp.netlist, f), parallel(cd(100e3, 0), cd(0, -1 / (w * 1e-12)))));

  const PartSpec both = parse_part("resistor 1k ls 1u cp 2p");
  CHECK(close(impedance(both.netlist, f), parallel(cd(1e3, w * 1e-6), cd(0, -1 / (w * 2e-12)))));
}

// Thiele/Small electrical analogue, worked example in shared references [pub/calc]
// (Thiele, Proc. IRE Aust. 1961 / JAES 1971; Small, JAES 20, 1972): Re 6 ohm, fs 70.7 Hz,
// Qms 4.27, Qes 0.34 -> Res 75.35 ohm, Ces 127.56 uF, Les 39.73 mH; its curve gives
// Zmax 81.35 ohm, f1 46.51 Hz, f2 107.48 Hz. Checked to the digits printed there, and the
// formulas re-derived here.
TEST_CASE("driver: Thiele/Small analogue against the worked example", "[part_spec]") {
  const PartSpec s = parse_part("driver re 6 fs 70.7 qms 4.27 qes 0.34");
  CHECK(s.kind == "driver");
  CHECK(s.description == "driver re 6Ω fs 70.7Hz qms 4.27 qes 0.34");
  REQUIRE(s.netlist.elements.size() == 4);
  const double res = named(s, "R1_es").value;
  const double ces = named(s, "C1_es").value;
  const double les = named(s, "L1_es").value;
  CHECK(std::abs(res - 75.35) <= 0.005);
  CHECK(std::abs(ces * 1e6 - 127.56) <= 0.005);
  CHECK(std::abs(les * 1e3 - 39.73) <= 0.005);
  const double ws = 2 * kPi * 70.7;
  CHECK(res == Approx(6 * 4.27 / 0.34).epsilon(1e-14));
  CHECK(ces == Approx(0.34 / (ws * 6)).epsilon(1e-14));
  CHECK(les == Approx(1 / (ws * ws * ces)).epsilon(1e-14));
  CHECK(named(s, "R1_re").value == 6);

  // The curve of the netlist: peak Re + Res at fs (the parallel L and C cancel there).
  const double re = 6;
  const cd zs = impedance(s.netlist, 70.7);
  CHECK(std::abs(std::abs(zs) - 81.35) <= 0.005);
  CHECK(std::abs(zs.imag()) < 1e-9);
  // f1, f2 where |Z| = Re sqrt(r0), found by bisection on the netlist's own curve.
  const double r0 = std::abs(zs) / re;
  const double level = re * std::sqrt(r0);
  auto crossing = [&](double lo, double hi) {
    const bool rising = std::abs(impedance(s.netlist, lo)) < level;
    for (int i = 0; i < 200; ++i) {
      const double mid = 0.5 * (lo + hi);
      if ((std::abs(impedance(s.netlist, mid)) < level) == rising)
        lo = mid;
      else
        hi = mid;
    }
    return 0.5 * (lo + hi);
  };
  const double f1 = crossing(5, 70.7);
  const double f2 = crossing(70.7, 1000);
  CHECK(std::abs(f1 - 46.51) <= 0.005);
  CHECK(std::abs(f2 - 107.48) <= 0.005);
  // Reading the parameters back with the published extraction (same references):
  // fs = sqrt(f1 f2), Qms = fs sqrt(r0)/(f2 - f1), Qes = Qms/(r0 - 1). For this model they
  // are exact, so a wrongly wired analogue cannot pass.
  const double fs = std::sqrt(f1 * f2);
  const double qms = fs * std::sqrt(r0) / (f2 - f1);
  CHECK(fs == Approx(70.7).epsilon(1e-9));
  CHECK(qms == Approx(4.27).epsilon(1e-9));
  CHECK(qms / (r0 - 1) == Approx(0.34).epsilon(1e-9));
}

TEST_CASE("driver: voice-coil inductance in series, words in any order", "[part_spec]") {
  const PartSpec with_le = parse_part("driver re 6 le 0.5m fs 70.7 qms 4.27 qes 0.34");
  const PartSpec without = parse_part("speaker qes 0.34 fs 70.7Hz qms 4.27 re 6ohm");
  CHECK(with_le.description == "driver re 6Ω le 500µH fs 70.7Hz qms 4.27 qes 0.34");
  CHECK(without.description == "driver re 6Ω fs 70.7Hz qms 4.27 qes 0.34");
  CHECK(named(with_le, "L1_le").value == Approx(0.5e-3).epsilon(1e-14));
  for (double f : {20.0, 500.0, 5000.0}) {
    const cd diff = impedance(with_le.netlist, f) - impedance(without.netlist, f);
    INFO(f);
    CHECK(close(diff, cd(0, 2 * kPi * f * 0.5e-3), 1e-9));
  }
}

TEST_CASE("charged capacitor: the charge sits on the capacitor, p side positive", "[part_spec]") {
  const PartSpec s = parse_part("cap 470u esr 0.1 charged 35");
  CHECK(s.description == "cap 470µF esr 100mΩ charged 35V");
  const Element& c = only(s, ElementKind::capacitor);
  const Element& r = only(s, ElementKind::resistor);
  CHECK(c.initial_voltage_v == 35);
  CHECK(r.initial_voltage_v == 0);
  // p -[ESR]- c.node_p -[C]- n: with +35 V on the capacitor, terminal p starts 35 V above n.
  CHECK(r.node_p == "p");
  CHECK(r.node_n == c.node_p);
  CHECK(c.node_n == "n");
  CHECK(only(parse_part("cap 470u charged -35V"), ElementKind::capacitor).initial_voltage_v == -35);
  CHECK(parse_part("cap 470u charged 0").description == "cap 470µF");
}

TEST_CASE("series and parallel combine parts, nest, and keep names unique", "[part_spec]") {
  const double f = 2e3;
  const double w = 2 * kPi * f;
  const PartSpec ser = parse_part("series(cap 1u, res 10)");
  CHECK(ser.kind == "network");
  CHECK(ser.description == "series(cap 1µF, res 10Ω)");
  CHECK(close(impedance(ser.netlist, f), cd(10, -1 / (w * 1e-6))));

  const PartSpec par = parse_part("Parallel(cap 1u, res 10)");
  CHECK(close(impedance(par.netlist, f), parallel(cd(10, 0), cd(0, -1 / (w * 1e-6)))));

  // A second-order crossover section as the woofer sees it, with real parts.
  const PartSpec net =
      parse_part("series(coil 1.5m r 0.42, parallel(cap 6.8u esr 0.02, res 8), cap 10u esr 0.1)");
  const cd coil(0.42, w * 1.5e-3);
  const cd c68(0.02, -1 / (w * 6.8e-6));
  const cd c10(0.1, -1 / (w * 10e-6));
  CHECK(close(impedance(net.netlist, f), coil + parallel(c68, cd(8, 0)) + c10));

  std::set<std::string> names;
  std::map<std::string, int> degree;
  for (const Element& e : net.netlist.elements) {
    CHECK(names.insert(e.name).second);
    ++degree[e.node_p];
    ++degree[e.node_n];
  }
  for (const auto& [node, d] : degree) {
    INFO(node);
    CHECK(node != "0");
    if (node != "p" && node != "n") {
      CHECK(node.rfind("p_", 0) == 0);
      CHECK(d >= 2);
    }
  }
  // The k-th part's elements carry k: the 6.8 uF capacitor is the second part.
  CHECK(named(net, "C2").value == Approx(6.8e-6).epsilon(1e-14));
  CHECK(named(net, "R2_esr").value == Approx(0.02).epsilon(1e-14));
  CHECK(named(net, "R3").value == 8);
}

TEST_CASE("numbers: SI prefixes, units, spacing and case", "[part_spec]") {
  struct Case {
    const char* text;
    ElementKind kind;
    double value;
  };
  const std::vector<Case> cases{
      {"cap 6.8u", ElementKind::capacitor, 6.8e-6},
      {"cap 6.8uF", ElementKind::capacitor, 6.8e-6},
      {"cap 6.8µF", ElementKind::capacitor, 6.8e-6},  // micro sign U+00B5
      {"cap 6.8μF", ElementKind::capacitor, 6.8e-6},  // Greek mu U+03BC
      {"cap 6.8 uF", ElementKind::capacitor, 6.8e-6},
      {"cap 6800n", ElementKind::capacitor, 6.8e-6},
      {"cap 6.8e-6", ElementKind::capacitor, 6.8e-6},
      {"cap 6.8E-6f", ElementKind::capacitor, 6.8e-6},
      {"cap 1F", ElementKind::capacitor, 1.0},  // F is farad here (SPICE differs, see below)
      {"cap 470p", ElementKind::capacitor, 470e-12},
      {"cap 2.2m", ElementKind::capacitor, 2.2e-3},
      {"res 4.7k", ElementKind::resistor, 4.7e3},
      {"res 4.7K", ElementKind::resistor, 4.7e3},
      {"res 4.7kohm", ElementKind::resistor, 4.7e3},
      {"res 4.7 kOhms", ElementKind::resistor, 4.7e3},
      {"res 4.7kΩ", ElementKind::resistor, 4.7e3},  // Greek capital omega U+03A9
      {"res 4.7kΩ", ElementKind::resistor, 4.7e3},  // ohm sign U+2126
      {"res 1M", ElementKind::resistor, 1e6},       // M is mega, m is milli (SI)
      {"res 1m", ElementKind::resistor, 1e-3},
      {"res 1meg", ElementKind::resistor, 1e6},
      {"res 2.2MEGohm", ElementKind::resistor, 2.2e6},
      {"res 1G", ElementKind::resistor, 1e9},
      {"res +.5", ElementKind::resistor, 0.5},
      {"coil 1.5mH", ElementKind::inductor, 1.5e-3},
      {"coil 1.5 mh", ElementKind::inductor, 1.5e-3},
      {"COIL 1500u", ElementKind::inductor, 1.5e-3},  // keywords in any case
  };
  for (const Case& c : cases) {
    INFO(c.text);
    const PartSpec s = parse_part(c.text);
    REQUIRE(s.netlist.elements.size() == 1);
    CHECK(s.netlist.elements[0].kind == c.kind);
    CHECK(s.netlist.elements[0].value == Approx(c.value).epsilon(1e-14));
  }
  // "key=value" and "key = value" read like "key value"; attribute units and prefixes too.
  for (const char* text : {"CAP 470u ESR=100m charged=35V", "cap 470uF esr = 0.1ohm charged 35 V",
                           "Capacitor 0.47m Esr 100mΩ CHARGED +35"}) {
    INFO(text);
    CHECK(parse_part(text).description == "cap 470µF esr 100mΩ charged 35V");
  }
  CHECK(parse_part("coil 1m sat 2500mA").netlist.elements[0].saturation_current_a ==
        Approx(2.5).epsilon(1e-14));
  CHECK(parse_part("driver re 6 fs 0.0707kHz qms 4.27 qes 0.34").description ==
        "driver re 6Ω fs 70.7Hz qms 4.27 qes 0.34");
  // Extras given as 0 mean "none": no element, nothing in the description.
  const PartSpec none = parse_part("cap 1u esr 0 esl 0");
  CHECK(none.netlist.elements.size() == 1);
  CHECK(none.description == "cap 1µF");
}

TEST_CASE("limits: absurd values are refused, the edges accepted", "[part_spec]") {
  for (const char* bad :
       {"cap 2", "cap 0", "cap -1u", "cap 0.0001p", "coil 2k", "coil 0", "res -1", "res 0",
        "res 2G", "res 0.1u", "cap 1u esr -1", "cap 1u esr 2M", "cap 1u esl 15", "cap 1u leak 2G",
        "cap 1u charged 2k", "cap 1u charged -1001", "coil 1m r 2M", "coil 1m cp 2u",
        "coil 1m sat 2k", "res 1 ls 2m", "res 1 cp 2u", "driver re 0 fs 70 qms 4 qes 0.3",
        "driver re 6 le 0.5 fs 70 qms 4 qes 0.3", "driver re 6 fs 0.5 qms 4 qes 0.3",
        "driver re 6 fs 30k qms 4 qes 0.3", "driver re 6 fs 70 qms 0 qes 0.3",
        "driver re 6 fs 70 qms 4 qes 200",
        // each parameter in range, but Ces = Qes/(2 pi fs Re) = 15.9 F:
        "driver re 0.001 fs 1 qms 100 qes 0.1"}) {
    INFO(bad);
    CHECK(part_error(bad).id() == "part.out_of_range");
  }
  for (const char* good : {"cap 1", "cap 0.001p", "coil 1k", "coil 1p", "res 1G", "res 1u",
                           "cap 1u charged -1k", "cap 1u charged 1000", "cap 1u esl 1m",
                           "res 1 cp 1u", "driver re 1k fs 20k qms 100 qes 100"}) {
    INFO(good);
    CHECK_NOTHROW(parse_part(good));
  }
}

TEST_CASE("round trip: the description reads back to the same part", "[part_spec]") {
  for (const char* text :
       {"cap 6.8u esr 0.02 esl 15n", "cap 470u esr 0.1 charged 35", "cap 1u charged -12.5",
        "coil 1.5m r 0.42 cp 80p sat 2.5", "res 4.7 ls 2u", "res 100k cp 1p",
        "driver re 6 le 0.5m fs 70.7 qms 4.27 qes 0.34", "cap 10u leak 3.3meg",
        "series(cap 1u, res 10)", "parallel(series(cap 0.0123456789u, res 1.23456789k), coil 1)",
        "capacitor 0.0068m ESR=20mohm", "res 1e-6", "res 999999999"}) {
    INFO(text);
    const PartSpec a = parse_part(text);
    const PartSpec b = parse_part(describe(a));
    CHECK(b.kind == a.kind);
    CHECK(b.description == a.description);
    CHECK(describe(b) == describe(a));
    REQUIRE(b.netlist.elements.size() == a.netlist.elements.size());
    for (std::size_t i = 0; i < a.netlist.elements.size(); ++i) {
      const Element& x = a.netlist.elements[i];
      const Element& y = b.netlist.elements[i];
      CHECK(y.name == x.name);
      CHECK(y.kind == x.kind);
      CHECK(y.node_p == x.node_p);
      CHECK(y.node_n == x.node_n);
      CHECK(y.value == Approx(x.value).epsilon(1e-15));
      CHECK(y.initial_voltage_v == x.initial_voltage_v);
      CHECK(y.saturation_current_a == x.saturation_current_a);
    }
  }
  // Written differently, the same part gets the same description.
  CHECK(parse_part("Capacitor 6.8 µF ESL=15nH ESR 0.02ohm").description ==
        parse_part("cap 6800n esr 20m esl 0.015u").description);
}

TEST_CASE("describe: a hand-made PartSpec without a description gets a summary", "[part_spec]") {
  PartSpec s;
  s.kind = "network";
  Element r;
  r.kind = ElementKind::resistor;
  r.name = "R1";
  r.node_p = "p";
  r.node_n = "n";
  r.value = 4.7;
  s.netlist.elements.push_back(r);
  CHECK(describe(s) == "netlist: R1 4.7Ω");
  for (int i = 0; i < 4; ++i)
    s.netlist.elements.push_back(r);
  CHECK(describe(s) == "netlist: 5 elements (5 R)");
  CHECK(describe(PartSpec{}) == "empty netlist");
}

// ---------------------------------------------------------------------------------------
// The netlist form

TEST_CASE("netlist: lines, comments, continuation and .end", "[part_spec]") {
  const PartSpec s = parse_netlist(
      "* crossover coil as measured, with its winding capacitance\n"
      "\n"
      "R1 p x 0.42   ; winding\n"
      "L1 x n 1.5m\n"
      "Cself P N\n"
      "+ 80p\n"
      "C2 p n 10u IC=5\n"
      ".end\n"
      "anything after .end is not read\n");
  CHECK(s.kind == "network");
  CHECK(s.description == "netlist: R1 420mΩ, L1 1.5mH, Cself 80pF, C2 10µF charged 5V");
  REQUIRE(s.netlist.elements.size() == 4);
  CHECK(named(s, "Cself").node_p == "p");  // node names are case-insensitive
  CHECK(named(s, "Cself").value == Approx(80e-12).epsilon(1e-14));
  CHECK(named(s, "C2").initial_voltage_v == 5);
  // The same part written in the expression language has the same impedance.
  const PartSpec e = parse_part("parallel(coil 1.5m r 0.42 cp 80p, cap 10u)");
  for (double f : {50.0, 5e3, 500e3}) {
    INFO(f);
    CHECK(close(impedance(s.netlist, f), impedance(e.netlist, f)));
  }
}

TEST_CASE("netlist: IC spellings, CRLF, and 1/0 as terminals", "[part_spec]") {
  for (const char* text : {"C1 p n 470u IC=35", "C1 p n 470u ic = 35", "C1 p n 470u IC= 35V",
                           "c1 p n 470uF\r\n+ IC =35\r\n"}) {
    INFO(text);
    const PartSpec s = parse_netlist(text);
    CHECK(s.kind == "capacitor");
    CHECK(s.description == "cap 470µF charged 35V");
    CHECK(s.netlist.elements[0].initial_voltage_v == 35);
  }
  // A charge is stated for terminal p: an element written n to p flips the sign.
  CHECK(parse_netlist("C1 n p 10u IC=5").description == "cap 10µF charged -5V");

  // SPICE habit: the part between 1 (hot) and 0 (cold), renamed p and n.
  const PartSpec s = parse_netlist("R1 1 2 6\nL1 2 0 1m\n");
  CHECK(named(s, "R1").node_p == "p");
  CHECK(named(s, "R1").node_n == "2");
  CHECK(named(s, "L1").node_n == "n");
  // With p and n, a node called 1 is just an inner node.
  CHECK(parse_netlist("R1 p 1 6\nL1 1 n 1m").netlist.elements[0].node_n == "1");
  // One element reads like the expression language and gives the same netlist values.
  const PartSpec one = parse_netlist("Lcoil 1 0 1.5mH");
  CHECK(one.kind == "inductor");
  CHECK(one.description == parse_part("coil 1.5m").description);
  CHECK(parse_netlist("R 1 0 8").kind == "resistor");
}

// SPICE scale suffixes (ngspice manual, "Scale factors"; from memory): T G Meg K mil m u n p f,
// case-insensitive, letters after them ignored. So 1m is milli and 1M too; mega is 1meg.
TEST_CASE("netlist: SPICE value suffixes and their traps", "[part_spec]") {
  struct Case {
    const char* value;
    double expected;
  };
  const std::vector<Case> resistors{
      {"1m", 1e-3},        {"1M", 1e-3},  // SPICE: M is milli, not mega
      {"1Mohm", 1e-3},     {"1meg", 1e6}, {"1MEG", 1e6},      {"1Meg", 1e6},    {"2.2k", 2.2e3},
      {"2.2K", 2.2e3},     {"1g", 1e9},   {"1mil", 25.4e-6},  {"4.7ohm", 4.7},  {"4.7", 4.7},
      {"4.7kohms", 4.7e3}, {"1e3", 1e3},  {"2.5E-3", 2.5e-3}, {"100u", 100e-6}, {"8x", 8},
  };
  for (const Case& c : resistors) {
    INFO(c.value);
    const PartSpec s = parse_netlist(std::string("R1 p n ") + c.value);
    CHECK(s.netlist.elements[0].value == Approx(c.expected).epsilon(1e-14));
  }
  CHECK(parse_netlist("C1 p n 10uF").netlist.elements[0].value == Approx(10e-6).epsilon(1e-14));
  CHECK(parse_netlist("C1 p n 47nf").netlist.elements[0].value == Approx(47e-9).epsilon(1e-14));
  CHECK(parse_netlist("C1 p n 10fF").netlist.elements[0].value == Approx(10e-15).epsilon(1e-14));
  CHECK(parse_netlist("C1 p n 1p").netlist.elements[0].value == Approx(1e-12).epsilon(1e-14));
  CHECK(parse_netlist("L1 p n 100nH").netlist.elements[0].value == Approx(100e-9).epsilon(1e-14));
  CHECK(parse_netlist("L1 p n 1H").netlist.elements[0].value == 1);  // h is no scale
  // "1t" is tera: far beyond any resistor.
  CHECK(netlist_error("R1 p n 1t").id() == "part.out_of_range");
  // A lone F on a capacitor is femto in SPICE and farad to most people: refused.
  const PartSpecError f = netlist_error("C1 p n 10F");
  CHECK(f.id() == "part.ambiguous_unit");
  CHECK_THAT(f.what(), Catch::Contains("'10F' at line 1 column 8"));
  CHECK_THAT(f.what(), Catch::Contains("femto"));
}

// ---------------------------------------------------------------------------------------
// Errors: every id, each message quoting the offending text and its position

TEST_CASE("errors in the expression language name the column and the fix", "[part_spec]") {
  struct Case {
    const char* text;
    const char* id;
    int column;
    const char* says;  ///< part of the message: the quoted text and what to write
  };
  const std::vector<Case> cases{
      {"cap 6.8u esx 1", "part.unknown_word", 10,
       "unknown word 'esx' at column 10: a capacitor takes esr, esl, leak, charged"},
      // Columns count characters: the µ is two bytes but one column.
      {"cap 6.8µ esx 1", "part.unknown_word", 10, "'esx' at column 10"},
      {"capp 1u", "part.unknown_word", 1, "'capp' at column 1: a part starts with cap"},
      {"coil 1m q 3", "part.unknown_word", 9, "'q' at column 9: a coil takes r, cp, sat"},
      {"cap 6.8x", "part.bad_number", 5, "'6.8x' at column 5 is not a capacitance"},
      {"cap 4n7", "part.bad_number", 5,
       "'4n7' at column 5 is a marking code, not a number: "
       "write 4.7n"},
      {"res 4R7", "part.bad_number", 5, "write 4.7"},
      {"res 4.7 k", "part.bad_number", 9, "'k' at column 9 is a prefix on its own"},
      {"cap 1e999", "part.bad_number", 5, "'1e999' at column 5 is too large"},
      {"cap 1u esr abc", "part.bad_number", 12, "'abc' at column 12"},
      {"cap 6.8uH", "part.wrong_unit", 5, "'6.8uH' at column 5 is an inductance"},
      {"coil 1m sat 3V", "part.wrong_unit", 13, "'3V' at column 13 is a voltage"},
      {"driver re 6 fs 70 qms 4Hz qes 0.3", "part.wrong_unit", 23, "plain number"},
      {"cap", "part.missing_value", 1, "'cap' at column 1 needs its value next"},
      {"cap esr 1", "part.missing_value", 1, "'cap' at column 1 needs its value"},
      {"cap 1u esr", "part.missing_value", 8,
       "'esr' at column 8 needs a value after it, e.g. "
       "esr 0.02"},
      {"cap 1u esr esl 1n", "part.missing_value", 8, "'esr' at column 8"},
      {"driver re 6 fs 70.7", "part.missing_value", 1, "'driver' at column 1 lacks qms, qes"},
      {"cap 1u esr 1 ESR 2", "part.duplicate", 14,
       "'ESR' at column 14 is given twice (first at "
       "column 8)"},
      {"cap 1u esl 15", "part.out_of_range", 12, "'15' at column 12 is out of range: an ESL"},
      {"cap 1u esr 20M", "part.out_of_range", 12, "M is mega; for milli write m"},
      {"driver re 0.001 fs 1 qms 100 qes 0.1", "part.out_of_range", 1,
       "'driver' at column 1 gives Ces"},
      {"series(cap 1u res 10)", "part.syntax", 15,
       "'res' at column 15 starts another part: "
       "separate the parts with ','"},
      {"cap 1u res 10", "part.syntax", 8, "'res' at column 8 starts another part: join"},
      {"series cap 1u", "part.syntax", 1, "'series' at column 1 needs '(' right after it"},
      {"series(cap 1u)", "part.syntax", 1, "holds one part"},
      {"series()", "part.syntax", 1, "is empty"},
      {"series(cap 1u,, res 1)", "part.syntax", 15, "',' at column 15"},
      {"series(cap 1u, )", "part.syntax", 14, "',' at column 14 is followed by no part"},
      {"(cap 1u)", "part.syntax", 1, "'(' at column 1 needs series or parallel"},
      {"6.8u", "part.syntax", 1, "'6.8u' at column 1 is a value without a part"},
      {"esr 1", "part.syntax", 1, "'esr' at column 1 belongs after a part"},
      {"cap 1u, res 1", "part.syntax", 7, "',' at column 7 lies outside series"},
      {"cap 1u 0.02", "part.syntax", 8, "'0.02' at column 8 is a value with no word before it"},
      {"series(cap 1u, res 10", "part.unbalanced", 7, "'(' at column 7 is never closed"},
      {"series(cap 1u, res 10))", "part.unbalanced", 23, "')' at column 23 closes no '('"},
      {"   ", "part.empty", 1, "no part given at column 1"},
  };
  for (const Case& c : cases) {
    INFO(c.text);
    const PartSpecError e = part_error(c.text);
    CHECK(e.id() == c.id);
    CHECK(e.line() == 0);
    CHECK(e.column() == c.column);
    CHECK_THAT(e.what(), Catch::Contains("column " + std::to_string(c.column)));
    CHECK_THAT(e.what(), Catch::Contains(c.says));
    CHECK_THAT(e.hint(), Catch::Contains("docs/parts.md"));
  }
}

TEST_CASE("errors in the netlist name the line, the column and the fix", "[part_spec]") {
  struct Case {
    const char* text;
    const char* id;
    int line;
    int column;
    const char* says;
  };
  const std::vector<Case> cases{
      {"R1 p n 1\nQ1 p n x", "part.unknown_word", 2, 1,
       "'Q1' at line 2 column 1 is not an R, L "
       "or C element"},
      {"Woofer crossover\nR1 p n 1", "part.unknown_word", 1, 1, "a title line must start with *"},
      {"R1 p n 1\n.tran 1u 1m", "part.unknown_word", 2, 1, "'.tran' at line 2 column 1"},
      {"R1 p n 1 tc=2", "part.unknown_word", 1, 10, "'tc' at line 1 column 10 does not belong"},
      {"L1 p n 1m IC=1", "part.unknown_word", 1, 11, "only a capacitor takes"},
      {"R1 p n 4k7", "part.bad_number", 1, 8, "'4k7' at line 1 column 8"},
      {"R1 p n abc", "part.bad_number", 1, 8, "'abc' at line 1 column 8 is not a resistance"},
      {"C1 p n 10µ", "part.bad_number", 1, 8, "write µ as u"},
      {"R1 p n", "part.missing_value", 1, 1,
       "'R1' at line 1 column 1 needs two nodes and a "
       "value"},
      {"C1 p n 1u IC=", "part.missing_value", 1, 11, "'IC' at line 1 column 11 needs a voltage"},
      {"R1 p n 1\n  r1 p n 2", "part.duplicate", 2, 3,
       "'r1' at line 2 column 3 is named like "
       "the element at line 1"},
      {"R1 p n 2G", "part.out_of_range", 1, 8, "'2G' at line 1 column 8 is out of range"},
      {"C1 p n 0.1fF", "part.out_of_range", 1, 8, "in SPICE f is femto"},
      {"C1 p n 1u IC=2k", "part.out_of_range", 1, 14, "'2k' at line 1 column 14"},
      {"C1 p n 10F", "part.ambiguous_unit", 1, 8, "'10F' at line 1 column 8"},
      {"+ R1 p n 1", "part.syntax", 1, 1, "'+' at line 1 column 1 continues a line"},
      {"* only a comment\n\n.end", "part.empty", 3, 1, "line 3 column 1"},
      {"R1 a b 1", "part.no_terminal", 1, 1, "no terminal nodes"},
      {"R1 p x 1\nR2 x y 1", "part.no_terminal", 1, 1, "node p but no node n"},
      {"R1 p x 1\nR2 x 0\n+ 1\nR3 x n 1", "part.bad_node", 2, 6,
       "node '0' at line 2 column 6 "
       "is the bench ground"},
      {"R1 p p 1", "part.bad_node", 1, 1, "joins node 'p' to itself"},
      {"R1 p x 1\nR2 xx n 1", "part.dangling_node", 1, 6,
       "node 'x' at line 1 column 6 touches "
       "only R1"},
      {"R1 p x 1\nC1 x n 1u\nR2 a b 1\nR3 a b 2", "part.disconnected", 3, 4,
       "node 'a' at line 3 column 4 has no path to p or n"},
      {"R1 p x 1\nR2 p x 1\nR3 n y 1\nR4 n y 2", "part.disconnected", 1, 4,
       "no path of "
       "elements joins node p"},
  };
  for (const Case& c : cases) {
    INFO(c.text);
    const PartSpecError e = netlist_error(c.text);
    CHECK(e.id() == c.id);
    CHECK(e.line() == c.line);
    CHECK(e.column() == c.column);
    CHECK_THAT(e.what(), Catch::Contains("line " + std::to_string(c.line) + " column " +
                                         std::to_string(c.column)));
    CHECK_THAT(e.what(), Catch::Contains(c.says));
  }
}
