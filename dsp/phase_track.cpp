#include "dsp/phase_track.hpp"

#include <Eigen/Dense>
#include <cmath>
#include <numbers>
#include <vector>

namespace tb::dsp {

PhaseDrift measure_phase_drift(std::span<const std::complex<double>> phasors,
                               std::span<const std::size_t> starts, std::size_t block_len,
                               double sample_rate_hz) {
  PhaseDrift out;
  const std::size_t n = phasors.size();
  if (n < 3 || starts.size() != n) return out;
  std::vector<double> phase(n), t(n);
  phase[0] = std::arg(phasors[0]);
  for (std::size_t i = 1; i < n; ++i) {
    phase[i] = phase[i - 1] + std::arg(phasors[i] / phasors[i - 1]);
  }
  // Block centres in seconds, relative to the middle of the run.
  const double half = 0.5 * static_cast<double>(block_len);
  for (std::size_t i = 0; i < n; ++i)
    t[i] = (static_cast<double>(starts[i]) + half) / sample_rate_hz;
  const double mid = 0.5 * (t.front() + t.back());
  Eigen::MatrixXd a(static_cast<Eigen::Index>(n), 3);
  Eigen::VectorXd y(static_cast<Eigen::Index>(n));
  for (std::size_t i = 0; i < n; ++i) {
    const auto r = static_cast<Eigen::Index>(i);
    const double ti = t[i] - mid;
    a(r, 0) = 1;
    a(r, 1) = ti;
    a(r, 2) = ti * ti;
    y(r) = phase[i];
  }
  const Eigen::Vector3d c = a.colPivHouseholderQr().solve(y);
  // phase = c0 + 2 pi df t + pi beta t^2  =>  df = c1 / 2pi, beta = c2 / pi.
  out.freq_error_hz = c(1) / (2 * std::numbers::pi);
  out.freq_slope_hz_per_s = c(2) / std::numbers::pi;
  const Eigen::VectorXd resid = y - a * c;
  out.residual_rad = std::sqrt(resid.squaredNorm() / static_cast<double>(n));
  return out;
}

}  // namespace tb::dsp
