#include "dsp/spectrum.hpp"

#include <fftw3.h>

#include <algorithm>
#include <numeric>
#include <stdexcept>

namespace tb::dsp {

Spectrum::Spectrum(std::size_t n, Window window)
    : n_(n), window_(make_window(window, n)), bins_(n / 2 + 1) {
  if (n < 2) throw std::invalid_argument("spectrum: at least 2 samples per transform");
  const double sum = std::accumulate(window_.begin(), window_.end(), 0.0);
  scale_ = 2.0 / sum;
  in_ = fftw_alloc_real(n);
  out_ = fftw_alloc_complex(n / 2 + 1);
  if (in_ == nullptr || out_ == nullptr) throw std::bad_alloc();
  plan_ = fftw_plan_dft_r2c_1d(static_cast<int>(n), in_, static_cast<fftw_complex*>(out_),
                               FFTW_ESTIMATE);
  if (plan_ == nullptr) throw std::runtime_error("spectrum: FFTW could not plan the transform");
}

Spectrum::~Spectrum() {
  fftw_destroy_plan(static_cast<fftw_plan>(plan_));
  fftw_free(in_);
  fftw_free(out_);
}

std::span<const std::complex<double>> Spectrum::push(std::span<const double> x) {
  if (x.size() != n_) throw std::invalid_argument("spectrum: block length differs from the plan");
  for (std::size_t i = 0; i < n_; ++i)
    in_[i] = x[i] * window_[i];
  fftw_execute(static_cast<fftw_plan>(plan_));
  const auto* out = static_cast<const fftw_complex*>(out_);
  for (std::size_t k = 0; k < bins_.size(); ++k) {
    bins_[k] = std::complex<double>(out[k][0], out[k][1]) * scale_;
  }
  bins_[0] *= 0.5;  // DC has no negative-frequency twin
  if (n_ % 2 == 0) bins_.back() *= 0.5;
  return bins_;
}

}  // namespace tb::dsp
