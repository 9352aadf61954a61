#include "field/triangle_rule.h"

#include <cstddef>

#include "harmonics/quadrature.h"

namespace polystokes {

std::vector<TriangleNode> collapsed_triangle_rule(int q) {
  const GaussRule rule = gauss_legendre_unit(q);
  const std::vector<double>&nodes = rule.nodes, &weights = rule.weights;
  std::vector<TriangleNode> out;
  for (int i = 0; i < q; ++i)
    for (int k = 0; k < q; ++k)
      out.push_back({nodes[std::size_t(i)] * (1.0 - nodes[std::size_t(k)]),
                     nodes[std::size_t(i)] * nodes[std::size_t(k)],
                     2.0 * weights[std::size_t(i)] * weights[std::size_t(k)] * nodes[std::size_t(i)]});
  return out;
}

}  // namespace polystokes
