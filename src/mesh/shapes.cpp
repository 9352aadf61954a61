#include "polystokes/mesh/shapes.h"

#include <algorithm>
#include <cstdint>
#include <map>
#include <tuple>
#include <utility>

#include "polystokes/core/errors.h"

namespace polystokes {

Mesh make_box(double a, double b, double c) {
  Mesh mesh;
  mesh.source = "box";
  mesh.vertices.resize(8, 3);
  for (int i = 0; i < 8; ++i) {
    mesh.vertices.row(i) << ((i & 1) ? 0.5 : -0.5) * a, ((i & 2) ? 0.5 : -0.5) * b, ((i & 4) ? 0.5 : -0.5) * c;
  }
  // Two triangles per side, counter-clockwise seen from outside.
  mesh.faces.resize(12, 3);
  mesh.faces << 0, 2, 1, 1, 2, 3,   // z = -c/2
      4, 5, 6, 5, 7, 6,             // z = +c/2
      0, 1, 4, 1, 5, 4,             // y = -b/2
      2, 6, 3, 3, 6, 7,             // y = +b/2
      0, 4, 2, 2, 4, 6,             // x = -a/2
      1, 3, 5, 3, 7, 5;             // x = +a/2
  return mesh;
}

Mesh make_icosphere(int subdivisions) {
  if (subdivisions < 0 || subdivisions > 10)
    throw ConventionError("icosphere subdivisions must be in 0..10, got " + std::to_string(subdivisions));
  const double t = (1.0 + std::sqrt(5.0)) / 2.0;
  std::vector<Eigen::Vector3d> v = {{-1, t, 0}, {1, t, 0}, {-1, -t, 0}, {1, -t, 0}, {0, -1, t}, {0, 1, t},
                                    {0, -1, -t}, {0, 1, -t}, {t, 0, -1}, {t, 0, 1}, {-t, 0, -1}, {-t, 0, 1}};
  for (auto& p : v) p.normalize();
  std::vector<Eigen::Vector3i> f = {{0, 11, 5}, {0, 5, 1},  {0, 1, 7},   {0, 7, 10}, {0, 10, 11},
                                    {1, 5, 9},  {5, 11, 4}, {11, 10, 2}, {10, 7, 6}, {7, 1, 8},
                                    {3, 9, 4},  {3, 4, 2},  {3, 2, 6},   {3, 6, 8},  {3, 8, 9},
                                    {4, 9, 5},  {2, 4, 11}, {6, 2, 10},  {8, 6, 7},  {9, 8, 1}};
  for (int s = 0; s < subdivisions; ++s) {
    std::map<std::pair<int, int>, int> midpoint;
    auto mid = [&](int i, int j) {
      const auto key = std::minmax(i, j);
      auto it = midpoint.find(key);
      if (it != midpoint.end()) return it->second;
      v.push_back((v[i] + v[j]).normalized());
      const int index = static_cast<int>(v.size()) - 1;
      midpoint.emplace(key, index);
      return index;
    };
    std::vector<Eigen::Vector3i> next;
    next.reserve(f.size() * 4);
    for (const auto& tri : f) {
      const int a = mid(tri[0], tri[1]), b = mid(tri[1], tri[2]), c = mid(tri[2], tri[0]);
      next.push_back({tri[0], a, c});
      next.push_back({tri[1], b, a});
      next.push_back({tri[2], c, b});
      next.push_back({a, b, c});
    }
    f.swap(next);
  }
  Mesh mesh;
  mesh.source = "icosphere" + std::to_string(subdivisions);
  mesh.vertices.resize(static_cast<Eigen::Index>(v.size()), 3);
  for (size_t i = 0; i < v.size(); ++i) mesh.vertices.row(static_cast<Eigen::Index>(i)) = v[i].transpose();
  mesh.faces.resize(static_cast<Eigen::Index>(f.size()), 3);
  for (size_t i = 0; i < f.size(); ++i) mesh.faces.row(static_cast<Eigen::Index>(i)) = f[i].transpose();
  return mesh;
}

namespace {

// Interleaves the bits of i and j (Morton code) for the face order of make_geodesic_sphere.
uint64_t morton(uint32_t i, uint32_t j) {
  uint64_t code = 0;
  for (int bit = 0; bit < 32; ++bit)
    code |= (uint64_t((i >> bit) & 1u) << (2 * bit)) | (uint64_t((j >> bit) & 1u) << (2 * bit + 1));
  return code;
}

}  // namespace

Mesh make_geodesic_sphere(int frequency) {
  if (frequency < 1 || frequency > 20000)
    throw ConventionError("geodesic sphere frequency must be in 1..20000, got " + std::to_string(frequency));
  const Mesh base = make_icosphere(0);
  const int k = frequency;
  std::vector<Eigen::Vector3d> v;
  v.reserve(size_t(10) * k * k + 2);
  for (Eigen::Index i = 0; i < base.vertices.rows(); ++i) v.push_back(base.vertices.row(i).transpose());
  // Grid points on an icosahedron edge are shared by its two faces: keyed by (lower corner, upper corner,
  // step from the lower corner).
  std::map<std::tuple<int, int, int>, int> edge_points;
  std::vector<Eigen::Vector3i> faces;
  faces.reserve(size_t(20) * k * k);
  std::vector<int> grid(size_t(k + 1) * size_t(k + 1));
  std::vector<std::pair<uint64_t, Eigen::Vector3i>> cells;
  for (Eigen::Index f = 0; f < base.faces.rows(); ++f) {
    const int corner[3] = {base.faces(f, 0), base.faces(f, 1), base.faces(f, 2)};
    const Eigen::Vector3d a = v[corner[0]], b = v[corner[1]], c = v[corner[2]];
    // Point (i, j) = a + (b - a) i/k + (c - a) j/k, i + j <= k.
    auto point = [&](int i, int j) -> int {
      const int l = k - i - j;
      // On an edge when one barycentric index is zero; at a corner when two are.
      int from = -1, to = -1, step = 0;
      if (i == 0 && j == 0) return corner[0];
      if (i == k) return corner[1];
      if (j == k) return corner[2];
      if (j == 0) { from = corner[0]; to = corner[1]; step = i; }
      else if (i == 0) { from = corner[0]; to = corner[2]; step = j; }
      else if (l == 0) { from = corner[1]; to = corner[2]; step = j; }
      if (from >= 0) {
        if (from > to) { std::swap(from, to); step = k - step; }
        const auto key = std::make_tuple(from, to, step);
        const auto it = edge_points.find(key);
        if (it != edge_points.end()) return it->second;
        v.push_back((v[from] + (v[to] - v[from]) * (double(step) / k)).normalized());
        edge_points.emplace(key, int(v.size()) - 1);
        return int(v.size()) - 1;
      }
      v.push_back((a + (b - a) * (double(i) / k) + (c - a) * (double(j) / k)).normalized());
      return int(v.size()) - 1;
    };
    for (int i = 0; i <= k; ++i)
      for (int j = 0; i + j <= k; ++j) grid[size_t(i) * size_t(k + 1) + size_t(j)] = point(i, j);
    auto at = [&](int i, int j) { return grid[size_t(i) * size_t(k + 1) + size_t(j)]; };
    cells.clear();
    for (int i = 0; i < k; ++i)
      for (int j = 0; i + j < k; ++j) {
        // Same orientation as the icosahedron face (a, b, c): outward.
        cells.push_back({2 * morton(uint32_t(i), uint32_t(j)), {at(i, j), at(i + 1, j), at(i, j + 1)}});
        if (i + j + 1 < k)
          cells.push_back(
              {2 * morton(uint32_t(i), uint32_t(j)) + 1, {at(i + 1, j), at(i + 1, j + 1), at(i, j + 1)}});
      }
    std::sort(cells.begin(), cells.end(), [](const auto& x, const auto& y) { return x.first < y.first; });
    for (const auto& cell : cells) faces.push_back(cell.second);
  }
  Mesh mesh;
  mesh.source = "geodesic" + std::to_string(frequency);
  mesh.vertices.resize(static_cast<Eigen::Index>(v.size()), 3);
  for (size_t i = 0; i < v.size(); ++i) mesh.vertices.row(static_cast<Eigen::Index>(i)) = v[i].transpose();
  mesh.faces.resize(static_cast<Eigen::Index>(faces.size()), 3);
  for (size_t i = 0; i < faces.size(); ++i)
    mesh.faces.row(static_cast<Eigen::Index>(i)) = faces[i].transpose();
  return mesh;
}

Mesh make_deformed_sphere(int subdivisions,
                          const std::function<Eigen::Vector3d(const Eigen::Vector3d&)>& displace) {
  Mesh mesh = make_icosphere(subdivisions);
  for (Eigen::Index i = 0; i < mesh.vertices.rows(); ++i) {
    const Eigen::Vector3d p = mesh.vertices.row(i).transpose();
    mesh.vertices.row(i) = displace(p).transpose();
  }
  return mesh;
}

Mesh make_ellipsoid(int subdivisions, double a, double b, double c) {
  Mesh mesh = make_deformed_sphere(subdivisions, [&](const Eigen::Vector3d& u) {
    return Eigen::Vector3d(a * u.x(), b * u.y(), c * u.z());
  });
  mesh.source = "ellipsoid";
  return mesh;
}

Mesh transformed(const Mesh& mesh, const Eigen::Matrix3d& rotation, const Eigen::Vector3d& translation) {
  Mesh out = mesh;
  for (Eigen::Index i = 0; i < out.vertices.rows(); ++i) {
    const Eigen::Vector3d p = mesh.vertices.row(i).transpose();
    out.vertices.row(i) = (rotation * p + translation).transpose();
  }
  return out;
}

Mesh reversed(const Mesh& mesh) {
  Mesh out = mesh;
  out.faces.col(1).swap(out.faces.col(2));
  return out;
}

Mesh merged(const Mesh& a, const Mesh& b) {
  Mesh out = a;
  const auto nv = a.vertices.rows();
  out.vertices.resize(nv + b.vertices.rows(), 3);
  out.vertices << a.vertices, b.vertices;
  out.faces.resize(a.faces.rows() + b.faces.rows(), 3);
  out.faces << a.faces, (b.faces.array() + static_cast<int>(nv)).matrix();
  out.source = a.source + "+" + b.source;
  return out;
}

}  // namespace polystokes
