#include "dsp/impedance.hpp"

#include <algorithm>
#include <cctype>
#include <cmath>
#include <limits>
#include <numbers>
#include <string>

namespace tb::dsp {

namespace {

constexpr double kInf = std::numeric_limits<double>::infinity();

std::string lower(std::string_view text) {
  std::string out(text);
  std::transform(out.begin(), out.end(), out.begin(),
                 [](unsigned char c) { return static_cast<char>(std::tolower(c)); });
  return out;
}

}  // namespace

std::string_view part_kind_name(PartKind kind) {
  switch (kind) {
    case PartKind::capacitor:
      return "C";
    case PartKind::inductor:
      return "L";
    case PartKind::resistor:
      return "R";
  }
  return "R";
}

std::optional<PartKind> parse_part_kind(std::string_view text) {
  const std::string t = lower(text);
  if (t == "c" || t == "capacitor") return PartKind::capacitor;
  if (t == "l" || t == "inductor") return PartKind::inductor;
  if (t == "r" || t == "resistor") return PartKind::resistor;
  return std::nullopt;
}

ImpedanceValues derive(std::complex<double> z_ohm, double freq_hz) {
  const double w = 2.0 * std::numbers::pi * freq_hz;
  const double r = z_ohm.real();
  const double x = z_ohm.imag();

  ImpedanceValues v;
  v.freq_hz = freq_hz;
  v.r_ohm = r;
  v.x_ohm = x;
  v.mag_ohm = std::hypot(r, x);

  // atan2 gives -180 for a negative real axis approached from X = -0.0; the contract is
  // (-180, 180], so that direction is folded onto +180. Adding 0.0 turns -0 into +0.
  double theta = std::atan2(x, r) * (180.0 / std::numbers::pi) + 0.0;
  if (theta <= -180.0) theta = 180.0;
  v.theta_deg = theta;

  // The parallel values are written in terms of |Z|^2 rather than through D or Q, which
  // is algebraically the same (Cp = Cs/(1+D^2) = -X/(w|Z|^2), Lp = Ls(1+1/Q^2) =
  // |Z|^2/(wX)) but stays finite when D or Q is huge.
  const double mag2 = r * r + x * x;
  if (x < 0.0) {
    v.cs_f = -1.0 / (w * x);
    v.cp_f = -x / (w * mag2);
  } else if (x > 0.0) {
    v.ls_h = x / w;
    v.lp_h = mag2 / (w * x);
  }

  v.rp_ohm = (r == 0.0) ? kInf : mag2 / r;
  v.d = (x == 0.0) ? kInf : std::abs(r) / std::abs(x);
  v.q = (r == 0.0) ? kInf : std::abs(x) / std::abs(r);
  return v;
}

PartKind detect_kind(std::complex<double> z_ohm, double u_x_ohm) {
  const double r = z_ohm.real();
  const double x = z_ohm.imag();
  const double ax = std::abs(x);
  // A tenth of |R| keeps lossy parts (electrolytics reach D ~ 0.3) on the reactive side
  // while a resistor with a little lead inductance still reads R.
  if (ax < 0.1 * std::abs(r) || ax <= std::abs(u_x_ohm)) return PartKind::resistor;
  return x < 0.0 ? PartKind::capacitor : PartKind::inductor;
}

}  // namespace tb::dsp
