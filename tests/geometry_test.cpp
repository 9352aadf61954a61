// Solid angle, winding number, signed volume, distance, ray queries and the axis sign rule (mesh/geometry.h)
// against closed forms.
#include "polystokes/mesh/geometry.h"

#include <Eigen/Geometry>
#include <catch2/catch.hpp>
#include <cmath>

#include "polystokes/mesh/shapes.h"

using namespace polystokes;
using Catch::Matchers::WithinAbs;
using Catch::Matchers::WithinRel;

TEST_CASE("the octant triangle subtends pi/2 from the origin, with the sign of its orientation",
          "[geometry]") {
  // One eighth of the unit sphere's 4 pi (common practice).
  const Eigen::Vector3d o = Eigen::Vector3d::Zero(), x = Eigen::Vector3d::UnitX(),
                        y = Eigen::Vector3d::UnitY(), z = Eigen::Vector3d::UnitZ();
  CHECK_THAT(solid_angle(o, x, y, z), WithinRel(M_PI / 2, 1e-15));
  CHECK_THAT(solid_angle(o, x, z, y), WithinRel(-M_PI / 2, 1e-15));
  // Scaled far away from the viewpoint, the edge-vector form keeps full precision.
  const Eigen::Vector3d shift(1e6, -2e6, 3e6);
  CHECK_THAT(solid_angle(shift, shift + x, shift + y, shift + z), WithinRel(M_PI / 2, 1e-9));
}

TEST_CASE("each half of a cube face subtends 4 pi / 12 from the cube centre", "[geometry]") {
  // Six faces share 4 pi by symmetry, and a diagonal splits a face into two congruent halves seen alike
  // from the centre (common practice).
  const Mesh cube = make_box(2, 2, 2);
  REQUIRE(cube.faces.rows() == 12);
  for (Eigen::Index f = 0; f < cube.faces.rows(); ++f) {
    CAPTURE(f);
    const Eigen::Vector3d a = cube.vertices.row(cube.faces(f, 0)).transpose();
    const Eigen::Vector3d b = cube.vertices.row(cube.faces(f, 1)).transpose();
    const Eigen::Vector3d c = cube.vertices.row(cube.faces(f, 2)).transpose();
    CHECK_THAT(solid_angle(Eigen::Vector3d::Zero(), a, b, c), WithinRel(4 * M_PI / 12, 1e-14));
  }
}

TEST_CASE("winding number is 1 inside a closed outward mesh, 0 outside, 1/2 on a face", "[geometry]") {
  const Mesh box = make_box(2, 3, 4);  // centred on the origin
  CHECK_THAT(winding_number(box, Eigen::Vector3d(0.3, -0.2, 1.1)), WithinAbs(1.0, 1e-13));
  CHECK_THAT(winding_number(box, Eigen::Vector3d(1.5, 0, 0)), WithinAbs(0.0, 1e-13));
  CHECK_THAT(winding_number(box, Eigen::Vector3d(0.2, 0.3, 2.0)), WithinAbs(0.5, 1e-13));
}

TEST_CASE("signed volume of a box is its volume from any apex, and negative when the faces are reversed",
          "[geometry]") {
  Mesh box = make_box(2, 3, 4);
  for (const Eigen::Vector3d apex : {Eigen::Vector3d(0, 0, 0), Eigen::Vector3d(10, -7, 3)})
    CHECK_THAT(signed_volume(box, apex), WithinRel(24.0, 1e-14));
  std::vector<int> all(size_t(box.faces.rows()));
  for (size_t f = 0; f < all.size(); ++f) all[f] = int(f);
  CHECK_THAT(signed_volume(box, all, Eigen::Vector3d(1, 1, 1)), WithinRel(24.0, 1e-14));
  box.faces.col(1).swap(box.faces.col(2));
  CHECK_THAT(signed_volume(box, Eigen::Vector3d::Zero()), WithinRel(-24.0, 1e-14));
}

TEST_CASE("distance to the surface of a box: to a face, an edge and a corner (common practice)",
          "[geometry]") {
  const SurfaceTree box(make_box(2, 2, 2));
  CHECK_THAT(box.distance(Eigen::Vector3d(0, 0, 0)), WithinAbs(1.0, 1e-15));
  CHECK_THAT(box.distance(Eigen::Vector3d(0.1, -0.2, 0.6)), WithinAbs(0.4, 1e-15));
  CHECK_THAT(box.distance(Eigen::Vector3d(0.5, 0, 3)), WithinAbs(2.0, 1e-15));
  CHECK_THAT(box.distance(Eigen::Vector3d(2, 2, 0)), WithinAbs(std::sqrt(2.0), 1e-15));
  CHECK_THAT(box.distance(Eigen::Vector3d(2, 2, 2)), WithinAbs(std::sqrt(3.0), 1e-15));
  CHECK(std::isinf(SurfaceTree(Mesh{}).distance(Eigen::Vector3d::Zero())));
}

TEST_CASE("a ray from inside meets the farthest face of all meshes; a ray away from them meets none",
          "[geometry]") {
  const Mesh inner = make_box(2, 2, 2), outer = make_box(6, 6, 6);
  const std::vector<const Mesh*> meshes{&inner, &outer};
  CHECK_THAT(SurfaceTree(meshes).farthest_hit(Eigen::Vector3d::Zero(), Eigen::Vector3d::UnitX()),
             WithinAbs(3.0, 1e-15));
  const Eigen::Vector3d diagonal = Eigen::Vector3d(1, 1, 0).normalized();
  CHECK_THAT(SurfaceTree(inner).farthest_hit(Eigen::Vector3d::Zero(), diagonal),
             WithinAbs(std::sqrt(2.0), 1e-14));
  CHECK(SurfaceTree(inner).farthest_hit(Eigen::Vector3d(5, 0, 0), Eigen::Vector3d::UnitX()) == 0.0);
}

TEST_CASE(
    "rays through the vertices of a star-shaped body leave it at the vertex distance (elementary "
    "geometry)",
    "[geometry]") {
  // A radial relief on a geodesic sphere is star-shaped about the origin, so the ray towards a vertex leaves
  // the body exactly there: a hit on a vertex shared by about six faces, the hardest case for a ray query.
  Mesh body = make_geodesic_sphere(12);
  for (Eigen::Index i = 0; i < body.vertices.rows(); ++i) {
    const Eigen::Vector3d u = body.vertices.row(i).normalized().transpose();
    body.vertices.row(i) =
        ((1.0 + 0.2 * std::sin(3.0 * u.x()) * std::cos(2.0 * u.y())) * 700.0 * u).transpose();
  }
  const SurfaceTree tree(body);
  for (Eigen::Index i = 0; i < body.vertices.rows(); i += 7) {
    const Eigen::Vector3d v = body.vertices.row(i).transpose();
    CAPTURE(i);
    CHECK_THAT(tree.farthest_hit(Eigen::Vector3d::Zero(), v.normalized()), WithinRel(v.norm(), 1e-12));
  }
}

TEST_CASE("axis sign rule: largest component of the first two axes positive, third their cross product",
          "[geometry]") {
  const Eigen::Matrix3d rotation =
      Eigen::AngleAxisd(0.7, Eigen::Vector3d(1, 2, 3).normalized()).toRotationMatrix();
  for (int signs = 0; signs < 8; ++signs) {
    Eigen::Matrix3d axes = rotation;
    for (int k = 0; k < 3; ++k)
      if (signs & (1 << k)) axes.col(k) = -axes.col(k);
    const Eigen::Matrix3d ruled = with_axis_sign_rule(axes);
    CAPTURE(signs);
    for (int k = 0; k < 2; ++k) {
      Eigen::Index largest;
      ruled.col(k).cwiseAbs().maxCoeff(&largest);
      CHECK(ruled(largest, k) > 0);
      CHECK_THAT(std::abs(ruled.col(k).dot(rotation.col(k))), WithinAbs(1.0, 1e-15));
    }
    CHECK_THAT(ruled.determinant(), WithinAbs(1.0, 1e-14));
    CHECK((ruled - with_axis_sign_rule(rotation)).norm() == 0.0);
  }
}
