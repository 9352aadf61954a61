#include "shapes.h"

#include <map>
#include <utility>

#include "errors.h"

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
