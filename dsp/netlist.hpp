// A small linear(ish) circuit: two-terminal R, L, C elements and independent voltage
// sources between named nodes, node "0" being ground. This is what the simulated bench
// solves (circuit.hpp) and what part descriptions (part_spec.hpp) produce.
//
// Values in SI units: ohm, henry, farad, volt. Non-ideal extras that only the time domain
// sees are fields of the element (a capacitor's initial charge, an inductor core that
// saturates); the AC solution uses the small-signal value.
#pragma once

#include <string>
#include <vector>

namespace tb::dsp {

enum class ElementKind { resistor, inductor, capacitor, voltage_source };

struct Element {
  ElementKind kind = ElementKind::resistor;
  std::string name;    ///< unique within the netlist, e.g. "R1", "Cpart"
  std::string node_p;  ///< positive terminal (current flows p -> n through the element)
  std::string node_n;
  double value = 0;  ///< ohm / henry / farad; for a source its DC value in volt
  /// Capacitor only: voltage across it (p minus n) at t = 0, volt (a charged part).
  double initial_voltage_v = 0;
  /// Inductor only, 0 = linear: the core saturates so that L(i) = L / (1 + (i / i_sat)^2).
  double saturation_current_a = 0;
};

struct Netlist {
  std::vector<Element> elements;
};

/// Appends a two-terminal element (no initial charge, linear) and returns it.
inline Element& add_element(Netlist& netlist, ElementKind kind, std::string name,
                            std::string node_p, std::string node_n, double value) {
  Element e;
  e.kind = kind;
  e.name = std::move(name);
  e.node_p = std::move(node_p);
  e.node_n = std::move(node_n);
  e.value = value;
  netlist.elements.push_back(std::move(e));
  return netlist.elements.back();
}

}  // namespace tb::dsp
