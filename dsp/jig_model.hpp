// The whole simulated measuring circuit as one netlist: the card's output stage, the jig
// (reference resistor and part in either layout, with lead resistance), and the card's
// two inputs loading the nodes they read. Solved by circuit.hpp in the simulated card.
//
//   Vdac -- Rout -- Cout -- node a --+-- (layout) --+-- node b
//                                    |              |
//                         input A: Rin||Cin   input B: Rin||Cin   (to ground)
//
// part_low:  Rref a-b, lead, part, lead to ground.   part_high: lead, part, lead a-b, Rref b-0.
// In the channel-match connection both inputs read node a (the calibration that measures
// their mismatch), and the part stays in place; in the swapped connection input A reads
// node b and input B node a.
#pragma once

#include <complex>
#include <string>

#include "dsp/bridge.hpp"
#include "dsp/card_faults.hpp"
#include "dsp/netlist.hpp"

namespace tb::dsp {

struct JigSetup {
  Layout layout = Layout::part_low;
  double rref_ohm = 1000;         ///< > 0
  bool inputs_on_node_a = false;  ///< channel-match connection
  /// Swap-and-average's second connection: input A reads node b, input B reads node a
  /// (each input's loading moves with it). Ignored when inputs_on_node_a is set.
  bool inputs_swapped = false;
  double lead_hot_ohm = 0;  ///< lead + contact resistance on each side of the part
  double lead_cold_ohm = 0;
};

struct JigNetlist {
  Netlist netlist;
  std::string source = "Vdac";  ///< the one voltage source: the DAC's open-circuit voltage
  std::string node_in_a = "a";  ///< node read by input A
  std::string node_in_b = "b";  ///< node read by input B
};

/// The impedance between a part's terminals p and n at freq_hz (> 0), by an AC solve of
/// its netlist alone. Throws CircuitError for a part the model cannot solve.
std::complex<double> part_impedance(const Netlist& part, double freq_hz);

/// The part's netlist must have terminals "p" and "n" (see part_spec.hpp); its internal
/// nodes and element names are prefixed so they cannot clash with the jig's.
/// Throws std::invalid_argument for Rref <= 0 or a part without both terminals.
JigNetlist build_jig(const JigSetup& setup, const Netlist& part, const CardFaults& card);

}  // namespace tb::dsp
