// Open/short fixture compensation applied to an uncertain reading: the compensated value
// (compensation.hpp, Torrents & Pallas-Areny 2005) with its uncertainty budget carried
// through. The reading's own terms are scaled by dZdut/dZm; the open and short readings
// add their Type A (as real and imaginary terms); reconnecting the part after the short
// adds the contacts' repeatability, which acts like a change of the short.
#pragma once

#include "dsp/uncertainty.hpp"

namespace tb::dsp {

struct FixtureStandards {
  UncertainComplex open;    ///< the jig with nothing in it
  UncertainComplex short_;  ///< the jig's leads clipped together
  /// Half-width of the change of the leads' resistance (both contacts together) each time
  /// a part is reconnected, ohm; rectangular. A property of the jig the user states.
  double reconnect_half_width_ohm = 0;
};

/// Throws std::domain_error for degenerate standards (open equal to short, a reading equal
/// to the open).
UncertainComplex compensate(const UncertainComplex& measured, const FixtureStandards& standards);

}  // namespace tb::dsp
