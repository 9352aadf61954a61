#include "harmonics/face_blocks.h"

#include <fmt/format.h>

#include <algorithm>
#include <cstdint>
#include <utility>

#include "harmonics/fan_decomposition.h"
#include "harmonics/moment_kernel.h"
#include "mesh/face_order.h"
#include "polystokes/core/errors.h"

namespace polystokes {

// The fan recursion keeps two rows per entity (about one entity per face); a block's rows should stay in the
// second-level cache while every degree sweeps over them.
Eigen::Index moment_block_faces(int degree) {
  constexpr double budget = 1.0e6;
  const double per_face = double(fan_workspace_bytes(std::max(0, degree), 1100, 1000)) / 1000;
  return Eigen::Index(std::clamp(budget / per_face, 128.0, 4096.0));
}

// Fans share work only between neighbouring faces of the same block. Meshes written by tessellating or
// re-meshing programs list faces in compact patches (about 0.9 products per face); a list without locality
// (shuffled, merged from pieces) costs up to 3. Four sample blocks decide: above 1.5 products per face the
// region is blocked in Morton order of its face centroids instead (about 1.0 per face; face_order.h), at the
// price of one linear sort and 4 bytes per face kept.
std::vector<int> blocking_order(const Mesh& mesh, Eigen::Index block_faces) {
  const Eigen::Index faces = mesh.faces.rows();
  if (faces <= 2 * block_faces) return {};
  FanDecomposer probe;
  double products = 0;
  constexpr int samples = 4;
  for (int s = 0; s < samples; ++s) {
    const Eigen::Index begin = (faces - block_faces) * s / (samples - 1);
    products +=
        double(probe.decompose(mesh.faces, mesh.vertices.rows(), begin, begin + block_faces).products());
  }
  if (products <= 1.5 * samples * double(block_faces)) return {};
  return morton_face_order(mesh);
}

double moment_products_per_face(const Mesh& mesh, int degree) {
  const Eigen::Index size = moment_block_faces(degree), faces = mesh.faces.rows();
  const std::vector<int> order = blocking_order(mesh, size);
  FanDecomposer decomposer;
  double products = 0;
  for (Eigen::Index begin = 0; begin < faces; begin += size)
    products += double(decomposer
                           .decompose(mesh.faces, mesh.vertices.rows(), begin, std::min(faces, begin + size),
                                      order.empty() ? nullptr : order.data())
                           .products());
  return faces > 0 ? products / double(faces) : 0.0;
}

}  // namespace polystokes
