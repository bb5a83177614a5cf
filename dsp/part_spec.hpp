// Parts for the simulated bench, written by a technician: either a short expression of our
// own ("cap 6.8u esr 0.02 esl 15n", "series(cap 1u, res 10)") or a SPICE-style R/L/C
// netlist. Both give a Netlist (dsp/netlist.hpp) between two terminal nodes, "p" (hot) and
// "n" (cold); the bench connects those to the jig. The full language, with examples, is in
// docs/parts.md.
//
// Expression language (keywords and units case-insensitive, SI prefixes case-sensitive):
//   part     := simple | ("series" | "parallel") "(" part ("," part)+ ")"
//   simple   := "cap" C [esr R] [esl L] [leak R] [charged V]
//             | "coil" L [r R] [cp C] [sat I]          ("dcr" = "r")
//             | "res" R [ls L] [cp C]
//             | "driver" re R [le L] fs F qms Q qes Q
//   value    := number [prefix] [unit], e.g. 6.8u, 6.8uF, "6.8 µF", 1e-6, 100k, 2meg
//               prefixes p n u µ m k K M G and meg; units F H Ω/ohm V A Hz matching the
//               word (a capacitance in F, ...); "key=value" is the same as "key value".
// Synonyms: capacitor, inductor/choke, resistor, speaker. Extras given as 0 mean "none".
//
// Circuits (internal nodes p_1, p_2, ... ; element names carry the part's number k, the
// k-th simple part in reading order, and their role):
//   cap:    p -[R k_esr]-[L k_esl]-+-[C k]------+- n        charged V: C k's p side is V
//                                  +-[R k_leak]-+           above its n side at t = 0
//   coil:   p -[L k]-[R k_wind]- n, with C k_self from p to n; sat -> saturation_current_a
//   res:    p -[R k]-[L k_ser]- n, with C k_par from p to n
//   driver: p -[R k_re]-[L k_le]-+-[R k_es]-+- n   (Thiele 1961/1971, Small 1972):
//                                +-[C k_es]-+      Res = Re Qms/Qes, Ces = Qes/(2 pi fs Re),
//                                +-[L k_es]-+      Les = 1/((2 pi fs)^2 Ces)
//   series(a, b, c): a from p to p_i, b from p_i to p_j, c from p_j to n; parallel: all p..n.
//
// Netlist form: one element per line, "Rname node node value", "Lname ...",
// "Cname node node value [IC=volts]"; "*" starts a comment line, ";" a comment to the end
// of the line, "+" continues the previous line, ".end" ends the netlist, blank lines are
// skipped. There is no title line (start one with "*"). Node and element names are
// case-insensitive. Terminals: nodes "p" and "n", or instead "1" (hot) and "0" (cold) as in
// a SPICE deck; with p/n, node "0" (the bench ground) is refused. Values take SPICE scale
// suffixes f p n u m k meg g t (and mil), case-insensitive, trailing letters ignored: "1m" is
// milli, "1meg" mega. One deliberate exception: a capacitor value ending in a lone "F"
// ("10F", femto in SPICE) is refused as ambiguous; write "10" for farads or "10fF".
//
// Ranges (values outside are refused as absurd): R 1 µΩ..1 GΩ, L 1 pH..1 kH, C 1 fF..1 F,
// charge |V| <= 1 kV; tighter limits per word are listed in docs/parts.md.
#pragma once

#include <stdexcept>
#include <string>
#include <string_view>
#include <utility>

#include "dsp/netlist.hpp"

namespace tb::dsp {

struct PartSpec {
  Netlist netlist;  ///< between nodes "p" (hot) and "n" (cold); never uses node "0"
  /// "capacitor", "inductor", "resistor", "driver" or "network" (a combination, or a
  /// netlist of more than one element).
  std::string kind;
  /// One line for people. From parse_part: the part in canonical form of the expression
  /// language, with units ("cap 6.8µF esr 20mΩ esl 15nH"), which parse_part reads back to
  /// the same netlist. From parse_netlist: the same canonical form for a single element
  /// between p and n, else a summary ("netlist: R1 4.7Ω, L1 1mH, C1 10µF").
  std::string description;
};

/// A part text that cannot be read. id() is stable ("part.unknown_word", "part.bad_number",
/// "part.wrong_unit", "part.missing_value", "part.duplicate", "part.out_of_range",
/// "part.ambiguous_unit", "part.syntax", "part.unbalanced", "part.empty",
/// "part.no_terminal", "part.bad_node", "part.dangling_node", "part.disconnected");
/// what() is self-contained: it quotes the offending text with its position and says what
/// to write instead, e.g. "unknown word 'esx' at column 10: a capacitor takes esr, esl,
/// leak, charged". hint() only points at the documentation.
class PartSpecError : public std::runtime_error {
 public:
  PartSpecError(std::string id, const std::string& message, int line, int column)
      : std::runtime_error(message), id_(std::move(id)), line_(line), column_(column) {}
  const std::string& id() const { return id_; }
  /// 1-based line of the netlist; 0 for the (one-line) expression language.
  int line() const { return line_; }
  /// 1-based column in characters (a "µ" counts as one).
  int column() const { return column_; }
  std::string hint() const { return "the part language is described in docs/parts.md"; }

 private:
  std::string id_;
  int line_ = 0;
  int column_ = 0;
};

/// Reads the expression language. Throws PartSpecError.
/// Example: parse_part("coil 1.5m r 0.42").netlist.elements.size() == 2.
PartSpec parse_part(std::string_view text);

/// Reads a SPICE-style R/L/C netlist between nodes p and n (or 1 and 0). Throws
/// PartSpecError; besides reading errors it refuses nodes that touch one element only
/// (usually a misspelt name) and elements with no path to the terminals.
/// Example: parse_netlist("R1 p x 0.42\nL1 x n 1.5m\n").kind == "network".
PartSpec parse_netlist(std::string_view text);

/// Short text for people: spec.description, or a summary of the netlist when that is empty
/// (a PartSpec put together by hand).
std::string describe(const PartSpec& spec);

}  // namespace tb::dsp
