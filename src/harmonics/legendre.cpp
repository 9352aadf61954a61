#include "polystokes/harmonics/legendre.h"

#include <algorithm>
#include <cmath>

namespace polystokes {

// Holmes & Featherstone 2002, J. Geodesy 76, eqs. 11-13: sectorial seeds, the first step off the diagonal
// and the column factors, packed by degree.
LegendreRecursion::LegendreRecursion(int degree) : degree_(degree) {
  const size_t size = index(degree + 1, 0);
  sectorial_.assign(size_t(degree + 1), 0.0);
  first_step_.assign(size_t(degree + 1), 0.0);
  a_.assign(size, 0.0);
  b_.assign(size, 0.0);
  for (int m = 1; m <= degree; ++m)
    sectorial_[size_t(m)] = m == 1 ? std::sqrt(3.0) : std::sqrt((2.0 * m + 1.0) / (2.0 * m));
  for (int m = 0; m <= degree; ++m) {
    first_step_[size_t(m)] = std::sqrt(2.0 * m + 3.0);
    for (int n = m + 2; n <= degree; ++n) {
      a_[index(n, m)] = std::sqrt((2.0 * n - 1.0) * (2.0 * n + 1.0) / ((n - m) * double(n + m)));
      b_[index(n, m)] = std::sqrt((2.0 * n + 1.0) * (n + m - 1.0) * (n - m - 1.0) /
                                  ((n - m) * double(n + m) * (2.0 * n - 3.0)));
    }
  }
}

void LegendreRecursion::evaluate(double t, Eigen::MatrixXd& out) const {
  out.setZero(degree_ + 1, degree_ + 1);
  const double u = std::sqrt(std::max(0.0, (1.0 - t) * (1.0 + t)));
  out(0, 0) = 1.0;
  for (int m = 1; m <= degree_; ++m) out(m, m) = u * sectorial(m) * out(m - 1, m - 1);
  for (int m = 0; m <= degree_; ++m) {
    if (m + 1 <= degree_) out(m + 1, m) = first_step(m) * t * out(m, m);
    for (int n = m + 2; n <= degree_; ++n) out(n, m) = a(n, m) * t * out(n - 1, m) - b(n, m) * out(n - 2, m);
  }
}

void fully_normalized_legendre(int degree, double t, Eigen::MatrixXd& out) {
  LegendreRecursion(degree).evaluate(t, out);
}

Eigen::MatrixXd fully_normalized_legendre(int degree, double t) {
  Eigen::MatrixXd out;
  fully_normalized_legendre(degree, t, out);
  return out;
}

}  // namespace polystokes
