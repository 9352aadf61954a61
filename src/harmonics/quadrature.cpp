#include "harmonics/quadrature.h"

#include <Eigen/Eigenvalues>
#include <cmath>

namespace polystokes {

GaussRule gauss_legendre_unit(int q) {
  Eigen::MatrixXd jacobi = Eigen::MatrixXd::Zero(q, q);
  for (int k = 1; k < q; ++k) jacobi(k, k - 1) = jacobi(k - 1, k) = k / std::sqrt(4.0 * k * k - 1.0);
  const Eigen::SelfAdjointEigenSolver<Eigen::MatrixXd> solver(jacobi);
  GaussRule rule;
  for (int k = 0; k < q; ++k) {
    rule.nodes.push_back(0.5 * (1.0 + solver.eigenvalues()[k]));
    const double v = solver.eigenvectors()(0, k);
    rule.weights.push_back(v * v);  // 2 v^2 on [-1, 1], halved for [0, 1]
  }
  return rule;
}

}  // namespace polystokes
