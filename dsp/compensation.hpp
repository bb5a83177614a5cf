// Fixture compensation with the linear two-port fixture model
// (Torrents & Pallas-Areny, IEEE Trans. Instrum. Meas. 54(5), 2005).
// All impedances complex, in ohm, at one frequency. Degenerate standards throw
// std::domain_error: open == short, load == short, open == load, or a reading equal to the open.
#pragma once

#include <complex>

namespace tb::dsp {

/// Open/short: Zdut = (Zm - Zs) / (1 - (Zm - Zs) * Yo), Yo = 1 / (Zo - Zs).
/// z_open_ohm may be very large; an open of infinite impedance reduces to Zm - Zs.
std::complex<double> compensate_open_short(std::complex<double> z_meas, std::complex<double> z_open,
                                           std::complex<double> z_short);

/// Open/short/load: Zdut = Zstd (Zo - Zsm)(Zm - Zs) / [(Zsm - Zs)(Zo - Zm)], where
/// z_load_meas is the load standard as measured and z_load_true its known value.
std::complex<double> compensate_open_short_load(std::complex<double> z_meas,
                                                std::complex<double> z_open,
                                                std::complex<double> z_short,
                                                std::complex<double> z_load_meas,
                                                std::complex<double> z_load_true);

}  // namespace tb::dsp
