// Exact Stokes coefficients of polyhedra: closed forms for boxes, ellipsoids and spheres, fast path against
// the quadrature reference path, and invariance properties (Legendre functions: legendre_test).
#include <Eigen/Geometry>
#include <catch2/catch.hpp>
#include <cmath>

#include "polystokes/sets/conventions.h"
#include "polystokes/core/errors.h"
#include "polystokes/core/constants.h"
#include "polystokes/harmonics/compute.h"
#include "polystokes/mesh/shapes.h"
#include "test_support.h"

using namespace polystokes;
using Catch::Matchers::WithinAbs;
using Catch::Matchers::WithinRel;

namespace {

// 4pi full normalization factor straight from factorials (independent of conventions.cpp):
// N_nm = sqrt((2 - delta_m0)(2n+1)(n-m)!/(n+m)!), IERS Conventions 2010, ch. 6, eq. 6.3.
double full_norm(int n, int m) {
  return std::sqrt((m == 0 ? 1.0 : 2.0) * (2 * n + 1) * std::tgamma(n - m + 1.0) / std::tgamma(n + m + 1.0));
}

CoefficientSet compute(const Mesh& mesh, int degree, double reference_radius = 0,
                       OriginKind origin = OriginKind::center_of_mass) {
  ComputeOptions options;
  options.degree = degree;
  options.reference_radius = reference_radius;
  options.origin = origin;
  return compute_coefficients({DensityRegion{mesh, 2000.0}}, options);
}

// A smooth, bent, two-lobed body that is not star-shaped about its centre of mass.
Mesh bent_peanut(int subdivisions) {
  return make_deformed_sphere(subdivisions, [](const Eigen::Vector3d& u) {
    const double waist = 1.0 - 0.55 * std::exp(-(u.x() / 0.32) * (u.x() / 0.32));
    const double x = 2.2 * u.x(), y = 0.9 * waist * u.y(), z = 0.75 * waist * u.z();
    const double bend = 1.6;
    return Eigen::Vector3d((bend + y) * std::sin(x / bend), (bend + y) * std::cos(x / bend) - bend, z);
  });
}

double max_relative_difference(const HarmonicMoments& a, const HarmonicMoments& b, int n) {
  double worst = 0, scale = 0;
  for (int m = 0; m <= n; ++m) {
    worst = std::max({worst, std::abs(a.re(n, m) - b.re(n, m)), std::abs(a.im(n, m) - b.im(n, m))});
    scale = std::max({scale, std::abs(b.re(n, m)), std::abs(b.im(n, m))});
  }
  return worst / scale;
}

}  // namespace

TEST_CASE("unit cube: degree 4 matches closed-form monomial box integrals, odd and degree-2 terms vanish",
          "[harmonics]") {
  // Cube [-h,h]^3, h = 1/2, mean values over the volume: <x^4> = h^4/5, <x^2 y^2> = h^4/9 (elementary
  // integrals). r^4 P4(z/r) = (35 z^4 - 30 z^2 r^2 + 3 r^4)/8 with <r^4> = 19h^4/15, <z^2 r^2> = 19h^4/45 gives
  // <r^4 P4> = -7h^4/30, so unnormalized C40 = -7h^4/(30 R^4). r^4 P44 cos(4 lon) = 105 (x^4 - 6x^2y^2 + y^4)
  // has mean -28h^4, and C44 = 2 (0!/8!) (-28 h^4)/R^4 = -h^4/(720 R^4) (unnormalized definition
  // C_nm = (2 - delta_m0)(n-m)!/(n+m)! (1/M R^n) int r^n Pnm cos(m lon) dM, Heiskanen & Moritz 1967,
  // Physical Geodesy, sec. 1-14, from memory).
  const double h = 0.5, R = 1.0;
  const CoefficientSet set = compute(make_box(1, 1, 1), 6, R);
  CHECK_THAT(set.C(0, 0), WithinRel(1.0, 1e-14));
  CHECK_THAT(set.C(4, 0), WithinRel(-7.0 * std::pow(h, 4) / 30.0 / full_norm(4, 0), 1e-12));
  CHECK_THAT(set.C(4, 4), WithinRel(-std::pow(h, 4) / 720.0 / full_norm(4, 4), 1e-12));
  // Cubic symmetry: normalized C44 = sqrt(5/7) C40 (follows from the two values above).
  CHECK_THAT(set.C(4, 4), WithinRel(std::sqrt(5.0 / 7.0) * set.C(4, 0), 1e-12));
  for (int n = 1; n <= 6; ++n)
    for (int m = 0; m <= n; ++m) {
      CAPTURE(n, m);
      const bool allowed = (n == 4 && (m == 0 || m == 4)) || (n == 6 && (m == 0 || m == 4));
      if (!allowed) {
        CHECK_THAT(set.C(n, m), WithinAbs(0.0, 1e-15));
        CHECK_THAT(set.S(n, m), WithinAbs(0.0, 1e-15));
      }
    }
}

TEST_CASE("box degree 2 equals the inertia relations C20 = (A+B-2C)/(2MR^2), C22 = (B-A)/(4MR^2)", "[harmonics]") {
  // MacCullagh-type relations between degree-2 Stokes coefficients and the inertia tensor (Kaula 1966,
  // Theory of Satellite Geodesy, ch. 1; from memory), with the box inertia from the handbook m(b^2+c^2)/12.
  const double a = 3, b = 2, c = 1.2, R = 2.0;
  const CoefficientSet set = compute(make_box(a, b, c), 2, R);
  const double A = (b * b + c * c) / 12, B = (a * a + c * c) / 12, C = (a * a + b * b) / 12;  // per unit mass
  CHECK_THAT(set.C(2, 0) * full_norm(2, 0), WithinRel((A + B - 2 * C) / (2 * R * R), 1e-12));
  CHECK_THAT(set.C(2, 2) * full_norm(2, 2), WithinRel((B - A) / (4 * R * R), 1e-12));
  CHECK_THAT(set.S(2, 2), WithinAbs(0.0, 1e-15));
}

TEST_CASE("degree 1 equals centre of mass / R and degree 2 the full inertia tensor (origin = mesh)", "[harmonics]") {
  // Unnormalized C10 = z_c/R, C11 = x_c/R, S11 = y_c/R (common practice); degree 2 about the COM:
  // C21 = -Ixz/(MR^2), S21 = -Iyz/(MR^2), S22 = -Ixy/(2MR^2) with products of inertia I_ij = -int x_i x_j dm
  // (Kaula 1966, Theory of Satellite Geodesy, from memory).
  const Eigen::Matrix3d Q = Eigen::AngleAxisd(0.7, Eigen::Vector3d(1, -2, 0.5).normalized()).toRotationMatrix();
  const Mesh body = transformed(make_ellipsoid(3, 3.0, 2.0, 1.4), Q, Eigen::Vector3d(0.3, -0.2, 0.45));
  const double R = 5.0;
  const MassProperties p = mass_properties({DensityRegion{body, 2000.0}});
  const CoefficientSet at_mesh = compute(body, 2, R, OriginKind::mesh);
  const Eigen::Vector3d c = p.center_of_mass;
  CHECK_THAT(at_mesh.C(1, 0) * full_norm(1, 0), WithinRel(c.z() / R, 1e-12));
  CHECK_THAT(at_mesh.C(1, 1) * full_norm(1, 1), WithinRel(c.x() / R, 1e-12));
  CHECK_THAT(at_mesh.S(1, 1) * full_norm(1, 1), WithinRel(c.y() / R, 1e-12));

  const CoefficientSet at_com = compute(body, 2, R);
  const Eigen::Matrix3d I = p.inertia / (p.mass * R * R);
  CHECK_THAT(at_com.C(1, 0), WithinAbs(0.0, 1e-15));
  CHECK_THAT(at_com.C(2, 0) * full_norm(2, 0), WithinRel((I(0, 0) + I(1, 1) - 2 * I(2, 2)) / 2, 1e-11));
  CHECK_THAT(at_com.C(2, 1) * full_norm(2, 1), WithinRel(-I(0, 2), 1e-11));
  CHECK_THAT(at_com.S(2, 1) * full_norm(2, 1), WithinRel(-I(1, 2), 1e-11));
  CHECK_THAT(at_com.C(2, 2) * full_norm(2, 2), WithinRel((I(1, 1) - I(0, 0)) / 4, 1e-11));
  CHECK_THAT(at_com.S(2, 2) * full_norm(2, 2), WithinRel(-I(0, 1) / 2, 1e-11));
}

TEST_CASE("triaxial ellipsoid meshes converge to the homogeneous-ellipsoid C20 and C22 under refinement",
          "[harmonics]") {
  // Homogeneous ellipsoid with semi-axes a, b, c: unnormalized C20 = (2c^2 - a^2 - b^2)/(10 R^2),
  // C22 = (a^2 - b^2)/(20 R^2) (MacMillan 1930, The Theory of the Potential; Balmino 1994, Celestial
  // Mechanics and Dynamical Astronomy 60, 331-364).
  const double a = 3.0, b = 2.0, c = 1.5, R = 3.0;
  const double c20 = (2 * c * c - a * a - b * b) / (10 * R * R) / full_norm(2, 0);
  const double c22 = (a * a - b * b) / (20 * R * R) / full_norm(2, 2);
  double previous20 = 1, previous22 = 1;
  for (int subdivisions = 2; subdivisions <= 5; ++subdivisions) {
    const CoefficientSet set = compute(make_ellipsoid(subdivisions, a, b, c), 2, R);
    const double error20 = std::abs(set.C(2, 0) / c20 - 1), error22 = std::abs(set.C(2, 2) / c22 - 1);
    CAPTURE(subdivisions, error20, error22);
    // Inscribed meshes converge at second order in the edge length: about 4x per subdivision.
    CHECK(error20 < previous20 / 3);
    CHECK(error22 < previous22 / 3);
    previous20 = error20;
    previous22 = error22;
  }
  CHECK(previous20 < 1e-3);
  CHECK(previous22 < 1e-3);
}

TEST_CASE("sphere-like meshes: all terms above degree 0 tend to zero (shell theorem)", "[harmonics]") {
  // Newton's shell theorem: a homogeneous ball's exterior field is that of a point mass (common practice).
  double previous = 1;
  for (int subdivisions = 2; subdivisions <= 5; ++subdivisions) {
    const CoefficientSet set = compute(make_icosphere(subdivisions), 8, 1.0);
    double largest = 0;
    for (int n = 1; n <= 8; ++n)
      for (int m = 0; m <= n; ++m) largest = std::max({largest, std::abs(set.C(n, m)), std::abs(set.S(n, m))});
    CAPTURE(subdivisions, largest);
    CHECK(largest < previous / 3);
    previous = largest;
  }
  CHECK(previous < 1e-4);
}

TEST_CASE("fast path equals the quadrature reference path on a non-star-shaped body to 1e-10 (degree 12)",
          "[harmonics]") {
  // Two independent exact schemes: Whittaker representation + simplex closed form versus Gauss product
  // quadrature of the Legendre recursion over every face. Also with the origin outside the body.
  const Mesh body = bent_peanut(3);
  const MassProperties p = mass_properties({DensityRegion{body, 1.0}});
  // The centre of mass of the bent body lies outside it: a ray from there crosses the surface more than twice.
  for (const Eigen::Vector3d origin : {p.center_of_mass, Eigen::Vector3d(0.0, 3.0, 1.0)}) {
    std::vector<DensityRegion> regions{{body, 1.0}};
    HarmonicFrame frame;
    frame.origin = origin;
    frame.scale_radius = brillouin_radius(regions, origin);
    const HarmonicMoments fast = harmonic_moments(regions, frame, 12);
    const HarmonicMoments reference = harmonic_moments_reference(regions, frame, 12);
    CoefficientSet a = make_empty_set(12), b = make_empty_set(12);
    moments_to_coefficients(fast, p.mass, frame.scale_radius, a);
    moments_to_coefficients(reference, p.mass, frame.scale_radius, b);
    test::require_sets_close(a, b, 12, 1e-10);
    CHECK(test::max_coefficient_difference(a, b, 12) < 1e-13);
  }
}

TEST_CASE("degree 150: fast path stays finite and matches the reference path to 1e-12 relative per degree",
          "[harmonics]") {
  // Numerical stability at high degree: no overflow (coordinates scaled to the Brillouin radius, scaled
  // Fourier coefficients) and no loss of accuracy against the independent quadrature path.
  const Mesh tetra = [] {
    Mesh m;
    m.vertices.resize(4, 3);
    m.vertices << 1.0, 0.2, -0.3, -0.4, 1.1, 0.1, -0.5, -0.7, 0.6, 0.3, -0.2, 1.2;
    m.faces.resize(4, 3);
    m.faces << 0, 2, 1, 0, 1, 3, 0, 3, 2, 1, 2, 3;
    return m;
  }();
  std::vector<DensityRegion> regions{{tetra, 1.0}};
  if (volume_moments(tetra).volume < 0) regions.front().mesh = reversed(tetra);
  HarmonicFrame frame;
  frame.origin = Eigen::Vector3d(0.05, 0.1, 0.15);
  frame.scale_radius = brillouin_radius(regions, frame.origin);
  const HarmonicMoments fast = harmonic_moments(regions, frame, 150);
  const HarmonicMoments reference = harmonic_moments_reference(regions, frame, 150);
  REQUIRE(fast.re.allFinite());
  REQUIRE(fast.im.allFinite());
  for (int n : {10, 50, 100, 149, 150}) {
    CAPTURE(n);
    CHECK(max_relative_difference(fast, reference, n) < 1e-12);
  }
}

TEST_CASE("translating the mesh with origin = centre of mass gives the same set", "[harmonics]") {
  // Property: the expansion about the centre of mass is intrinsic to the body.
  const Mesh body = bent_peanut(3);
  const CoefficientSet a = compute(body, 10, 3.0);
  const CoefficientSet b = compute(transformed(body, Eigen::Matrix3d::Identity(), Eigen::Vector3d(40, -25, 13)), 10, 3.0);
  test::require_sets_close(a, b, 10, 1e-12);
}

TEST_CASE("rotating the mesh by 90 degrees about z maps C22 to -C22 and the order-1 terms C to S", "[harmonics]") {
  // A body turned by alpha about z has C'_nm = C cos(m alpha) - S sin(m alpha), S'_nm = C sin(m alpha) + S cos(m alpha)
  // (longitude shift of the addition theorem; common practice). For alpha = 90 deg: C'_n1 = -S_n1, S'_n1 = C_n1,
  // C'_n2 = -C_n2, S'_n2 = -S_n2.
  const Mesh body = bent_peanut(3);
  const Eigen::Matrix3d Rz = Eigen::AngleAxisd(M_PI / 2, Eigen::Vector3d::UnitZ()).toRotationMatrix();
  const CoefficientSet a = compute(body, 8, 3.0);
  const CoefficientSet b = compute(transformed(body, Rz, Eigen::Vector3d::Zero()), 8, 3.0);
  CHECK_THAT(b.C(2, 2), WithinAbs(-a.C(2, 2), 1e-13));
  CHECK_THAT(b.S(2, 2), WithinAbs(-a.S(2, 2), 1e-13));
  for (int n = 1; n <= 8; ++n)
    for (int m = 0; m <= n; ++m) {
      CAPTURE(n, m);
      const double alpha = M_PI / 2;
      CHECK_THAT(b.C(n, m), WithinAbs(a.C(n, m) * std::cos(m * alpha) - a.S(n, m) * std::sin(m * alpha), 1e-13));
      CHECK_THAT(b.S(n, m), WithinAbs(a.C(n, m) * std::sin(m * alpha) + a.S(n, m) * std::cos(m * alpha), 1e-13));
    }
}

TEST_CASE("a body given as two meshes with densities equals the single merged body", "[harmonics]") {
  // Superposition of the Newtonian potential (common practice).
  const Mesh a = make_ellipsoid(3, 1.0, 0.8, 0.6);
  const Mesh b = transformed(make_ellipsoid(3, 0.7, 0.5, 0.5), Eigen::Matrix3d::Identity(), Eigen::Vector3d(2.5, 0.4, -0.3));
  ComputeOptions options;
  options.degree = 10;
  const CoefficientSet two = compute_coefficients({DensityRegion{a, 1500.0}, DensityRegion{b, 1500.0}}, options);
  const CoefficientSet one = compute_coefficients({DensityRegion{merged(a, b), 1500.0}}, options);
  test::require_sets_close(two, one, 10, 1e-13);
  CHECK_THAT(two.gm, WithinRel(one.gm, 1e-14));
  CHECK(two.regions.size() == 2);
}

TEST_CASE("a concentric spherical void leaves only degree 0 and reduces GM by the void's mass", "[harmonics]") {
  // Shell theorem for a homogeneous shell (common practice), superposed regions with a negative contrast.
  const Mesh outer = make_icosphere(4);
  const Mesh inner = transformed(make_icosphere(4), 0.5 * Eigen::Matrix3d::Identity(), Eigen::Vector3d::Zero());
  ComputeOptions options;
  options.degree = 6;
  options.reference_radius = 1.0;
  const CoefficientSet shell = compute_coefficients({DensityRegion{outer, 1000.0}, DensityRegion{inner, -1000.0}}, options);
  const double volume = volume_moments(outer).volume - volume_moments(inner).volume;
  CHECK_THAT(shell.gm, WithinRel(gravitational_constant * 1000.0 * volume, 1e-13));
  for (int n = 1; n <= 6; ++n)
    for (int m = 0; m <= n; ++m) CHECK_THAT(shell.C(n, m), WithinAbs(0.0, 2e-4));
}

TEST_CASE("given mass properties give the same set as computing them, and must match the regions",
          "[harmonics]") {
  // The superposed pair of the test above (superposition of the Newtonian potential, common practice).
  const std::vector<DensityRegion> regions{
      {make_ellipsoid(3, 1.0, 0.8, 0.6), 1500.0},
      {transformed(make_ellipsoid(3, 0.7, 0.5, 0.5), Eigen::Matrix3d::Identity(), Eigen::Vector3d(2.5, 0.4, -0.3)),
       1500.0}};
  ComputeOptions options;
  options.degree = 8;
  const CoefficientSet own = compute_coefficients(regions, options);
  const CoefficientSet given = compute_coefficients(regions, mass_properties(regions), options);
  CHECK(given.C == own.C);
  CHECK(given.S == own.S);
  CHECK(given.gm == own.gm);
  CHECK(given.regions.at(1).volume == own.regions.at(1).volume);
  CHECK_THROWS_AS(compute_coefficients(regions, mass_properties({regions.front()}), options), ConventionError);
}

TEST_CASE("results do not depend on the thread count (fixed chunking and reduction order)", "[harmonics]") {
  const std::vector<DensityRegion> regions{{make_ellipsoid(5, 3, 2, 1), 1.0}};
  HarmonicFrame frame;
  frame.scale_radius = 3.0;
  MomentOptions one, two;
  one.threads = 1;
  two.threads = 2;
  const HarmonicMoments a = harmonic_moments(regions, frame, 12, one);
  const HarmonicMoments b = harmonic_moments(regions, frame, 12, two);
  CHECK((a.re.array() == b.re.array()).all());
  CHECK((a.im.array() == b.im.array()).all());
}

TEST_CASE("bad parameters are refused before any work", "[harmonics]") {
  const Mesh body = make_box(1, 1, 1);
  CHECK_THROWS_AS(compute(body, -1), ConventionError);
  CHECK_THROWS_AS(compute(body, 100000), ResourceError);
  ComputeOptions options;
  CHECK_THROWS_AS(compute_coefficients({DensityRegion{body, -5.0}}, options), ConventionError);
}
