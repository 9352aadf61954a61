// Mass properties of polyhedra against handbook closed forms and invariance properties.
#include <Eigen/Geometry>
#include <catch2/catch.hpp>

#include "polystokes/core/errors.h"
#include "polystokes/mesh/mass_properties.h"
#include "polystokes/mesh/shapes.h"

using namespace polystokes;
using Catch::Matchers::WithinAbs;
using Catch::Matchers::WithinRel;

TEST_CASE("box volume, centre of mass and inertia match the handbook formula I = m(b^2+c^2)/12",
          "[mass_properties]") {
  // Solid cuboid about its centre: Ixx = m(b^2 + c^2)/12 etc. (e.g. Meriam & Kraige, Engineering Mechanics:
  // Dynamics, table of mass moments of inertia; common practice).
  const double a = 2.0, b = 3.0, c = 5.0, rho = 1700.0;
  const Eigen::Vector3d shift(10.0, -4.0, 7.5);
  const Mesh box = transformed(make_box(a, b, c), Eigen::Matrix3d::Identity(), shift);
  const MassProperties p = mass_properties({DensityRegion{box, rho}});
  const double m = rho * a * b * c;
  CHECK_THAT(p.volume, WithinRel(a * b * c, 1e-14));
  CHECK_THAT(p.mass, WithinRel(m, 1e-14));
  for (int i = 0; i < 3; ++i) CHECK_THAT(p.center_of_mass[i], WithinAbs(shift[i], 1e-12));
  CHECK_THAT(p.inertia(0, 0), WithinRel(m * (b * b + c * c) / 12, 1e-12));
  CHECK_THAT(p.inertia(1, 1), WithinRel(m * (a * a + c * c) / 12, 1e-12));
  CHECK_THAT(p.inertia(2, 2), WithinRel(m * (a * a + b * b) / 12, 1e-12));
  CHECK_THAT(p.inertia(0, 1), WithinAbs(0.0, 1e-9 * m));
  // Smallest moment is about z (the axis across the two shortest sides), so the first principal axis is +z.
  CHECK_THAT(p.principal_moments[0], WithinRel(m * (a * a + b * b) / 12, 1e-12));
  CHECK_THAT(p.principal_axes(2, 0), WithinRel(1.0, 1e-12));
}

TEST_CASE("unit cube inertia is m/6 on every axis (handbook I = m(b^2+c^2)/12 with b = c = 1)", "[mass_properties]") {
  const MassProperties p = mass_properties({DensityRegion{make_box(1, 1, 1), 1.0}});
  CHECK_THAT(p.volume, WithinRel(1.0, 1e-15));
  for (int i = 0; i < 3; ++i) CHECK_THAT(p.inertia(i, i), WithinRel(1.0 / 6.0, 1e-14));
}

TEST_CASE("principal axes follow a rotated body and obey the documented sign rule", "[mass_properties]") {
  // Property: rotating the body by Q rotates the principal axes by Q (up to the sign rule) and leaves the
  // principal moments unchanged (common practice).
  const Mesh body = make_ellipsoid(3, 3.0, 2.0, 1.0);
  const Eigen::Matrix3d Q = (Eigen::AngleAxisd(0.3, Eigen::Vector3d(1, 2, 3).normalized())).toRotationMatrix();
  const MassProperties p0 = mass_properties({DensityRegion{body, 1.0}});
  const MassProperties p1 = mass_properties({DensityRegion{transformed(body, Q, Eigen::Vector3d(5, 6, 7)), 1.0}});
  for (int k = 0; k < 3; ++k) {
    CHECK_THAT(p1.principal_moments[k], WithinRel(p0.principal_moments[k], 1e-12));
    const Eigen::Vector3d expected = Q * p0.principal_axes.col(k);
    CHECK_THAT(std::abs(expected.dot(p1.principal_axes.col(k))), WithinRel(1.0, 1e-10));
  }
  CHECK_THAT(p1.principal_axes.determinant(), WithinRel(1.0, 1e-12));
  for (int k = 0; k < 2; ++k) {
    Eigen::Index largest;
    p1.principal_axes.col(k).cwiseAbs().maxCoeff(&largest);
    CHECK(p1.principal_axes(largest, k) > 0);
  }
  // Ellipsoid a > b > c: smallest moment about the longest (x) axis.
  CHECK_THAT(std::abs(p0.principal_axes(0, 0)), WithinRel(1.0, 1e-10));
}

TEST_CASE("a void region subtracts mass and moves the centre of mass as the lever rule says", "[mass_properties]") {
  // Lever rule for superposed masses (common practice): c = (m1 c1 + m2 c2)/(m1 + m2).
  const Mesh outer = make_box(4, 4, 4);
  const Mesh hole = transformed(make_box(1, 1, 1), Eigen::Matrix3d::Identity(), Eigen::Vector3d(1, 0, 0));
  const MassProperties p = mass_properties({DensityRegion{outer, 2.0}, DensityRegion{hole, -2.0}});
  CHECK_THAT(p.mass, WithinRel(2.0 * 63.0, 1e-14));
  CHECK_THAT(p.center_of_mass.x(), WithinRel((0.0 * 128.0 - 1.0 * 2.0) / 126.0, 1e-12));
  CHECK_THROWS_AS(mass_properties({DensityRegion{outer, -1.0}}), ConventionError);
}

TEST_CASE("Brillouin radius is the largest vertex distance from the origin", "[mass_properties]") {
  // Box half-diagonal sqrt(a^2+b^2+c^2)/2 (elementary geometry).
  const std::vector<DensityRegion> regions{{make_box(2, 3, 6), 1.0}};
  CHECK_THAT(brillouin_radius(regions, Eigen::Vector3d::Zero()), WithinRel(3.5, 1e-15));
}

TEST_CASE("moments of a large mesh are identical for any thread count and match the sphere's closed form",
          "[mass_properties]") {
  // Over 65536 faces, so the faces are summed in several chunks. The inscribed polyhedron's volume is below
  // 4 pi / 3 and approaches it (ball volume, common practice); its second moment approaches
  // int x^2 dV = 4 pi / 15 (handbook integral over the unit ball).
  const Mesh sphere = make_geodesic_sphere(64);
  REQUIRE(sphere.faces.rows() > 65536);
  const VolumeMoments one = volume_moments(sphere, 1);
  for (int threads : {2, 3, 0}) {
    const VolumeMoments many = volume_moments(sphere, threads);
    CHECK(many.volume == one.volume);
    CHECK(many.first == one.first);
    CHECK(many.second == one.second);
  }
  CHECK(one.volume < 4.0 * M_PI / 3.0);
  CHECK(one.volume == Approx(4.0 * M_PI / 3.0).epsilon(1e-3));
  CHECK(one.second(0, 0) == Approx(4.0 * M_PI / 15.0).epsilon(2e-3));
  CHECK(one.second(0, 1) == Approx(0.0).margin(1e-12));
  const std::vector<DensityRegion> regions{{sphere, 1.0}};
  CHECK(brillouin_radius(regions, Eigen::Vector3d(0.1, 0, 0), 2) ==
        brillouin_radius(regions, Eigen::Vector3d(0.1, 0, 0), 1));
  CHECK(mass_properties(regions, 2).region_volumes.at(0) == one.volume);
}
