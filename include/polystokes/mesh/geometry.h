// Geometric measures and queries on triangle meshes, each written once: triangle solid angle, winding
// number, signed cone volume, distance to the surface, and the sign rule that makes principal axes unique.
#pragma once

#include <Eigen/Core>
#include <memory>
#include <vector>

#include "polystokes/core/mesh.h"

namespace polystokes {

/// Signed solid angle (sr) of the triangle r[0] r[1] r[2] given relative to the viewpoint, with |r[k]| in
/// norm[k] and `triple` = r[0] . ((r[1] - r[0]) x (r[2] - r[0])) (the edge-vector form, free of the
/// cancellation of r[0] . (r[1] x r[2]) for a distant triangle): positive when the triangle's right-hand
/// normal points away from the viewpoint, so an outward mesh's faces add up to 4 pi inside. Van Oosterom &
/// Strackee 1983, "The solid angle of a plane triangle", IEEE Trans. Biomed. Eng. 30(2), 125-126:
/// tan(omega/2) = triple / (|r0||r1||r2| + (r0.r1)|r2| + (r0.r2)|r1| + (r1.r2)|r0|). Zero when the viewpoint
/// lies in the triangle's plane (the mean of the two one-sided limits +-2 pi on the triangle itself).
double solid_angle(const Eigen::Vector3d (&r)[3], const double (&norm)[3], double triple);

/// The same for triangle (a, b, c) seen from `point` (all in one frame).
double solid_angle(const Eigen::Vector3d& point, const Eigen::Vector3d& a, const Eigen::Vector3d& b,
                   const Eigen::Vector3d& c);

/// Winding number of a closed mesh about `point` (m): the sum of the faces' solid angles over 4 pi. 1 inside
/// a closed outward mesh, 0 outside and in its cavities; not an integer on the surface. O(F).
double winding_number(const Mesh& mesh, const Eigen::Vector3d& point);

/// Sum of the signed volumes of the tetrahedra (apex, a, b, c) over the faces (all faces, or the listed
/// ones), m^3: for a closed outward mesh its volume, whatever the apex; an apex near the faces keeps the sum
/// free of cancellation for bodies far from the origin. O(F).
double signed_volume(const Mesh& mesh, const Eigen::Vector3d& apex);
double signed_volume(const Mesh& mesh, const std::vector<int>& faces, const Eigen::Vector3d& apex);

/// The faces of one or more meshes in a bounding-box tree (CGAL's AABB_tree over EPICK triangles) for
/// repeated point and ray queries on one surface: O(F log F) to build, about O(log F) per query. Copies the
/// triangles; the meshes may go.
class SurfaceTree {
 public:
  explicit SurfaceTree(const Mesh& mesh);
  explicit SurfaceTree(const std::vector<const Mesh*>& meshes);
  ~SurfaceTree();
  SurfaceTree(SurfaceTree&&) noexcept;
  SurfaceTree& operator=(SurfaceTree&&) noexcept;

  /// Distance (m) from `point` to the nearest point of the faces; infinity for a mesh without faces.
  double distance(const Eigen::Vector3d& point) const;

  /// Largest distance (m) along the unit direction `u` from `origin` at which the ray meets a face, 0 when
  /// it meets none. The tree picks the faces the ray crosses (CGAL's exact ray-triangle predicate); the
  /// distance to each is the Moller & Trumbore 1997 solution ("Fast, minimum storage ray-triangle
  /// intersection", J. Graphics Tools 2), so a hit on an edge or a vertex is counted once with the same
  /// value from every face there.
  double farthest_hit(const Eigen::Vector3d& origin, const Eigen::Vector3d& u) const;

 private:
  struct Tree;
  std::unique_ptr<Tree> tree_;
};

/// The sign rule that makes eigenvector axes unique: the first two columns get their largest-magnitude
/// component positive, and the third becomes their cross product (right-handed). Used for the principal
/// axes of mass properties and of coefficient sets alike.
Eigen::Matrix3d with_axis_sign_rule(Eigen::Matrix3d axes);

}  // namespace polystokes
