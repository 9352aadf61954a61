#include "harmonics/face_blocks.h"

#include <fmt/format.h>

#include <algorithm>
#include <cstdint>
#include <utility>

#include "harmonics/fan_decomposition.h"
#include "harmonics/moment_kernel.h"
#include "polystokes/core/errors.h"

namespace polystokes {

namespace {

// Interleaves the low 21 bits of three coordinates (Morton code).
uint64_t morton3(uint32_t x, uint32_t y, uint32_t z) {
  uint64_t code = 0;
  for (int bit = 0; bit < 21; ++bit)
    code |= (uint64_t((x >> bit) & 1u) << (3 * bit)) | (uint64_t((y >> bit) & 1u) << (3 * bit + 1)) |
            (uint64_t((z >> bit) & 1u) << (3 * bit + 2));
  return code;
}

}  // namespace

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
// region is blocked in Morton order of its face centroids instead (about 1.0 per face), at the price of one
// sort and 4 bytes per face.
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
  const Eigen::Vector3d low = mesh.vertices.colwise().minCoeff().transpose();
  const Eigen::Vector3d extent = mesh.vertices.colwise().maxCoeff().transpose() - low;
  const double cells = double(1u << 21) - 1;
  std::vector<std::pair<uint64_t, int>> keys(static_cast<size_t>(faces));
  for (Eigen::Index f = 0; f < faces; ++f) {
    Eigen::Vector3d centroid = Eigen::Vector3d::Zero();
    for (int k = 0; k < 3; ++k) {
      const int vertex = mesh.faces(f, k);
      if (vertex < 0 || vertex >= mesh.vertices.rows())
        throw MeshError(fmt::format("face {} refers to vertex {}, but the mesh has {} vertices", f, vertex,
                                    mesh.vertices.rows()));
      centroid += mesh.vertices.row(vertex).transpose() / 3.0;
    }
    uint32_t cell[3];
    for (int c = 0; c < 3; ++c)
      cell[c] =
          extent[c] > 0 ? uint32_t(std::clamp((centroid[c] - low[c]) / extent[c], 0.0, 1.0) * cells) : 0;
    keys[size_t(f)] = {morton3(cell[0], cell[1], cell[2]), int(f)};
  }
  std::sort(keys.begin(), keys.end());
  std::vector<int> order(static_cast<size_t>(faces));
  for (size_t i = 0; i < keys.size(); ++i) order[i] = keys[i].second;
  return order;
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
