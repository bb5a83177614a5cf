#include "dsp/window.hpp"

#include <catch2/catch.hpp>

using namespace tb::dsp;

TEST_CASE("window noise bandwidths match the published values", "[window]") {
  // Source: Harris, "On the use of windows...", Proc. IEEE 66(1), 1978, Table 1:
  // rectangular 1.00, Hann 1.50, 4-term Blackman-Harris (-92 dB) 2.00 bins.
  const std::size_t n = 4096;
  CHECK(noise_bandwidth_bins(make_window(Window::rectangular, n)) == Approx(1.00).margin(1e-9));
  CHECK(noise_bandwidth_bins(make_window(Window::hann, n)) == Approx(1.50).margin(1e-3));
  CHECK(noise_bandwidth_bins(make_window(Window::blackman_harris4, n)) ==
        Approx(2.00).margin(5e-3));
}

TEST_CASE("windows are periodic so whole-period blocks stay coherent", "[window]") {
  const auto w = make_window(Window::hann, 8);
  CHECK(w[0] == Approx(0.0).margin(1e-15));
  CHECK(w[4] == Approx(1.0));
  CHECK(w[2] == Approx(w[6]));
}

TEST_CASE("window names parse back", "[window]") {
  for (auto w : {Window::rectangular, Window::hann, Window::blackman_harris4}) {
    CHECK(parse_window(window_name(w)) == w);
  }
  CHECK_FALSE(parse_window("triangle").has_value());
}
