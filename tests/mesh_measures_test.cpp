// Size and sampling measures against closed forms of boxes (elementary geometry) and the definitions in
// mesh_measures.h.
#include "polystokes/mesh/mesh_measures.h"

#include <catch2/catch.hpp>
#include <cmath>

#include "polystokes/mesh/shapes.h"

using namespace polystokes;
using Catch::Matchers::WithinRel;

TEST_CASE("A box's area, bounding box, edges and equivalent radius match the closed forms",
          "[mesh_measures]") {
  const double a = 2, b = 3, c = 5;
  const MeshMeasures m = measure_mesh(make_box(a, b, c));
  CHECK_THAT(m.surface_area, WithinRel(2 * (a * b + b * c + c * a), 1e-14));  // 62 m^2
  CHECK(m.box_min == Eigen::Vector3d(-a / 2, -b / 2, -c / 2));
  CHECK(m.box_max == Eigen::Vector3d(a / 2, b / 2, c / 2));
  CHECK(m.components == 1);
  // 12 box edges and one diagonal on each of the 6 sides (two triangles per side).
  CHECK(m.edges == 18);
  CHECK(m.edge_min == a);
  CHECK_THAT(m.edge_max, WithinRel(std::sqrt(b * b + c * c), 1e-15));
  const double total = 4 * (a + b + c) + 2 * (std::hypot(a, b) + std::hypot(b, c) + std::hypot(a, c));
  CHECK_THAT(m.edge_mean, WithinRel(total / 18, 1e-14));
  CHECK_THAT(m.volume, WithinRel(a * b * c, 1e-14));
  const double pi = std::acos(-1.0);
  const double radius = std::cbrt(3 * a * b * c / (4 * pi));  // sphere of the same volume
  CHECK_THAT(m.equivalent_radius, WithinRel(radius, 1e-14));
  CHECK(m.resolvable_degree == int(std::floor(pi * radius / (total / 18))));
}

TEST_CASE("Separate bodies count as components; the area of a fine icosphere tends to 4 pi",
          "[mesh_measures]") {
  const Mesh pair = merged(make_box(1, 1, 1), transformed(make_box(1, 1, 1), Eigen::Matrix3d::Identity(),
                                                          Eigen::Vector3d(3, 0, 0)));
  const FaceComponents pieces = face_components(pair);
  CHECK(pieces.count == 2);
  CHECK(pieces.label.front() == 0);
  CHECK(pieces.label.back() == 1);
  CHECK(measure_mesh(pair).components == 2);
  CHECK(measure_mesh(pair).surface_area == Approx(12.0).epsilon(1e-14));

  // An inscribed polyhedron's area is below the sphere's 4 pi and approaches it as the faces shrink (the
  // chord error per face is O(h^2)): within 1% at 5120 faces.
  const double pi = std::acos(-1.0);
  const MeshMeasures sphere = measure_mesh(make_icosphere(4));
  CHECK(sphere.surface_area < 4 * pi);
  CHECK(sphere.surface_area > 0.99 * 4 * pi);
  // A finer sampling resolves a higher degree: each subdivision halves the edges and doubles the degree.
  const MeshMeasures finer = measure_mesh(make_icosphere(5));
  CHECK(finer.resolvable_degree >= 2 * sphere.resolvable_degree - 1);
  CHECK(finer.resolvable_degree <= 2 * sphere.resolvable_degree + 1);
}
