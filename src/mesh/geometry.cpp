#include "polystokes/mesh/geometry.h"

#include <CGAL/AABB_traits.h>
#include <CGAL/AABB_tree.h>
#include <CGAL/AABB_triangle_primitive.h>
#include <CGAL/Exact_predicates_inexact_constructions_kernel.h>

#include <Eigen/Geometry>
#include <algorithm>
#include <cmath>
#include <iterator>
#include <limits>

namespace polystokes {

namespace {

Eigen::Vector3d corner(const Mesh& mesh, Eigen::Index f, int k) {
  return mesh.vertices.row(mesh.faces(f, k)).transpose();
}

double cone_volume(const Mesh& mesh, Eigen::Index f, const Eigen::Vector3d& apex) {
  return (corner(mesh, f, 0) - apex).dot((corner(mesh, f, 1) - apex).cross(corner(mesh, f, 2) - apex)) / 6.0;
}

}  // namespace

double solid_angle(const Eigen::Vector3d (&r)[3], const double (&norm)[3], double triple) {
  if (triple == 0) return 0.0;
  const double denominator = norm[0] * norm[1] * norm[2] + r[0].dot(r[1]) * norm[2] +
                             r[0].dot(r[2]) * norm[1] + r[1].dot(r[2]) * norm[0];
  return 2.0 * std::atan2(triple, denominator);
}

double solid_angle(const Eigen::Vector3d& point, const Eigen::Vector3d& a, const Eigen::Vector3d& b,
                   const Eigen::Vector3d& c) {
  const Eigen::Vector3d r[3] = {a - point, b - point, c - point};
  const double norm[3] = {r[0].norm(), r[1].norm(), r[2].norm()};
  return solid_angle(r, norm, r[0].dot((b - a).cross(c - a)));
}

double winding_number(const Mesh& mesh, const Eigen::Vector3d& point) {
  double angle = 0;
  for (Eigen::Index f = 0; f < mesh.faces.rows(); ++f)
    angle += solid_angle(point, corner(mesh, f, 0), corner(mesh, f, 1), corner(mesh, f, 2));
  return angle / (4.0 * M_PI);
}

double signed_volume(const Mesh& mesh, const Eigen::Vector3d& apex) {
  double volume = 0;
  for (Eigen::Index f = 0; f < mesh.faces.rows(); ++f) volume += cone_volume(mesh, f, apex);
  return volume;
}

double signed_volume(const Mesh& mesh, const std::vector<int>& faces, const Eigen::Vector3d& apex) {
  double volume = 0;
  for (const int f : faces) volume += cone_volume(mesh, f, apex);
  return volume;
}

struct SurfaceTree::Tree {
  using Kernel = CGAL::Exact_predicates_inexact_constructions_kernel;
  using Triangles = std::vector<Kernel::Triangle_3>;
  using Primitive = CGAL::AABB_triangle_primitive<Kernel, Triangles::const_iterator>;
  Triangles triangles;
  CGAL::AABB_tree<CGAL::AABB_traits<Kernel, Primitive>> tree;
};

SurfaceTree::SurfaceTree(const Mesh& mesh) : SurfaceTree(std::vector<const Mesh*>{&mesh}) {}

SurfaceTree::SurfaceTree(const std::vector<const Mesh*>& meshes) : tree_(std::make_unique<Tree>()) {
  size_t faces = 0;
  for (const Mesh* mesh : meshes) faces += size_t(mesh->faces.rows());
  tree_->triangles.reserve(faces);
  for (const Mesh* mesh : meshes) {
    auto point = [&](Eigen::Index f, int k) {
      const Eigen::Vector3d p = corner(*mesh, f, k);
      return Tree::Kernel::Point_3(p.x(), p.y(), p.z());
    };
    for (Eigen::Index f = 0; f < mesh->faces.rows(); ++f)
      tree_->triangles.emplace_back(point(f, 0), point(f, 1), point(f, 2));
  }
  // Built here, not on the first query, so that queries from several threads only read the tree.
  tree_->tree.insert(tree_->triangles.begin(), tree_->triangles.end());
  tree_->tree.build();
  tree_->tree.accelerate_distance_queries();
}

SurfaceTree::~SurfaceTree() = default;
SurfaceTree::SurfaceTree(SurfaceTree&&) noexcept = default;
SurfaceTree& SurfaceTree::operator=(SurfaceTree&&) noexcept = default;

double SurfaceTree::distance(const Eigen::Vector3d& point) const {
  if (tree_->triangles.empty()) return std::numeric_limits<double>::infinity();
  return std::sqrt(tree_->tree.squared_distance(Tree::Kernel::Point_3(point.x(), point.y(), point.z())));
}

double SurfaceTree::farthest_hit(const Eigen::Vector3d& origin, const Eigen::Vector3d& u) const {
  using Kernel = Tree::Kernel;
  if (tree_->triangles.empty()) return 0;
  std::vector<Tree::Triangles::const_iterator> crossed;
  const Kernel::Ray_3 ray(Kernel::Point_3(origin.x(), origin.y(), origin.z()),
                          Kernel::Vector_3(u.x(), u.y(), u.z()));
  tree_->tree.all_intersected_primitives(ray, std::back_inserter(crossed));
  auto vector = [](const Kernel::Point_3& p) { return Eigen::Vector3d(p.x(), p.y(), p.z()); };
  double best = 0;
  for (const auto& triangle : crossed) {
    const Eigen::Vector3d a = vector(triangle->vertex(0));
    const Eigen::Vector3d e1 = vector(triangle->vertex(1)) - a, e2 = vector(triangle->vertex(2)) - a;
    const Eigen::Vector3d p = u.cross(e2);
    const double det = e1.dot(p);
    if (det == 0) continue;  // the ray runs in the face's plane: its far end is on a neighbouring face
    const Eigen::Vector3d q = (origin - a).cross(e1);
    best = std::max(best, e2.dot(q) / det);
  }
  return best;
}

Eigen::Matrix3d with_axis_sign_rule(Eigen::Matrix3d axes) {
  for (int k = 0; k < 2; ++k) {
    Eigen::Index largest;
    axes.col(k).cwiseAbs().maxCoeff(&largest);
    if (axes(largest, k) < 0) axes.col(k) = -axes.col(k);
  }
  axes.col(2) = axes.col(0).cross(axes.col(1));
  return axes;
}

}  // namespace polystokes
