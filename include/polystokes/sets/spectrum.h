// Degree-variance spectrum of a coefficient set: per-degree variance and RMS per coefficient, and a power law
// fitted to it. The one home of these sums for compare, report and uncertainty.
#pragma once

#include <Eigen/Core>
#include <vector>

#include "polystokes/core/coefficient_set.h"

namespace polystokes {

/// sum_{m=0..n} (C(n,m)^2 + S(n,m)^2), the degree variance of whatever convention C and S are in (common
/// practice: Kaula 1966, Theory of Satellite Geodesy, sec. 1.4, in fully normalized terms). Summed in m
/// order. Precondition: 0 <= n < C.rows(), S the same size. O(n).
double degree_variance(const Eigen::MatrixXd& C, const Eigen::MatrixXd& S, int n);

/// RMS per coefficient of degree n: sqrt(degree_variance / (2n + 1)). O(n).
double degree_rms(const Eigen::MatrixXd& C, const Eigen::MatrixXd& S, int n);

/// Degree variances in fully normalized terms (the set is converted from its own convention first):
///   variance[n] = sum_m (C_nm^2 + S_nm^2),  sigma_variance[n] = sum_m (sigma_C_nm^2 + sigma_S_nm^2),
/// n = 0..degree. O(degree^2).
struct DegreeSpectrum {
  std::vector<double> variance;
  std::vector<double> sigma_variance;
  bool has_sigmas = false;  ///< some sigma is non-zero
};
DegreeSpectrum degree_spectrum(const CoefficientSet& set);

/// variance[n] ~ K n^-beta, fitted by ordinary least squares of ln variance[n] on ln n.
struct PowerLaw {
  double k = 0;          ///< K, the law's value at n = 1
  double beta = 0;       ///< exponent (positive for a decaying spectrum)
  int first_degree = 0;  ///< lowest and highest degree used
  int last_degree = 0;
  int points = 0;           ///< number of degrees used
  double rms_residual = 0;  ///< RMS of the fit residuals in log10 units (decades)
};

/// Fits the law to every degree n >= min_degree with a positive, finite variance[n]. Centred sums, so an
/// exact power law is recovered to rounding. Throws ConventionError if fewer than two degrees qualify.
PowerLaw fit_power_law(const std::vector<double>& variance, int min_degree = 2);

}  // namespace polystokes
