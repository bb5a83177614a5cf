// Magnitude spectrum of a real signal through FFTW (r2c), for finding tones.
//
// FFTW's planner keeps process-wide state and is not thread-safe: build Spectrum
// objects from one thread (the engine thread or the CLI). Plans use FFTW_ESTIMATE so
// construction costs microseconds and never measures the machine.
#pragma once

#include <complex>
#include <cstddef>
#include <span>
#include <vector>

#include "dsp/window.hpp"

namespace tb::dsp {

class Spectrum {
 public:
  /// n >= 2 samples per transform, window applied before the transform.
  Spectrum(std::size_t n, Window window);
  ~Spectrum();
  Spectrum(const Spectrum&) = delete;
  Spectrum& operator=(const Spectrum&) = delete;

  /// Transforms x (exactly n samples). Returns n/2+1 bins, scaled so that a sine of
  /// peak amplitude A centred on a bin reads |X| = A (window gain divided out).
  std::span<const std::complex<double>> push(std::span<const double> x);

  std::size_t size() const { return n_; }
  const std::vector<double>& window() const { return window_; }

 private:
  std::size_t n_;
  std::vector<double> window_;
  double scale_;
  double* in_;
  void* out_;   // fftw_complex*, kept opaque so callers need not include fftw3.h
  void* plan_;  // fftw_plan
  std::vector<std::complex<double>> bins_;
};

}  // namespace tb::dsp
