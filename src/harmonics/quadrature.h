// The one Gauss-Legendre rule of the library, on [0, 1]: the reference moments (moments.cpp) and the
// far-face quadrature of polyhedron gravity both take their nodes and weights from here.
#pragma once

#include <vector>

namespace polystokes {

/// q-point Gauss-Legendre rule on [0, 1], exact for polynomials of degree 2q - 1; nodes ascending.
struct GaussRule {
  std::vector<double> nodes, weights;
};

/// By the Golub & Welsch 1969 eigenvalue method ("Calculation of Gauss quadrature rules", Math. Comp. 23,
/// 221-230): nodes are the eigenvalues of the symmetric Jacobi matrix of the Legendre recurrence, weights the
/// squared first components of its unit eigenvectors (Eigen's SelfAdjointEigenSolver). q >= 1; O(q^3).
GaussRule gauss_legendre_unit(int q);

}  // namespace polystokes
