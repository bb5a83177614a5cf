#include "dsp/compensation.hpp"

#include <cmath>
#include <stdexcept>

namespace tb::dsp {

using cplx = std::complex<double>;

namespace {

bool is_infinite(cplx z) {
  return std::isinf(z.real()) || std::isinf(z.imag());
}

}  // namespace

// Errors: std::domain_error when the standards cannot define a fixture (open equal to
// short, load measured equal to short) or when the reading equals the open, which maps
// to an unbounded DUT impedance.
cplx compensate_open_short(cplx z_meas, cplx z_open, cplx z_short) {
  const cplx dz = z_meas - z_short;
  if (is_infinite(z_open)) return dz;
  const cplx open_minus_short = z_open - z_short;
  if (open_minus_short == cplx{}) {
    throw std::domain_error("open/short compensation: open and short readings are equal");
  }
  const cplx open_minus_meas = z_open - z_meas;
  if (open_minus_meas == cplx{}) {
    throw std::domain_error("open/short compensation: reading equals the open, DUT is unbounded");
  }
  // (Zm - Zs) / (1 - (Zm - Zs) Yo) multiplied through by (Zo - Zs): the same value without
  // forming 1 - x, which loses digits when the part is nearly as high as the open.
  return dz * open_minus_short / open_minus_meas;
}

cplx compensate_open_short_load(cplx z_meas, cplx z_open, cplx z_short, cplx z_load_meas,
                                cplx z_load_true) {
  const cplx load_minus_short = z_load_meas - z_short;
  if (load_minus_short == cplx{}) {
    throw std::domain_error("open/short/load compensation: load and short readings are equal");
  }
  if (is_infinite(z_open)) {
    // (Zo - Zsm) / (Zo - Zm) -> 1 for an ideal open; evaluating it directly gives inf/inf.
    return z_load_true * (z_meas - z_short) / load_minus_short;
  }
  if (z_open == z_short || z_open == z_load_meas) {
    throw std::domain_error("open/short/load compensation: open reading equals short or load");
  }
  const cplx open_minus_meas = z_open - z_meas;
  if (open_minus_meas == cplx{}) {
    throw std::domain_error(
        "open/short/load compensation: reading equals the open, DUT is unbounded");
  }
  return z_load_true * (z_open - z_load_meas) * (z_meas - z_short) /
         (load_minus_short * open_minus_meas);
}

}  // namespace tb::dsp
