// Product Gauss rules on a triangle collapsed at its first vertex: the far-face quadrature of the direct
// polyhedron sum and the exact multipole moments of the fast field take their nodes from here.
#pragma once

#include <vector>

namespace polystokes {

/// A node y = v0 + a (v1 - v0) + b (v2 - v0); weight times the triangle's area.
struct TriangleNode {
  double a, b, weight;
};

/// The q x q Gauss-Legendre product rule on the triangle collapsed at v0 (Duffy): y = v0 + s(1-t) e1 + s t
/// e2, dA = 2A s ds dt. Exact for polynomials of degree 2q - 2 in y. q >= 1.
std::vector<TriangleNode> collapsed_triangle_rule(int q);

}  // namespace polystokes
