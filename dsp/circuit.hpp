// Circuit model of the simulated bench: modified nodal analysis (MNA) of a Netlist
// (netlist.hpp), solved exactly in AC steady state or stepped in the time domain.
//
// Nodes are numbered by the Circuit: index 0 is ground (node "0"), then every other node
// in the order it first appears in the element list. Voltages are volt relative to ground,
// currents ampere flowing from node_p to node_n through the element.
//
// Validation (at construction, CircuitError with a stable id, see below):
//   circuit.empty            no elements
//   circuit.bad_name         an element without a name
//   circuit.duplicate_name   two elements with the same name (case-sensitive)
//   circuit.bad_node         an empty node name
//   circuit.bad_value        R, L, C not finite and > 0; a source, initial voltage or
//                            saturation current not finite; a negative saturation current;
//                            an initial voltage on a non-capacitor or a saturation current
//                            on a non-inductor
//   circuit.shorted_element  an R, L or C with both terminals on one node
//   circuit.no_ground        no element touches node "0"
//   circuit.source_loop      voltage sources alone form a loop (their currents would be
//                            undetermined; also a source with both terminals on one node)
//   circuit.floating_node    a node without a DC path (through R, L or sources) to ground:
//                            its DC voltage is undefined, ngspice refuses it, and a node
//                            with no path at all makes the AC matrix singular
// and later, from a solve or a lookup:
//   circuit.singular         the matrix could not be solved (e.g. an exact series resonance
//                            of an ideal L and C with nothing else on their middle node)
//   circuit.unknown_node     node_index() of a name the circuit does not have
//   circuit.unknown_element  element_index() of a name the circuit does not have
// Bad call arguments (frequency, source count, sample rate) are std::invalid_argument;
// an index out of range is std::out_of_range.
//
// Usage:
//   Netlist net{{{ElementKind::voltage_source, "Vout", "s", "0", 0.0},
//                {ElementKind::resistor, "Rref", "s", "b", 1000.0},
//                {ElementKind::capacitor, "Cpart", "b", "0", 100e-9}}};
//   Circuit circuit(net);                               // validates
//   auto v = circuit.solve_ac(1000.0, {{1.0, 0.0}});    // v[circuit.node_index("b")]
//   TransientSolver sim(circuit, 48000.0, 8);
//   const std::size_t b = sim.node_index("b");
//   for (double x : samples) { sim.step({&x, 1}); out.push_back(sim.voltage(b)); }
#pragma once

#include <complex>
#include <cstddef>
#include <map>
#include <span>
#include <stdexcept>
#include <string>
#include <string_view>
#include <vector>

#include "dsp/netlist.hpp"

namespace tb::dsp {

/// A netlist the circuit model cannot use, or a failed solve. id() is stable (see the list
/// above); what() is the whole text: what is wrong, naming the element or node, then what
/// to do about it (also available separately as message() and hint()).
class CircuitError : public std::runtime_error {
 public:
  CircuitError(std::string id, const std::string& message, const std::string& hint)
      : std::runtime_error(message + ". " + hint + "."),
        id_(std::move(id)),
        message_(message),
        hint_(hint) {}
  const std::string& id() const { return id_; }
  const std::string& message() const { return message_; }
  const std::string& hint() const { return hint_; }

 private:
  std::string id_, message_, hint_;
};

/// A validated netlist with its nodes numbered. Immutable; cheap to copy for small circuits.
class Circuit {
 public:
  /// Validates and numbers the netlist. Throws CircuitError (ids above).
  explicit Circuit(Netlist netlist);

  const Netlist& netlist() const { return netlist_; }
  const std::vector<Element>& elements() const { return netlist_.elements; }

  /// Number of nodes including ground (index 0).
  std::size_t node_count() const { return node_names_.size(); }
  const std::string& node_name(std::size_t node) const { return node_names_.at(node); }
  /// Index of a node by name ("0" gives 0). Throws CircuitError circuit.unknown_node.
  std::size_t node_index(std::string_view name) const;
  /// Index into elements() by name. Throws CircuitError circuit.unknown_element.
  std::size_t element_index(std::string_view name) const;

  /// Node indices of element e's terminals.
  std::size_t node_p(std::size_t element) const { return terminals_.at(element).first; }
  std::size_t node_n(std::size_t element) const { return terminals_.at(element).second; }

  /// Voltage sources in netlist order: the order of source phasors and source values.
  std::size_t source_count() const { return sources_.size(); }
  /// Element index of the k-th voltage source.
  std::size_t source_element(std::size_t k) const { return sources_.at(k); }

  /// Exact AC steady state at freq_hz (finite, > 0) with the k-th voltage source at phasor
  /// source_phasors[k] (volt, peak or rms as the caller likes: the circuit is linear).
  /// Inductors take their small-signal value (saturation ignored), capacitors' initial
  /// voltages play no part. Returns node_count() phasors indexed by node, [0] = ground = 0.
  /// Throws std::invalid_argument for a bad frequency or a phasor count other than
  /// source_count(), CircuitError circuit.singular when the matrix cannot be solved.
  std::vector<std::complex<double>> solve_ac(
      double freq_hz, const std::vector<std::complex<double>>& source_phasors) const;

 private:
  Netlist netlist_;
  std::vector<std::string> node_names_;
  std::map<std::string, std::size_t, std::less<>> node_lookup_;
  std::map<std::string, std::size_t, std::less<>> element_lookup_;
  std::vector<std::pair<std::size_t, std::size_t>> terminals_;
  std::vector<std::size_t> sources_;
};

/// Time-domain stepper: trapezoidal integration with companion models at a fixed internal step
/// dt = 1 / (sample_rate_hz * oversample).
///
/// The caller gives one set of source values per audio sample; step() advances one sample
/// period in `oversample` internal steps, the sources interpolated linearly between the
/// previous sample's values and the new ones (so the sources are piecewise linear in time; a
/// band-limited DAC output is not: see the note on images below).
///
/// Start (constructor and reset()): t = 0, every capacitor at its initial_voltage_v, every
/// inductor current 0, sources at their netlist `value` (or the values given to reset()). The
/// node voltages and capacitor currents consistent with that state are found from
/// backward-Euler steps of 1e-3 dt and 2e-3 dt from it, extrapolated to zero length (error of
/// order (1e-3 dt / tau)^2 for a time constant tau), so that trapezoidal integration starts
/// without the spurious ringing an inconsistent start would leave. A charged capacitor in a
/// loop of capacitors and voltage sources whose voltages disagree is a physical impossibility
/// (an infinite current); the model absorbs it in that first step and the loop current rings,
/// the node voltages do not.
///
/// Speed: the MNA matrix is constant, so it is factorised once (dense LU) and reduced to a
/// small matrix from the reactive elements' history sources and the source values to the
/// voltages across the reactive elements. A linear circuit goes further: the `oversample`
/// trapezoidal steps of a sample period compose to one affine map (same arithmetic, up to
/// rounding), so a sample costs (R + node_count() + S) * (R + 2 S) multiply-adds whatever the
/// oversampling (R reactive elements, S sources): a 6-node jig with 4 reactive elements runs at
/// about 500 x real time at 48 kHz (one core, -O2).
///
/// Saturating inductors (saturation_current_a > 0): L(i) is taken as the incremental inductance
/// dflux/di = L / (1 + (i / i_sat)^2), so the flux tends to L i_sat pi / 2 (a core that
/// saturates, with no air-core remainder: beyond that flux only the rest of the circuit limits
/// the current). Each internal step uses the companion conductance dt / (2 L(i)) at the current
/// extrapolated to the step's midpoint from the last two steps (1.5 i(n) - 0.5 i(n-1)) instead
/// of solving the nonlinear step exactly: an error second order in dt (2.5e-6 of the peak at 3
/// x i_sat, 100 Hz, 48 kHz x 8; the present current alone would give 3e-3). No refactorisation:
/// the fixed factorisation holds the small-signal conductance and the difference enters through
/// a Schur complement of size (number of saturating inductors), solved exactly every step. Such
/// circuits are stepped internal step by internal step: the same jig with its coil saturating
/// runs at about 65 x real time at 48 kHz x 8, 8 x at x 64. Deep in saturation the inductance
/// falls by (i / i_sat)^2 and the circuit's time constants with it: dt must resolve them (a 2
/// mH coil at 28 x i_sat resonating with 1 uF needed 4 x the oversampling of the linear case to
/// converge).
///
/// Accuracy notes:
///  - Linear interpolation between samples is not what a sound card's DAC puts out: it has
///    images at k fs +- f of relative size sinc^2(k -+ f / fs), and sampling at fs folds
///    them back onto f. Where the circuit responds differently there than at f, a lock-in
///    ratio at f is off: 1.4e-3 at 1 kHz on the nodes behind a 1 uF part in the tests; in
///    a part-low jig (47 ohm out, Rref 100 ohm) a 4.7 uF capacitor reads 3.7 % high at
///    5 kHz and its 0.05 ohm ESR as 0.061 ohm at any frequency. The error grows as
///    (f / fs)^2. step_oversampled() with a band-limited upsampled excitation avoids it
///    (then 1.5e-5 at 1 kHz, the trapezoidal frequency warping (w dt)^2 / 12).
///  - Trapezoidal integration sees the circuit at a slightly higher frequency than the
///    excitation's, f (1 + (2 pi f dt)^2 / 12) (its frequency warping): a reactance is off by
///    5.6e-4 at 5 kHz and 9e-3 at 20 kHz with 48 kHz x 8, 1.4e-4 at 20 kHz with x 64. For
///    a linear circuit step() costs the same at any oversampling, so prefer 32 to 64.
///  - Trapezoidal integration is A-stable but not L-stable: a mode with a time constant
///    far below dt (e.g. 100 pF fed from a few ohms) alternates in sign and decays only
///    slowly when excited. With a consistent start and smooth sources it is hardly excited
///    (a card input of 100 pF behind 47 ohm, tau = dt / 70, still agrees with ngspice to
///    1e-5); a switched source would excite it.
class TransientSolver {
 public:
  /// sample_rate_hz finite and > 0; oversample in [1, 4096]. Throws std::invalid_argument,
  /// CircuitError circuit.singular if the companion matrix cannot be factorised.
  TransientSolver(const Circuit& circuit, double sample_rate_hz, int oversample);

  /// Advances one sample period to the next sample, where the k-th voltage source has
  /// source_values_at_next_sample[k] (volt; size == source_count(), finite).
  /// Throws std::invalid_argument otherwise (the state is unchanged then).
  void step(std::span<const double> source_values_at_next_sample);

  /// Advances one sample period like step(), with the sources given at every internal
  /// step instead of interpolated: values[j * source_count() + k] is source k at the end of
  /// internal step j + 1, j = 0 .. oversample - 1 (the last row is the next sample). For a
  /// band-limited excitation (see the note on images): upsample the DAC signal with a
  /// proper interpolation filter and pass each sample period's `oversample` values here.
  /// Costs (R + node_count() + S) * (R + oversample S) multiply-adds per sample for a
  /// linear circuit. Throws std::invalid_argument for a size other than oversample *
  /// source_count() or a non-finite value (the state is unchanged then).
  void step_oversampled(std::span<const double> values);

  /// Back to t = 0 (see above), sources at their netlist values / at the given values
  /// (size == source_count(), finite; std::invalid_argument otherwise).
  void reset();
  void reset(std::span<const double> source_values_at_t0);

  /// Node voltage (V) at the present sample; voltage(0) is ground. std::out_of_range.
  double voltage(std::size_t node) const;
  /// Current (A) from node_p to node_n through element `element` (an index into the
  /// circuit's elements) at the present sample; for a voltage source, the current that
  /// flows through it from its p terminal to its n terminal. std::out_of_range.
  double current(std::size_t element) const;

  std::size_t node_index(std::string_view name) const { return circuit_.node_index(name); }
  std::size_t element_index(std::string_view name) const { return circuit_.element_index(name); }
  std::size_t node_count() const { return circuit_.node_count(); }
  std::size_t source_count() const { return circuit_.source_count(); }

  /// Samples stepped since the start; the present time is samples() / sample_rate_hz().
  std::size_t samples() const { return samples_; }
  double sample_rate_hz() const { return sample_rate_hz_; }
  int oversample() const { return oversample_; }
  double internal_step_s() const { return dt_; }

 private:
  void check_sources(std::span<const double> values, const char* what) const;
  void step_linear(std::span<const double> next, std::span<const double> fine);
  void step_general(std::span<const double> next, std::span<const double> fine);

  Circuit circuit_;
  double sample_rate_hz_;
  int oversample_;
  double dt_;
  std::size_t unknowns_;  // MNA unknowns: node_count() - 1 node voltages, then source currents
  std::size_t reactive_;  // R
  std::size_t sources_;   // S

  // Per element: its index among the reactive elements (L, C) or among the sources (V).
  std::vector<std::size_t> role_;

  // Reactive elements (capacitors, inductors), in netlist order.
  std::vector<std::size_t> r_element_;  // element index
  std::vector<char> r_is_cap_;
  std::vector<double> r_g_;      // companion conductance (small-signal for inductors)
  std::vector<double> r_isat2_;  // 1 / i_sat^2, 0 for linear elements
  std::vector<std::size_t> r_row_p_, r_row_n_;  // MNA rows of the terminals (npos: ground)
  std::vector<std::size_t> sat_;  // indices (into the reactive list) of saturating inductors

  // Reduced matrices, row-major, columns = [history sources b (R) | source values (S)].
  std::vector<double> w_;        // R x (R+S): voltages across the reactive elements
  std::vector<double> out_;      // unknowns x (R+S): node voltages and source currents
  std::vector<double> z_sat_;    // R x M: Z[:, sat] (driving-point/transfer impedances)
  std::vector<double> out_sat_;  // unknowns x M: A^-1 C[:, sat]
  // Linear circuits (no saturating inductor): one sample period as one affine map, columns
  // = [history sources at the period's start (R) | previous source values | next ones].
  std::vector<double> fast_b_;  // R x (R+2S): history sources at the period's end
  std::vector<double> fast_x_;  // unknowns x (R+2S): node voltages, source currents
  // The same with the sources given at every internal step: columns = [history (R) |
  // source values at internal steps 1 .. oversample (oversample x S)].
  std::vector<double> fine_b_;  // R x (R + oversample S)
  std::vector<double> fine_x_;  // unknowns x (R + oversample S)

  // Start, linear in [1, source values at t = 0]: row-major, 1 + S columns.
  std::vector<double> start_x_;  // unknowns
  std::vector<double> start_v_;  // voltages across the reactive elements
  std::vector<double> start_i_;  // currents through them

  // State at the present sample.
  std::vector<double> v_, i_;   // per reactive element: voltage across it, current through it
  std::vector<double> i_prev_;  // currents one internal step earlier (saturating inductors)
  std::vector<double> x_;       // unknowns
  std::vector<double> src_;     // source values
  std::size_t samples_ = 0;

  // Scratch for step(), sized once.
  std::vector<double> u_, v0_, dv_, g_step_, sat_mat_, sat_rhs_;
};

}  // namespace tb::dsp
