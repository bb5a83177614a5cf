#include "dsp/sine_fit.hpp"

#include <Eigen/Dense>
#include <cmath>
#include <numbers>
#include <stdexcept>
#include <vector>

namespace tb::dsp {

SineFitResult fit_sines(std::span<const double> x, std::span<const double> freq_guess_hz,
                        const SineFitConfig& config) {
  const std::size_t k_tones = freq_guess_hz.size();
  if (k_tones == 0) throw std::invalid_argument("sine fit: no frequency to fit");
  const double fs = config.sample_rate_hz;
  for (double f : freq_guess_hz) {
    if (!(f > 0) || !(f < 0.5 * fs))
      throw std::invalid_argument("sine fit: frequency outside (0, fs/2)");
  }
  const std::size_t n = std::min(x.size(), config.max_samples);
  const auto p = static_cast<Eigen::Index>(3 * k_tones + 1);
  if (n < static_cast<std::size_t>(p)) throw std::invalid_argument("sine fit: too few samples");
  const auto seg = x.subspan((x.size() - n) / 2, n);
  // Time is centred on the segment and scaled by 1/n in the frequency column, which keeps
  // the normal equations well conditioned.
  const double centre = 0.5 * static_cast<double>(n - 1);
  const double tscale = static_cast<double>(n);

  std::vector<double> omega(k_tones);  // rad/sample
  for (std::size_t k = 0; k < k_tones; ++k)
    omega[k] = 2 * std::numbers::pi * freq_guess_hz[k] / fs;
  Eigen::VectorXd ab = Eigen::VectorXd::Zero(static_cast<Eigen::Index>(2 * k_tones));
  double offset = 0;

  SineFitResult out;
  constexpr Eigen::Index chunk = 512;
  Eigen::MatrixXd jac(chunk, p);
  Eigen::VectorXd rhs_chunk(chunk);
  std::vector<std::complex<double>> phasor(k_tones), advance(k_tones);
  // Iteration 0 is the linear three-parameter fit at the guessed frequencies (frequency
  // columns left out); later iterations are the four-parameter Gauss-Newton steps.
  for (int iter = 0; iter <= config.max_iterations; ++iter) {
    const bool with_freq = iter > 0;
    const Eigen::Index cols = with_freq ? p : p - static_cast<Eigen::Index>(k_tones);
    Eigen::MatrixXd jtj = Eigen::MatrixXd::Zero(cols, cols);
    Eigen::VectorXd jtr = Eigen::VectorXd::Zero(cols);
    for (std::size_t start = 0; start < n; start += chunk) {
      const auto rows = static_cast<Eigen::Index>(std::min<std::size_t>(chunk, n - start));
      // The cosine and sine columns by rotation (one complex multiply per sample), seeded
      // exactly at each chunk so rounding cannot build up over more than 512 samples.
      const double t0 = static_cast<double>(start) - centre;
      for (std::size_t k = 0; k < k_tones; ++k) {
        phasor[k] = std::polar(1.0, omega[k] * t0);
        advance[k] = std::polar(1.0, omega[k]);
      }
      for (Eigen::Index r = 0; r < rows; ++r) {
        const double t = static_cast<double>(start + static_cast<std::size_t>(r)) - centre;
        jac(r, 0) = 1.0;
        for (std::size_t k = 0; k < k_tones; ++k) {
          const double c = phasor[k].real(), s = phasor[k].imag();
          phasor[k] *= advance[k];
          const auto ki = static_cast<Eigen::Index>(k);
          jac(r, 1 + 2 * ki) = c;
          jac(r, 2 + 2 * ki) = s;
          if (with_freq) {
            const double a = ab(2 * ki), b = ab(2 * ki + 1);
            jac(r, 1 + 2 * static_cast<Eigen::Index>(k_tones) + ki) =
                (t / tscale) * (-a * s + b * c);
          }
        }
        // Absolute parameters for offset/a/b (as in IEEE 1057), increments for frequency:
        // the right-hand side is the sample itself plus the frequency column times 0.
        rhs_chunk(r) = seg[start + static_cast<std::size_t>(r)];
      }
      const auto jv = jac.topLeftCorner(rows, cols);
      jtj.selfadjointView<Eigen::Lower>().rankUpdate(jv.transpose());
      jtr.noalias() += jv.transpose() * rhs_chunk.head(rows);
    }
    jtj.triangularView<Eigen::Upper>() = jtj.transpose();
    const Eigen::VectorXd sol = jtj.ldlt().solve(jtr);
    offset = sol(0);
    ab = sol.segment(1, static_cast<Eigen::Index>(2 * k_tones));
    out.iterations = iter;
    if (!with_freq) continue;
    double max_step_bins = 0;
    for (std::size_t k = 0; k < k_tones; ++k) {
      const double step =
          sol(1 + 2 * static_cast<Eigen::Index>(k_tones) + static_cast<Eigen::Index>(k)) / tscale;
      // A step larger than a bin means the guess was off the main lobe; damp it.
      const double limit = 2 * std::numbers::pi / tscale;
      omega[k] += std::clamp(step, -limit, limit);
      max_step_bins = std::max(max_step_bins, std::abs(step) * tscale / (2 * std::numbers::pi));
    }
    if (max_step_bins < config.tolerance_bins) {
      out.converged = true;
      break;
    }
  }
  // Residual and the final amplitudes, phase referenced to the first fitted sample.
  double ss = 0;
  for (std::size_t i = 0; i < n; ++i) {
    const double t = static_cast<double>(i) - centre;
    double model = offset;
    for (std::size_t k = 0; k < k_tones; ++k) {
      const auto ki = static_cast<Eigen::Index>(k);
      model += ab(2 * ki) * std::cos(omega[k] * t) + ab(2 * ki + 1) * std::sin(omega[k] * t);
    }
    ss += (seg[i] - model) * (seg[i] - model);
  }
  out.residual_rms = std::sqrt(ss / static_cast<double>(n));
  out.offset = offset;
  for (std::size_t k = 0; k < k_tones; ++k) {
    const auto ki = static_cast<Eigen::Index>(k);
    // a cos + b sin = Re{(a - jb) e^{j w t}}, then move the reference from the centre to t =
    // -centre.
    const std::complex<double> at_centre(ab(2 * ki), -ab(2 * ki + 1));
    out.amplitude.push_back(at_centre * std::polar(1.0, -omega[k] * centre));
    out.freq_hz.push_back(omega[k] * fs / (2 * std::numbers::pi));
  }
  return out;
}

}  // namespace tb::dsp
