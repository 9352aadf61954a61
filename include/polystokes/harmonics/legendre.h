// Fully normalized associated Legendre functions (geodesy 4pi normalization, no Condon-Shortley phase) by the
// one forward column recursion every module uses: its factors are computed once per degree and shared.
#pragma once

#include <Eigen/Core>
#include <cstddef>
#include <vector>

namespace polystokes {

/// Factors of the standard forward column recursion for fully normalized Pnm (Holmes & Featherstone 2002,
/// "A unified approach to the Clenshaw summation and the recursive computation of very high degree and
/// order normalised associated Legendre functions", J. Geodesy 76, eqs. 11-13), for 0 <= m <= n <= degree:
///   P_mm = u sectorial(m) P_(m-1)(m-1),  P_(m+1)m = first_step(m) t P_mm,
///   P_nm = a(n, m) t P_(n-1)m - b(n, m) P_(n-2)m  (n >= m + 2),
/// with t = sin(latitude), u = cos(latitude). Solid-harmonic tables (series.h) scale the same steps by
/// powers of R/r. O(degree^2) memory and set-up.
class LegendreRecursion {
 public:
  explicit LegendreRecursion(int degree);

  int degree() const { return degree_; }
  double sectorial(int m) const { return sectorial_[size_t(m)]; }  ///< m >= 1
  double first_step(int m) const { return first_step_[size_t(m)]; }
  double a(int n, int m) const { return a_[index(n, m)]; }  ///< n >= m + 2
  double b(int n, int m) const { return b_[index(n, m)]; }  ///< n >= m + 2

  /// Pnm(t) into `out` ((degree+1)^2, lower triangle; upper triangle zero). Accurate to degree ~1500 away
  /// from the poles.
  void evaluate(double t, Eigen::MatrixXd& out) const;

 private:
  static size_t index(int n, int m) { return size_t(n) * size_t(n + 1) / 2 + size_t(m); }
  int degree_;
  std::vector<double> sectorial_, first_step_, a_, b_;
};

/// Fully normalized Pnm(t), t = sin(latitude), for 0 <= m <= n <= degree, into `out` ((degree+1)^2, lower
/// triangle; upper triangle zero). O(degree^2).
void fully_normalized_legendre(int degree, double t, Eigen::MatrixXd& out);
Eigen::MatrixXd fully_normalized_legendre(int degree, double t);

}  // namespace polystokes
