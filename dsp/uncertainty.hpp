// Measurement uncertainty of a complex impedance and of quantities derived from it,
// after the GUM (JCGM 100:2008) with propagation on the complex value (JCGM 102:2011
// style): the real and imaginary parts are a bivariate quantity with a 2x2 covariance.
//
// Type A comes from repeated blocks (sample covariance of the mean, n-1 degrees of
// freedom). Type B terms are named inputs, each a real standard uncertainty u with a
// complex sensitivity s: a change x of that input moves Z by s*x. Scalars derived from
// Z are propagated with their gradient; the coverage factor comes from the
// Welch-Satterthwaite effective degrees of freedom (JCGM 100 G.4) and Student's t.
#pragma once

#include <complex>
#include <functional>
#include <span>
#include <string>
#include <vector>

namespace tb::dsp {

/// Symmetric 2x2 covariance of (Re, Im), ohm^2.
struct Cov2 {
  double rr = 0, ri = 0, ii = 0;
};

struct TypeBTerm {
  std::string name;                  ///< e.g. "rref_tolerance"
  std::complex<double> sensitivity;  ///< dZ/dx, ohm per unit of x
  double u = 0;                      ///< standard uncertainty of x
  double dof = 1e9;                  ///< degrees of freedom (large = well known)
  /// The input is uniform within +-sqrt(3) u (a tolerance, a bound): when it dominates
  /// a propagated quantity the coverage factor is that of the convolution (see propagate).
  bool rectangular = false;
};

struct UncertainComplex {
  std::complex<double> value;
  Cov2 type_a;       ///< covariance of the mean from the block spread
  double dof_a = 0;  ///< n - 1 (0 when there is no Type A estimate)
  std::vector<TypeBTerm> type_b;
};

/// Mean and Type A covariance of the mean of n >= 1 complex samples (none: std::invalid_argument).
/// With n == 1 the covariance is zero and dof_a is 0.
UncertainComplex mean_with_type_a(std::span<const std::complex<double>> samples);

/// Rectangular distribution of half-width a >= 0: u = a / sqrt(3) (JCGM 100 4.3.7).
double rectangular_u(double half_width);

struct ScalarUncertainty {
  double value = 0;
  double u_a = 0;       ///< Type A part of the standard uncertainty
  double u_b = 0;       ///< Type B part (all terms combined)
  double u_c = 0;       ///< combined standard uncertainty
  double nu_eff = 0;    ///< Welch-Satterthwaite effective degrees of freedom (may be huge)
  double k = 2;         ///< coverage factor for p = 95.45 %
  double expanded = 0;  ///< U = k * u_c
};

/// Coverage factor k (relative to u_c = sqrt(a^2/3 + sigma^2)) for the sum of a uniform
/// input of half-width a >= 0 and a normal one of standard deviation sigma >= 0, for
/// coverage probability p: the convolution's own quantile (JCGM 100:2008 G.2.3 and G.6.5:
/// a dominant rectangular term makes the output distribution flatter than normal).
/// Example: sigma = 0 gives p sqrt 3 (1.653 for p = 95.45 %); a = 0 gives 2.000.
double coverage_factor_uniform_normal(double a, double sigma, double p = 0.9545);

/// Propagates to y = f(Re Z, Im Z); gradient = (dy/dRe, dy/dIm) at the value.
/// k: Student's t for the Welch-Satterthwaite nu_eff; when the largest contribution is a
/// rectangular term, the uniform-normal convolution's k (scaled by the t inflation t/z, so
/// few degrees of freedom still widen it), never above Student's.
ScalarUncertainty propagate(const UncertainComplex& z, double y, double dy_dre, double dy_dim);

/// Same, with the gradient taken numerically by central differences of f
/// (step relative to |Z|). Use for the derived quantities of impedance.hpp. For values that
/// can sit near zero pass the signed form (R/|X| for D, not |R|/|X|), so the propagation
/// is linear rather than through the kink of the absolute value.
ScalarUncertainty propagate(const UncertainComplex& z,
                            const std::function<double(std::complex<double>)>& f);

/// Welch-Satterthwaite: nu_eff = u_c^4 / sum(u_i^4 / nu_i); terms with nu_i <= 0 are skipped.
double welch_satterthwaite(std::span<const double> u_i, std::span<const double> nu_i);

/// Coverage factor k for coverage probability p (default 95.45 %, k = 2 for nu = inf)
/// from Student's t with nu_eff degrees of freedom (JCGM 100 G.3). nu_eff >= 1.
double coverage_factor(double nu_eff, double p = 0.9545);

}  // namespace tb::dsp
