// The whole sequence of one corrected reading on the simulated bench, which can rewire its
// own jig: channel match (both inputs on node A), open (nothing on the jig), short (leads
// clipped together), optionally a load (a resistor of known value), then the part, every
// step at the request's frequency, Rref and layout. On a real card these are guided steps the user
// makes (a later calibration workflow); the bench makes them itself so the corrections can be
// tested.
#pragma once

#include <optional>

#include "dsp/netlist.hpp"
#include "server/measurement.hpp"
#include "server/simulated_card.hpp"

namespace tb {

struct BenchCorrections {
  bool channel_match = true;
  bool open_short = true;
  /// Repeatability of the two contacts together when a part is reconnected, half-width,
  /// ohm (a jig property the user states; default: 1 mohm per clip, common practice,
  /// no source).
  double reconnect_half_width_ohm = 0.002;
  /// Open/short/load: the load standard's nominal value, ohm (> 0), as the user enters it.
  /// A resistor near Rref is the usual choice (common practice, no source). Needs open_short.
  std::optional<double> load_ohm;
  /// Half-width of the load's relative tolerance, rectangular (>= 0).
  double load_tolerance_rel = 1e-3;
  /// The load's true value in the bench's netlist, ohm; unset = the nominal value. Hidden
  /// from the compensation, which sees only load_ohm and load_tolerance_rel.
  std::optional<double> load_true_ohm;
};

/// The jig with nothing in it: its clips stay, a 1 Tohm leakage keeps their nodes defined.
dsp::Netlist open_jig();
/// The jig's clips touching: only the leads remain (plus a micro-ohm link).
dsp::Netlist shorted_jig();

/// A resistor of `ohm` (> 0) between the jig's clips: the load standard.
dsp::Netlist load_jig(double ohm);

/// Measures `part` after the corrections asked for; leaves the part connected.
/// Throws std::invalid_argument for a load without open_short or a load value <= 0.
MeasureResult measure_on_bench(SimulatedCard& card, const dsp::JigSetup& jig,
                               const dsp::Netlist& part, const MeasureRequest& request,
                               const BenchCorrections& corrections);

}  // namespace tb
