// Student's t distribution: the CDF and its two-sided quantile, for coverage factors.
// nu = +infinity gives the normal distribution. nu <= 0, NaN, or p outside (0, 1) throw
// std::domain_error.
#pragma once

namespace tb::dsp {

/// P(T <= t) for Student's t with nu > 0 degrees of freedom (nu may be non-integer).
double student_t_cdf(double t, double nu);

/// t such that P(|T| <= t) = p, 0 < p < 1, nu > 0. Example: student_t_two_sided(0.95, 10) ~ 2.228.
double student_t_two_sided(double p, double nu);

}  // namespace tb::dsp
