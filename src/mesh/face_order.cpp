#include "mesh/face_order.h"

#include <fmt/format.h>

#include <algorithm>
#include <array>
#include <cstdint>
#include <limits>

#include "internal/parallel.h"
#include "polystokes/core/errors.h"

namespace polystokes {

namespace {

/// Spreads the low 10 bits of v to every third bit (Morton code in 30 bits).
std::uint32_t spread_bits(std::uint32_t v) {
  v &= 0x3ffu;
  v = (v | v << 16) & 0x030000ffu;
  v = (v | v << 8) & 0x0300f00fu;
  v = (v | v << 4) & 0x030c30c3u;
  v = (v | v << 2) & 0x09249249u;
  return v;
}

constexpr size_t kChunk = 4096;  // faces per parallel work item

}  // namespace

std::vector<int> morton_face_order(const Mesh& mesh, const std::vector<char>& skip, int threads) {
  const auto faces = static_cast<size_t>(mesh.faces.rows());
  const Eigen::Index vertices = mesh.vertices.rows();
  if (faces == 0) return {};
  const Eigen::Vector3d low = mesh.vertices.colwise().minCoeff().transpose();
  const Eigen::Vector3d extent = mesh.vertices.colwise().maxCoeff().transpose() - low;
  // A key holds the code in its high bits and the face number in its low 32, so ties sort by face number;
  // left-out faces get kNone, which sorts last.
  constexpr std::uint64_t kNone = std::numeric_limits<std::uint64_t>::max();
  std::vector<std::uint64_t> keys(faces);
  parallel_for((faces + kChunk - 1) / kChunk, threads, [&](size_t chunk) {
    for (size_t f = chunk * kChunk; f < std::min(faces, (chunk + 1) * kChunk); ++f) {
      const auto face = static_cast<Eigen::Index>(f);
      for (int k = 0; k < 3; ++k)
        if (mesh.faces(face, k) < 0 || mesh.faces(face, k) >= vertices)
          throw MeshError(fmt::format("face {} refers to vertex {}, but the mesh has {} vertices", f,
                                      mesh.faces(face, k), vertices));
      if (!skip.empty() && skip[f]) {
        keys[f] = kNone;
        continue;
      }
      std::uint32_t code = 0;
      for (int axis = 0; axis < 3; ++axis) {
        const double centre =
            (mesh.vertices(mesh.faces(face, 0), axis) + mesh.vertices(mesh.faces(face, 1), axis) +
             mesh.vertices(mesh.faces(face, 2), axis)) /
                3.0 -
            low[axis];
        const double cell = extent[axis] > 0 ? std::clamp(centre / extent[axis], 0.0, 1.0) * 1023.0 : 0.0;
        code |= spread_bits(static_cast<std::uint32_t>(cell)) << axis;
      }
      keys[f] = static_cast<std::uint64_t>(code) << 32 | static_cast<std::uint32_t>(f);
    }
  });
  keys.erase(std::remove(keys.begin(), keys.end(), kNone), keys.end());
  std::vector<std::uint64_t> spare(keys.size());
  for (int shift = 32; shift < 62; shift += 10) {
    std::array<size_t, 1025> start{};
    for (const std::uint64_t key : keys) ++start[(key >> shift & 0x3ffu) + 1];
    for (size_t d = 1; d < start.size(); ++d) start[d] += start[d - 1];
    for (const std::uint64_t key : keys) spare[start[key >> shift & 0x3ffu]++] = key;
    keys.swap(spare);
  }
  std::vector<int> order(keys.size());
  for (size_t i = 0; i < keys.size(); ++i) order[i] = static_cast<int>(keys[i] & 0xffffffffu);
  return order;
}

}  // namespace polystokes
