#include "polystokes/mesh/mesh_measures.h"

#include <Eigen/Geometry>
#include <algorithm>
#include <cmath>
#include <cstdint>
#include <limits>

#include "internal/disjoint_sets.h"
#include "internal/parallel.h"
#include "polystokes/mesh/mass_properties.h"

namespace polystokes {

FaceComponents face_components(const Mesh& mesh) {
  DisjointSets sets(static_cast<size_t>(mesh.vertices.rows()));
  for (Eigen::Index f = 0; f < mesh.faces.rows(); ++f) {
    sets.unite(mesh.faces(f, 0), mesh.faces(f, 1));
    sets.unite(mesh.faces(f, 0), mesh.faces(f, 2));
  }
  FaceComponents out;
  out.label.resize(static_cast<size_t>(mesh.faces.rows()));
  std::vector<int> label_of_root(static_cast<size_t>(mesh.vertices.rows()), -1);
  for (Eigen::Index f = 0; f < mesh.faces.rows(); ++f) {
    int& label = label_of_root[static_cast<size_t>(sets.find(mesh.faces(f, 0)))];
    if (label < 0) label = out.count++;
    out.label[static_cast<size_t>(f)] = label;
  }
  return out;
}

MeshMeasures measure_mesh(const Mesh& mesh) {
  MeshMeasures out;
  if (mesh.vertices.rows() > 0) {
    out.box_min = mesh.vertices.colwise().minCoeff().transpose();
    out.box_max = mesh.vertices.colwise().maxCoeff().transpose();
  }
  std::vector<std::uint64_t> edges;
  edges.reserve(3 * static_cast<size_t>(mesh.faces.rows()));
  for (Eigen::Index f = 0; f < mesh.faces.rows(); ++f) {
    const Eigen::Vector3d a = mesh.vertices.row(mesh.faces(f, 0)), b = mesh.vertices.row(mesh.faces(f, 1)),
                          c = mesh.vertices.row(mesh.faces(f, 2));
    out.surface_area += 0.5 * (b - a).cross(c - a).norm();
    for (int k = 0; k < 3; ++k) {
      const auto p = static_cast<std::uint64_t>(mesh.faces(f, k)),
                 q = static_cast<std::uint64_t>(mesh.faces(f, (k + 1) % 3));
      edges.push_back(std::min(p, q) << 32 | std::max(p, q));
    }
  }
  std::sort(edges.begin(), edges.end());
  edges.erase(std::unique(edges.begin(), edges.end()), edges.end());
  out.edges = static_cast<long>(edges.size());
  if (!edges.empty()) {
    double total = 0, shortest = std::numeric_limits<double>::infinity(), longest = 0;
    for (const std::uint64_t key : edges) {
      const double length = (mesh.vertices.row(static_cast<Eigen::Index>(key >> 32)) -
                             mesh.vertices.row(static_cast<Eigen::Index>(key & 0xffffffffu)))
                                .norm();
      total += length;
      shortest = std::min(shortest, length);
      longest = std::max(longest, length);
    }
    out.edge_min = shortest;
    out.edge_mean = total / static_cast<double>(edges.size());
    out.edge_max = longest;
  }
  out.components = face_components(mesh).count;
  out.volume = volume_moments(mesh).volume;
  out.equivalent_radius = equivalent_radius(out.volume);
  if (out.volume > 0) out.resolvable_degree = resolvable_degree(out.equivalent_radius, out.edge_mean);
  return out;
}

double mean_edge_length(const Mesh& mesh) {
  // Blocks of faces on the library's threads, their sums added in block order: the same value for any thread
  // count.
  constexpr Eigen::Index kBlock = 65536;
  const Eigen::Index faces = mesh.faces.rows();
  double sum = 0;
  ordered_blocks<char>(
      size_t((faces + kBlock - 1) / kBlock), 0, 8,
      [&](size_t b, char&) {
        double part = 0;
        for (Eigen::Index f = Eigen::Index(b) * kBlock; f < std::min(faces, Eigen::Index(b + 1) * kBlock);
             ++f)
          for (int k = 0; k < 3; ++k)
            part +=
                (mesh.vertices.row(mesh.faces(f, k)) - mesh.vertices.row(mesh.faces(f, (k + 1) % 3))).norm();
        return part;
      },
      [&](size_t, double part) { sum += part; });
  return faces > 0 ? sum / double(3 * faces) : 0;
}

double equivalent_radius(double volume) {
  if (!(volume > 0)) return 0;
  return std::cbrt(3.0 * volume / (4.0 * std::acos(-1.0)));
}

int resolvable_degree(double radius, double mean_edge) {
  if (!(mean_edge > 0)) return 0;
  return int(std::floor(std::acos(-1.0) * radius / mean_edge));
}

}  // namespace polystokes
