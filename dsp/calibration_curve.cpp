#include "dsp/calibration_curve.hpp"

#include <algorithm>
#include <cmath>
#include <numbers>
#include <stdexcept>
#include <string>
#include <vector>

namespace tb::dsp {

namespace {

constexpr double kMatchTolerance = 1e-3;  // relative: a frequency this close is that point
constexpr double kIdealOpenOhm = 1e18;

// Where a frequency falls on the grid: exactly on point k, or inside interval (k, k + 1)
// at t = position in log f, 0 < t < 1.
struct Place {
  std::size_t k = 0;
  double t = 0;
  bool exact = false;
};

template <class P>
std::optional<Place> locate(std::span<const P> grid, double freq_hz) {
  for (std::size_t i = 0; i < grid.size(); ++i) {
    if (!(grid[i].freq_hz > 0) || (i > 0 && !(grid[i].freq_hz > grid[i - 1].freq_hz)))
      throw std::invalid_argument("calibration grid: frequencies must be > 0 and ascending");
  }
  if (grid.empty() || !(freq_hz > 0)) return std::nullopt;
  for (std::size_t i = 0; i < grid.size(); ++i) {
    if (std::abs(freq_hz - grid[i].freq_hz) <= kMatchTolerance * grid[i].freq_hz)
      return Place{i, 0, true};
  }
  // Between points needs a curvature estimate, i.e. three points.
  if (grid.size() < 3 || freq_hz < grid.front().freq_hz || freq_hz > grid.back().freq_hz)
    return std::nullopt;
  std::size_t k = 0;
  while (grid[k + 1].freq_hz < freq_hz)
    ++k;
  const double t =
      std::log(freq_hz / grid[k].freq_hz) / std::log(grid[k + 1].freq_hz / grid[k].freq_hz);
  return Place{k, t, false};
}

// PCHIP slope at node i (Fritsch & Butland 1984 weighted harmonic mean inside; the
// three-point end formula with the Fritsch-Carlson shape limits at the ends).
double pchip_slope(std::span<const double> x, std::span<const double> y, std::size_t i) {
  const std::size_t n = x.size();
  auto h = [&](std::size_t j) { return x[j + 1] - x[j]; };
  auto d = [&](std::size_t j) { return (y[j + 1] - y[j]) / h(j); };
  if (i == 0 || i == n - 1) {
    const std::size_t a = i == 0 ? 0 : n - 2;  // the end interval
    const std::size_t b = i == 0 ? 1 : n - 3;  // its neighbour
    const double h0 = h(a), h1 = h(b), d0 = d(a), d1 = d(b);
    double m = ((2 * h0 + h1) * d0 - h0 * d1) / (h0 + h1);
    if (m * d0 <= 0) {
      m = 0;
    } else if (d0 * d1 <= 0 && std::abs(m) > 3 * std::abs(d0)) {
      m = 3 * d0;
    }
    return m;
  }
  const double d0 = d(i - 1), d1 = d(i);
  if (d0 * d1 <= 0) return 0;  // a local extremum: flat, so the curve cannot overshoot
  const double w1 = 2 * h(i) + h(i - 1), w2 = h(i) + 2 * h(i - 1);
  return (w1 + w2) / (w1 / d0 + w2 / d1);
}

struct Interpolated {
  double value = 0;
  double half_width = 0;
};

double hermite(std::span<const double> x, std::span<const double> y, std::size_t k, double m0,
               double m1, double t) {
  const double h = x[k + 1] - x[k];
  const double t2 = t * t, t3 = t2 * t;
  return (2 * t3 - 3 * t2 + 1) * y[k] + (t3 - 2 * t2 + t) * h * m0 + (-2 * t3 + 3 * t2) * y[k + 1] +
         (t3 - t2) * h * m1;
}

// Slope at node k of the polynomial through the (up to) five grid points nearest it:
// accurate to O(h^4) inside the grid on smooth data, far better than PCHIP's own slopes.
double polynomial_slope(std::span<const double> x, std::span<const double> y, std::size_t k) {
  const std::size_t n = x.size();
  const std::size_t first = n <= 5 ? 0 : std::min(k >= 2 ? k - 2 : 0, n - 5);
  const std::size_t last = std::min(n - 1, first + 4);
  double slope = 0;
  for (std::size_t i = first; i <= last; ++i) {
    double d = 0;  // L_i'(x_k), the Lagrange basis polynomial's slope
    if (i == k) {
      for (std::size_t j = first; j <= last; ++j)
        if (j != k) d += 1 / (x[k] - x[j]);
    } else {
      d = 1 / (x[i] - x[k]);
      for (std::size_t j = first; j <= last; ++j)
        if (j != i && j != k) d *= (x[k] - x[j]) / (x[i] - x[j]);
    }
    slope += d * y[i];
  }
  return slope;
}

// PCHIP value inside interval k at position t (0 < t < 1), and the interpolation
// half-width.
//
// A cubic Hermite piece takes its values exactly from the points; its error comes from its
// two end slopes (with exact slopes the remainder is h^4/384 times the fourth derivative,
// far smaller), and a slope error dm at the left point moves the curve by h dm t(1 - t)^2,
// at the right by -h dm t^2 (1 - t). The slope errors are estimated against the slope of
// the polynomial through the five nearest points, and the half-width adds both effects by
// their magnitudes, tripled, and doubled again for a slope at an end of the grid (one-sided
// on both counts): a bound, not a correction (the polynomial's slope has errors of its own,
// and where the curve bends too fast for the grid the half-width grows, as it should).
// Tripled because doubled fell short by up to 1.4x in one interval of ten on the high-pass
// test; as it is, the half-width came out 1.2-7x the worst true error of each interval. It
// vanishes on the points and, unlike the true error, does not pass through zero inside the
// interval. Rectangular: a bound with no preferred value inside it.
// The simpler estimate, the straight line against the three-point quadratic, is the
// straight line's own error; on a first-order high-pass sampled 3 per decade it came out
// 10-50 times wider than PCHIP's true error (tests/dsp/calibration_curve_test.cpp).
Interpolated interpolate(std::span<const double> x, std::span<const double> y, std::size_t k,
                         double t) {
  const double m0 = pchip_slope(x, y, k), m1 = pchip_slope(x, y, k + 1);
  const double h = x[k + 1] - x[k];
  // At an end of the grid both slopes are one-sided guesses: their difference counts twice.
  const double end0 = k == 0 ? 2 : 1, end1 = k + 2 == x.size() ? 2 : 1;
  const double d0 = end0 * std::abs(m0 - polynomial_slope(x, y, k));
  const double d1 = end1 * std::abs(m1 - polynomial_slope(x, y, k + 1));
  return {hermite(x, y, k, m0, m1, t), 3 * h * (d0 * t * (1 - t) * (1 - t) + d1 * t * t * (1 - t))};
}

// A real-linear map of the complex plane: a change (Re, Im) into a change (Re, Im).
struct Map2 {
  double a = 1, b = 0, c = 0, d = 1;  // [a b; c d]
  std::complex<double> operator()(std::complex<double> z) const {
    return {a * z.real() + b * z.imag(), c * z.real() + d * z.imag()};
  }
  Cov2 operator()(const Cov2& s) const {  // M S M^T
    const double r0 = a * s.rr + b * s.ri, r1 = a * s.ri + b * s.ii;
    const double i0 = c * s.rr + d * s.ri, i1 = c * s.ri + d * s.ii;
    return {r0 * a + r1 * b, r0 * c + r1 * d, i0 * c + i1 * d};
  }
};

Map2 times(std::complex<double> s) {  // multiplication by a complex number
  return {s.real(), -s.imag(), s.imag(), s.real()};
}

Map2 operator*(const Map2& p, const Map2& q) {
  return {p.a * q.a + p.b * q.c, p.a * q.b + p.b * q.d, p.c * q.a + p.d * q.c,
          p.c * q.b + p.d * q.d};
}

// The two components an impedance standard is interpolated in, as functions of Z at omega,
// and the way back; plus, for the uncertainty, the real-linear map from a change of Z to a
// change of the components (Jacobian in) and back (Jacobian out).
struct Model {
  // Components (c1, c2) of z at omega; for the open (G, C), for the short (R, L).
  std::complex<double> (*to)(std::complex<double> z, double w);
  std::complex<double> (*from)(std::complex<double> c, double w);
  Map2 (*jac_in)(std::complex<double> z, double w);   // dZ -> dc
  Map2 (*jac_out)(std::complex<double> z, double w);  // dc -> dZ
  const char* name1;
  const char* name2;
};

bool ideal_open(std::complex<double> z) {
  return std::abs(z) >= kIdealOpenOhm;
}

const Model kShunt{
    [](std::complex<double> z, double w) {
      if (ideal_open(z)) return std::complex<double>{};
      const auto y = 1.0 / z;
      return std::complex<double>{y.real(), y.imag() / w};
    },
    [](std::complex<double> c, double w) {
      const std::complex<double> y{c.real(), c.imag() * w};
      return std::abs(y) * kIdealOpenOhm <= 1 ? std::complex<double>{kIdealOpenOhm, 0} : 1.0 / y;
    },
    [](std::complex<double> z, double w) {
      if (ideal_open(z)) return Map2{0, 0, 0, 0};
      return Map2{1, 0, 0, 1 / w} * times(-1.0 / (z * z));
    },
    [](std::complex<double> z, double w) {
      return times(-(z * z)) * Map2{1, 0, 0, w};
    },
    "interpolation_g",
    "interpolation_c"};

const Model kSeries{[](std::complex<double> z, double w) {
                      return std::complex<double>{z.real(), z.imag() / w};
                    },
                    [](std::complex<double> c, double w) {
                      return std::complex<double>{c.real(), c.imag() * w};
                    },
                    [](std::complex<double>, double w) {
                      return Map2{1, 0, 0, 1 / w};
                    },
                    [](std::complex<double>, double w) {
                      return Map2{1, 0, 0, w};
                    },
                    "interpolation_r",
                    "interpolation_l"};

double omega(double freq_hz) {
  return 2 * std::numbers::pi * freq_hz;
}

std::optional<UncertainComplex> interpolate_standard(std::span<const ImpedancePoint> grid,
                                                     double freq_hz, const Model& model) {
  const auto place = locate(grid, freq_hz);
  if (!place) return std::nullopt;
  if (place->exact) return grid[place->k].z;

  std::vector<double> x, c1, c2;
  for (const auto& p : grid) {
    const auto c = model.to(p.z.value, omega(p.freq_hz));
    x.push_back(std::log10(p.freq_hz));
    c1.push_back(c.real());
    c2.push_back(c.imag());
  }
  const std::size_t k = place->k;
  const double t = place->t, w = omega(freq_hz);
  const auto i1 = interpolate(x, c1, k, t), i2 = interpolate(x, c2, k, t);
  UncertainComplex out;
  out.value = model.from({i1.value, i2.value}, w);
  const bool open_result = model.to == kShunt.to && ideal_open(out.value);
  const Map2 back = model.jac_out(out.value, w);

  // The bracketing points, each weighted by its linear interpolation weight.
  double u_a[2] = {0, 0}, nu_a[2] = {0, 0};
  for (int j = 0; j < 2 && !open_result; ++j) {
    const auto& p = grid[k + static_cast<std::size_t>(j)];
    const double weight = j == 0 ? 1 - t : t;
    const Map2 in = model.jac_in(p.z.value, omega(p.freq_hz));
    const Map2 m = back * Map2{weight, 0, 0, weight} * in;
    const Cov2 s = m(p.z.type_a);
    out.type_a.rr += s.rr;
    out.type_a.ri += s.ri;
    out.type_a.ii += s.ii;
    u_a[j] = std::sqrt(s.rr + s.ii);
    nu_a[j] = p.z.dof_a;
    for (const auto& term : p.z.type_b) {
      // The same named input with the same u on both points (the same reference resistor's
      // tolerance, say) is one input that moves both: its sensitivities add.
      const auto same = std::find_if(out.type_b.begin(), out.type_b.end(), [&](const auto& o) {
        return j == 1 && o.name == term.name && o.u == term.u;
      });
      if (same != out.type_b.end()) {
        same->sensitivity += m(term.sensitivity);
      } else {
        out.type_b.push_back({term.name, m(term.sensitivity), term.u, term.dof});
      }
    }
  }
  const double nu = welch_satterthwaite(u_a, nu_a);
  out.dof_a = (nu_a[0] > 0 || nu_a[1] > 0) && std::isfinite(nu) ? nu : 0;
  if (!open_result) {
    if (i1.half_width > 0)
      out.type_b.push_back(
          {model.name1, back(std::complex<double>{1, 0}), rectangular_u(i1.half_width)});
    if (i2.half_width > 0)
      out.type_b.push_back(
          {model.name2, back(std::complex<double>{0, 1}), rectangular_u(i2.half_width)});
  }
  return out;
}

}  // namespace

double MatchEstimate::total_gain_u_rel() const {
  return std::hypot(u_gain_rel, rectangular_u(interp_gain_half_rel));
}

double MatchEstimate::total_phase_u_rad() const {
  return std::hypot(u_phase_rad, rectangular_u(interp_phase_half_rad));
}

std::optional<MatchEstimate> interpolate_match(std::span<const MatchPoint> grid, double freq_hz) {
  const auto place = locate(grid, freq_hz);
  if (!place) return std::nullopt;
  MatchEstimate out;
  if (place->exact) {
    const auto& p = grid[place->k];
    out.h = p.h;
    out.u_gain_rel = p.u_gain_rel;
    out.u_phase_rad = p.u_phase_rad;
    out.on_grid_point = true;
    return out;
  }
  std::vector<double> x, gain_db, phase;
  for (const auto& p : grid) {
    x.push_back(std::log10(p.freq_hz));
    gain_db.push_back(20 * std::log10(std::abs(p.h)));
    // Unwrapped: each step taken as the shortest turn from the previous point.
    const double a = std::arg(p.h);
    phase.push_back(
        phase.empty() ? a : phase.back() + std::remainder(a - phase.back(), 2 * std::numbers::pi));
  }
  const std::size_t k = place->k;
  const double t = place->t;
  const auto g = interpolate(x, gain_db, k, t), ph = interpolate(x, phase, k, t);
  out.h = std::polar(std::pow(10.0, g.value / 20), ph.value);
  // dB to relative: d|H|/|H| = ln(10)/20 * d(dB).
  out.interp_gain_half_rel = g.half_width * std::numbers::ln10 / 20;
  out.interp_phase_half_rad = ph.half_width;
  const auto& p0 = grid[k];
  const auto& p1 = grid[k + 1];
  out.u_gain_rel = std::hypot((1 - t) * p0.u_gain_rel, t * p1.u_gain_rel);
  out.u_phase_rad = std::hypot((1 - t) * p0.u_phase_rad, t * p1.u_phase_rad);
  return out;
}

std::optional<UncertainComplex> interpolate_open(std::span<const ImpedancePoint> grid,
                                                 double freq_hz) {
  return interpolate_standard(grid, freq_hz, kShunt);
}

std::optional<UncertainComplex> interpolate_short(std::span<const ImpedancePoint> grid,
                                                  double freq_hz) {
  return interpolate_standard(grid, freq_hz, kSeries);
}

std::optional<UncertainComplex> interpolate_load(std::span<const ImpedancePoint> grid,
                                                 double freq_hz) {
  return interpolate_standard(grid, freq_hz, kSeries);
}

}  // namespace tb::dsp
