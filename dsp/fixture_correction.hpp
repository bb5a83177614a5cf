// Open/short and open/short/load fixture compensation applied to an uncertain reading: the
// compensated value (compensation.hpp, Torrents & Pallas-Areny 2005) with its uncertainty
// budget carried through. The reading's own terms are scaled by dZdut/dZm; the open, short
// (and load) readings add their Type A (as real and imaginary terms); reconnecting the part
// after the short adds the contacts' repeatability, which acts like a change of the short.
//
// With a load standard the absolute scale comes from the load's known value, not from Rref:
// the reading loses its "rref_tolerance" term and gains "load_tolerance" (the load's
// tolerance, rectangular). Each connection (part, short, load) then adds its own contact
// term, since the load's contacts move as the part's do.
#pragma once

#include <complex>
#include <optional>

#include "dsp/uncertainty.hpp"

namespace tb::dsp {

/// A load standard: a part of known impedance measured on the jig like the part.
struct LoadStandard {
  UncertainComplex measured;   ///< the load as the bridge read it
  std::complex<double> known;  ///< its value as the user states it (nominal), ohm, != 0
  double tolerance_rel = 0;    ///< half-width of its relative tolerance, >= 0, rectangular
};

struct FixtureStandards {
  UncertainComplex open;    ///< the jig with nothing in it
  UncertainComplex short_;  ///< the jig's leads clipped together
  /// Half-width of the change of the leads' resistance (both contacts together) each time
  /// a part is reconnected, ohm; rectangular. A property of the jig the user states.
  double reconnect_half_width_ohm = 0;
  std::optional<LoadStandard> load;  ///< present: open/short/load, else open/short
};

/// Throws std::domain_error for degenerate standards (open equal to short or load, load
/// equal to short, a reading equal to the open).
/// Example: compensate(reading, {open, short_, 0.002, LoadStandard{load, 100.0, 1e-4}}).
UncertainComplex compensate(const UncertainComplex& measured, const FixtureStandards& standards);

}  // namespace tb::dsp
