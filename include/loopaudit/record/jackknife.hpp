// The delete-one-group jackknife and the Student t quantile its intervals
// use: the statistics every stage that turns replicates into an interval
// shares.
//
// With theta_hat the estimate from all the data and theta_(i) the estimate
// with group i of n left out, theta_(.) their mean (B. Efron, R. Tibshirani,
// "An Introduction to the Bootstrap", Chapman & Hall 1993, ch. 11; M. H.
// Quenouille 1956, J. W. Tukey 1958; B. Efron, C. Stein, "The jackknife
// estimate of variance", Annals of Statistics 9(3), 1981):
//   var_jack  = (n - 1)/n sum_i (theta_(i) - theta_(.))^2
//   bias_jack = (n - 1) (theta_(.) - theta_hat)
// For the sample mean var_jack is s^2/n and bias_jack 0, exactly.
#pragma once

#include <span>

namespace loopaudit {

struct JackknifeEstimate {
  double variance = 0.0;
  double bias = 0.0;  // the estimate minus the bias is the bias-corrected one
  double degrees_of_freedom = 0.0;  // n - 1
};

// Throws std::invalid_argument for fewer than two replicates.
JackknifeEstimate jackknife(double full_estimate, std::span<const double> replicates);

// The t with P(T <= t) = probability for Student's t with `degrees_of_freedom`
// (> 0, not necessarily whole); infinite degrees of freedom give the normal
// quantile. From the regularised incomplete beta function by its continued
// fraction (NIST DLMF 8.17.22), inverted by bisection.
double student_t_quantile(double probability, double degrees_of_freedom);

// The half-width factor of a two-sided interval at `confidence`:
// student_t_quantile((1 + confidence) / 2, degrees_of_freedom).
double two_sided_t(double confidence, double degrees_of_freedom);

}  // namespace loopaudit
