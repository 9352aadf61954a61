#include "sets/compare_uncertainty.h"

#include <fmt/format.h>

#include <Eigen/Eigenvalues>
#include <cmath>
#include <utility>

#include "polystokes/core/errors.h"

namespace polystokes {
namespace {

// Combined-covariance eigenvalues below this fraction of the largest are treated as zero: the directions a
// rank-deficient (Monte Carlo, rank <= K) covariance does not span are left out of the test.
constexpr double kPseudoInverseCut = 1e-12;

double parameter_of(const CoefficientSet& set, const CoefficientParameter& p) {
  return (p.sine ? set.S : set.C)(p.n, p.m);
}

double sigma_of(const CoefficientSet& set, const CoefficientParameter& p) {
  return (p.sine ? set.sigma_S : set.sigma_C)(p.n, p.m);
}

}  // namespace

bool has_sigmas(const CoefficientSet& set, int degree) {
  const Eigen::Index size = degree + 1;
  return !set.sigma_C.topLeftCorner(size, size).isZero(0) || !set.sigma_S.topLeftCorner(size, size).isZero(0);
}

UncertaintyComparison compare_uncertainty(const CoefficientSet& fa, const CoefficientSet& fb,
                                          const std::optional<CoefficientCovariance>& ca,
                                          const std::optional<CoefficientCovariance>& cb, int degree) {
  UncertaintyComparison out;
  out.covariance_degree_a = ca ? ca->degree : -1;
  out.covariance_degree_b = cb ? cb->degree : -1;
  const auto parameters = covariance_parameters(degree);
  for (int n = 0; n <= degree; ++n) {
    const Eigen::Index first = Eigen::Index(n) * n, k = 2 * n + 1;
    DegreeUncertainty row;
    row.degree = n;
    Eigen::VectorXd d(k);
    Eigen::MatrixXd M = Eigen::MatrixXd::Zero(k, k);
    for (Eigen::Index i = 0; i < k; ++i) {
      const CoefficientParameter& p = parameters[size_t(first + i)];
      d(i) = parameter_of(fa, p) - parameter_of(fb, p);
    }
    for (const auto& [covariance, set] : {std::pair(&ca, &fa), std::pair(&cb, &fb)}) {
      if (*covariance && (*covariance)->degree >= n) {
        M += (*covariance)->values.block(first, first, k, k);
        row.from_covariance = true;
      } else {
        for (Eigen::Index i = 0; i < k; ++i)
          M(i, i) += std::pow(sigma_of(*set, parameters[size_t(first + i)]), 2);
      }
    }
    double sum = 0;
    int counted = 0;
    for (Eigen::Index i = 0; i < k; ++i)
      if (M(i, i) > 0) sum += d(i) * d(i) / M(i, i), ++counted;
    row.rms_sigmas = counted > 0 ? std::sqrt(sum / counted) : 0.0;
    // Chi-square with the pseudo-inverse (common practice for a singular covariance).
    const Eigen::SelfAdjointEigenSolver<Eigen::MatrixXd> eigen(M);
    const double largest = eigen.eigenvalues().maxCoeff();
    const Eigen::VectorXd projected = eigen.eigenvectors().transpose() * d;
    for (Eigen::Index j = 0; j < k && largest > 0; ++j)
      if (eigen.eigenvalues()(j) > kPseudoInverseCut * largest) {
        row.chi_square += projected(j) * projected(j) / eigen.eigenvalues()(j);
        ++row.parameters;
      }
    if (row.parameters > 0) {
      row.quantile = chi_square_quantile_99(row.parameters);
      row.consistent = row.chi_square <= row.quantile;
      out.consistent = out.consistent && row.consistent;
    }
    out.degrees.push_back(row);
  }
  return out;
}

std::string uncertainty_verdict(const UncertaintyComparison& u) {
  std::string failing;
  int tested = 0;
  for (const DegreeUncertainty& row : u.degrees) {
    if (row.parameters > 0) ++tested;
    if (!row.consistent) failing += fmt::format("{}{}", failing.empty() ? "" : ", ", row.degree);
  }
  if (tested == 0) return "; no parameter carries an uncertainty to test against";
  return u.consistent
             ? fmt::format(
                   "; within their uncertainty: CONSISTENT (chi-square within its 99% quantile at all {} "
                   "degrees with an uncertainty)",
                   tested)
             : fmt::format(
                   "; within their uncertainty: INCONSISTENT at degree(s) {} (chi-square above its 99% "
                   "quantile)",
                   failing);
}

double chi_square_quantile_99(int k) {
  if (k < 1) throw ConventionError(fmt::format("chi-square needs at least 1 degree of freedom, got {}", k));
  // Wilson & Hilferty 1931: (X/k)^(1/3) is nearly normal with mean 1 - 2/(9k) and variance 2/(9k).
  constexpr double z99 = 2.3263478740408408;
  const double v = 2.0 / (9.0 * k);
  return k * std::pow(1.0 - v + z99 * std::sqrt(v), 3);
}

}  // namespace polystokes
