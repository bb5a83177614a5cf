#include "dsp/jig_model.hpp"

#include <stdexcept>

#include "dsp/circuit.hpp"

namespace tb::dsp {

namespace {

// A series resistance that may be zero: a zero-ohm resistor would make the MNA matrix
// singular, so it becomes a 1 micro-ohm link (far below anything the bench resolves).
double link(double ohm) {
  return ohm > 1e-6 ? ohm : 1e-6;
}

}  // namespace

JigNetlist build_jig(const JigSetup& setup, const Netlist& part, const CardFaults& card) {
  if (!(setup.rref_ohm > 0)) throw std::invalid_argument("jig: Rref must be > 0 ohm");
  bool has_p = false, has_n = false;
  for (const auto& e : part.elements) {
    for (const auto* node : {&e.node_p, &e.node_n}) {
      has_p |= *node == "p";
      has_n |= *node == "n";
    }
  }
  if (!has_p || !has_n) throw std::invalid_argument("jig: the part needs terminals p and n");

  JigNetlist jig;
  Netlist& n = jig.netlist;
  add_element(n, ElementKind::voltage_source, jig.source, "dac", "0", 0.0);
  add_element(n, ElementKind::resistor, "Rout", "dac", "o", link(card.out_resistance_ohm));
  if (card.out_coupling_f > 0) {
    add_element(n, ElementKind::capacitor, "Cout", "o", "a", card.out_coupling_f);
  } else {
    add_element(n, ElementKind::resistor, "Cout_link", "o", "a", link(0));
  }
  std::string hot, cold;
  if (setup.layout == Layout::part_low) {
    add_element(n, ElementKind::resistor, "Rref", "a", "b", setup.rref_ohm);
    hot = "b";
    cold = "0";
  } else {
    add_element(n, ElementKind::resistor, "Rref", "b", "0", setup.rref_ohm);
    hot = "a";
    cold = "b";
  }
  add_element(n, ElementKind::resistor, "Rlead_hot", hot, "part_p", link(setup.lead_hot_ohm));
  add_element(n, ElementKind::resistor, "Rlead_cold", "part_n", cold, link(setup.lead_cold_ohm));
  for (Element e : part.elements) {
    e.name = "part_" + e.name;
    for (auto* node : {&e.node_p, &e.node_n}) {
      if (*node != "0") *node = "part_" + *node;
    }
    n.elements.push_back(e);
  }
  if (setup.inputs_on_node_a) {
    jig.node_in_b = "a";
  } else if (setup.inputs_swapped) {
    jig.node_in_a = "b";
    jig.node_in_b = "a";
  }
  const std::string reads[2] = {jig.node_in_a, jig.node_in_b};
  for (int ch = 0; ch < 2; ++ch) {
    const std::string tag = ch == 0 ? "A" : "B";
    if (card.in_resistance_ohm[ch] > 0)
      add_element(n, ElementKind::resistor, "Rin" + tag, reads[ch], "0",
                  card.in_resistance_ohm[ch]);
    if (card.in_capacitance_f[ch] > 0)
      add_element(n, ElementKind::capacitor, "Cin" + tag, reads[ch], "0",
                  card.in_capacitance_f[ch]);
  }
  return jig;
}

std::complex<double> part_impedance(const Netlist& part, double freq_hz) {
  // Drive p with 1 V and read the current returning from n through a 1-ohm sense resistor.
  Netlist n = part;
  add_element(n, ElementKind::voltage_source, "Vprobe", "p", "probe_m", 1.0);
  add_element(n, ElementKind::resistor, "Rprobe", "probe_m", "n", 1.0);
  add_element(n, ElementKind::resistor, "Rprobe_ground", "n", "0", 1.0);
  const Circuit c(n);
  const auto v = c.solve_ac(freq_hz, {{1.0, 0.0}});
  const auto current = v[c.node_index("n")] - v[c.node_index("probe_m")];
  return (v[c.node_index("p")] - v[c.node_index("n")]) / current;
}

}  // namespace tb::dsp
