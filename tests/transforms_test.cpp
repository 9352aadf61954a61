// Reference radius and GM rescaling, origin shifts and rotations of coefficient sets: against coefficients
// computed exactly from the shifted or rotated mesh, closed forms, the defining property of the real
// Wigner-D matrices and round trips.
#include "polystokes/sets/transforms.h"

#include <Eigen/Dense>
#include <Eigen/Geometry>
#include <catch2/catch.hpp>
#include <cmath>
#include <random>

#include "polystokes/sets/conventions.h"
#include "polystokes/core/errors.h"
#include "polystokes/harmonics/legendre.h"
#include "polystokes/harmonics/compute.h"
#include "polystokes/field/series.h"
#include "polystokes/mesh/shapes.h"
#include "test_support.h"

using namespace polystokes;
using namespace polystokes::test;
using Catch::Matchers::WithinAbs;
using Catch::Matchers::WithinRel;

namespace {

// Lumpy body with no symmetry: distinct principal moments, all orders present.
Mesh lumpy_body(int subdivisions) {
  return make_deformed_sphere(subdivisions, [](const Eigen::Vector3d& u) {
    const double r =
        1.0 + 0.18 * u.x() * u.y() + 0.12 * u.z() * u.z() * u.x() + 0.1 * std::sin(3 * u.y() + 1);
    return Eigen::Vector3d(1700.0 * r * u.x(), 1100.0 * r * u.y(), 800.0 * r * u.z());
  });
}

CoefficientSet compute_about(const Mesh& mesh, int degree, double reference_radius, OriginKind origin,
                             FrameKind frame = FrameKind::mesh) {
  ComputeOptions options;
  options.degree = degree;
  options.reference_radius = reference_radius;
  options.origin = origin;
  options.frame = frame;
  return compute_coefficients({DensityRegion{mesh, 2100.0}}, options);
}

// Random proper rotation from a random unit quaternion.
Eigen::Matrix3d random_rotation(std::mt19937& rng) {
  std::normal_distribution<double> normal;
  Eigen::Quaterniond q(normal(rng), normal(rng), normal(rng), normal(rng));
  return q.normalized().toRotationMatrix();
}

// Real fully normalized surface harmonics of degree l at direction x, ordered m = -l..l (m < 0: sine part).
Eigen::VectorXd real_harmonics(int l, const Eigen::Vector3d& x) {
  const Eigen::Vector3d u = x.normalized();
  const Eigen::MatrixXd p = fully_normalized_legendre(l, u.z());
  const double lon = std::atan2(u.y(), u.x());
  Eigen::VectorXd y(2 * l + 1);
  for (int m = 0; m <= l; ++m) {
    y(l + m) = p(l, m) * std::cos(m * lon);
    if (m > 0) y(l - m) = p(l, m) * std::sin(m * lon);
  }
  return y;
}

// A set with a realistic (decaying) spectrum of random coefficients, for round trips at high degree.
CoefficientSet random_set(int degree, std::mt19937& rng) {
  CoefficientSet set = make_empty_set(degree);
  std::uniform_real_distribution<double> uniform(-1.0, 1.0);
  for (int n = 0; n <= degree; ++n)
    for (int m = 0; m <= n; ++m) {
      const double scale = n == 0 ? 1.0 : 0.1 / (n * n);
      set.C(n, m) = n == 0 ? 1.0 : scale * uniform(rng);
      set.S(n, m) = m == 0 ? 0.0 : scale * uniform(rng);
      set.sigma_C(n, m) = 0.01 * scale * (1.5 + uniform(rng));
      set.sigma_S(n, m) = m == 0 ? 0.0 : 0.01 * scale * (1.5 + uniform(rng));
    }
  set.gm = 3.2e5;
  set.reference_radius = 2000.0;
  set.brillouin_radius = 2000.0;
  return set;
}

// Largest |a - b| over C and S, relative to the largest |b| of the same degree.
double worst_relative_by_degree(const CoefficientSet& a, const CoefficientSet& b, int max_degree) {
  double worst = 0;
  for (int n = 0; n <= max_degree; ++n) {
    double scale = 0, diff = 0;
    for (int m = 0; m <= n; ++m) {
      scale = std::max({scale, std::abs(b.C(n, m)), std::abs(b.S(n, m))});
      diff = std::max({diff, std::abs(a.C(n, m) - b.C(n, m)), std::abs(a.S(n, m) - b.S(n, m))});
    }
    if (scale > 0) worst = std::max(worst, diff / scale);
  }
  return worst;
}

}  // namespace

TEST_CASE("real Wigner-D matrices satisfy Y_l(Q x) = D_l(Q) Y_l(x) and are orthogonal to degree 400",
          "[transforms]") {
  // Defining property of the rotation matrices of real spherical harmonics (Ivanic & Ruedenberg 1996,
  // J. Phys. Chem. 100, 6342, eq. 1.4); Y from the Holmes & Featherstone 2002 recursion in legendre.h.
  // Rotations near the z-y-z singularities (beta ~ 0, pi) are included.
  std::mt19937 rng(7);
  std::vector<Eigen::Matrix3d> rotations{random_rotation(rng),
                                         random_rotation(rng),
                                         euler_zyz_matrix(0.4, 1e-9, 2.1),
                                         euler_zyz_matrix(-2.9, M_PI - 1e-9, 0.3),
                                         euler_zyz_matrix(1.0, 0.0, 0.0),
                                         euler_zyz_matrix(0.0, M_PI, 0.0)};
  const int degree = 400;
  for (size_t trial = 0; trial < rotations.size(); ++trial) {
    const Eigen::Matrix3d& Q = rotations[trial];
    RealWignerD sequence(Q);
    std::normal_distribution<double> normal;
    const Eigen::Vector3d x(normal(rng), normal(rng), normal(rng));
    for (int l = 0; l <= degree; ++l) {
      const Eigen::MatrixXd& D = sequence.next();
      REQUIRE(sequence.degree() == l);
      if (!(l <= 7 || l == 20 || l == 100 || l == 200 || l == 400)) continue;
      CAPTURE(trial, l);
      const Eigen::VectorXd lhs = real_harmonics(l, Q * x);
      const Eigen::VectorXd rhs = D * real_harmonics(l, x);
      CHECK((lhs - rhs).cwiseAbs().maxCoeff() <= 1e-12 * std::sqrt(2.0 * l + 1.0));
      const Eigen::MatrixXd I = Eigen::MatrixXd::Identity(2 * l + 1, 2 * l + 1);
      CHECK((D * D.transpose() - I).cwiseAbs().maxCoeff() <= 1e-13 * std::sqrt(2.0 * l + 1.0));
    }
  }
}

namespace {

// Ivanic & Ruedenberg 1996 (J. Phys. Chem. 100, 6342-6347, Tables 1-2, with the corrections of the erratum,
// J. Phys. Chem. A 102, 9099, 1998): an independent recursion for the real D_l from D_{l-1} and D_1 = Q in
// the order (y, z, x), written here from the paper's tables. It loses accuracy at high degree, so it is a
// reference at low degree only.
std::vector<Eigen::MatrixXd> ivanic_ruedenberg(const Eigen::Matrix3d& rotation, int degree) {
  std::vector<Eigen::MatrixXd> D(size_t(degree + 1));
  D[0] = Eigen::MatrixXd::Ones(1, 1);
  const int axis[3] = {1, 2, 0};
  D[1].resize(3, 3);
  for (int i = 0; i < 3; ++i)
    for (int j = 0; j < 3; ++j) D[1](i, j) = rotation(axis[i], axis[j]);
  auto r1 = [&](int i, int j) { return D[1](i + 1, j + 1); };
  for (int l = 2; l <= degree; ++l) {
    const Eigen::MatrixXd& prev = D[size_t(l - 1)];
    auto rp = [&](int a, int b) { return prev(a + l - 1, b + l - 1); };
    auto P = [&](int i, int a, int b) {
      if (b == l) return r1(i, 1) * rp(a, l - 1) - r1(i, -1) * rp(a, -l + 1);
      if (b == -l) return r1(i, 1) * rp(a, -l + 1) + r1(i, -1) * rp(a, l - 1);
      return r1(i, 0) * rp(a, b);
    };
    Eigen::MatrixXd& cur = D[size_t(l)];
    cur.resize(2 * l + 1, 2 * l + 1);
    for (int m = -l; m <= l; ++m) {
      const int am = std::abs(m);
      const double d = m == 0 ? 1.0 : 0.0;
      for (int n = -l; n <= l; ++n) {
        const double denominator =
            std::abs(n) == l ? 2.0 * l * (2.0 * l - 1.0) : double(l + n) * double(l - n);
        const double u = std::sqrt(double(l + m) * double(l - m) / denominator);
        const double v =
            0.5 * std::sqrt((1.0 + d) * (l + am - 1.0) * (l + am) / denominator) * (1.0 - 2.0 * d);
        const double w = -0.5 * std::sqrt(std::max(0.0, (l - am - 1.0) * (l - am)) / denominator) * (1.0 - d);
        double value = 0;
        if (u != 0) value += u * P(0, m, n);
        if (v != 0) {
          double V;
          if (m == 0) {
            V = P(1, 1, n) + P(-1, -1, n);
          } else if (m > 0) {
            V = m == 1 ? P(1, 0, n) * std::sqrt(2.0) : P(1, m - 1, n) - P(-1, -m + 1, n);
          } else {
            V = m == -1 ? P(-1, 0, n) * std::sqrt(2.0) : P(1, m + 1, n) + P(-1, -m - 1, n);
          }
          value += v * V;
        }
        if (w != 0)
          value += w * (m > 0 ? P(1, m + 1, n) + P(-1, -m - 1, n) : P(1, m - 1, n) - P(-1, -m + 1, n));
        cur(m + l, n + l) = value;
      }
    }
  }
  return D;
}

}  // namespace

TEST_CASE("real Wigner-D matrices equal the Ivanic & Ruedenberg 1996 recursion to degree 20",
          "[transforms]") {
  std::mt19937 rng(17);
  for (int trial = 0; trial < 3; ++trial) {
    const Eigen::Matrix3d Q = random_rotation(rng);
    const auto reference = ivanic_ruedenberg(Q, 20);
    RealWignerD sequence(Q);
    for (int l = 0; l <= 20; ++l) {
      CAPTURE(trial, l);
      CHECK((sequence.next() - reference[size_t(l)]).cwiseAbs().maxCoeff() < 1e-13);
    }
  }
}

TEST_CASE(
    "rotation about z equals the closed form C' = C cos(m a) - S sin(m a), S' = C sin(m a) + S cos(m a)",
    "[transforms]") {
  // x_new = Rz(a) x_old shifts longitudes by +a; trigonometric addition (common practice). Sigmas follow
  // variance propagation of independent errors: s'^2 = cos^2 sC^2 + sin^2 sS^2.
  std::mt19937 rng(3);
  const CoefficientSet set = random_set(30, rng);
  const double a = 0.7321;
  const CoefficientSet out =
      rotate_set(set, Eigen::AngleAxisd(a, Eigen::Vector3d::UnitZ()).toRotationMatrix());
  for (int n = 0; n <= 30; ++n)
    for (int m = 0; m <= n; ++m) {
      CAPTURE(n, m);
      const double c = std::cos(m * a), s = std::sin(m * a);
      // Rounding grows about linearly with the degree (recurrence in n, cos(m alpha) of a rounded angle).
      const double scale = 1e-15 * (n + 1) * (std::abs(set.C(n, m)) + std::abs(set.S(n, m)));
      CHECK_THAT(out.C(n, m), WithinAbs(set.C(n, m) * c - set.S(n, m) * s, scale));
      CHECK_THAT(out.S(n, m), WithinAbs(set.C(n, m) * s + set.S(n, m) * c, scale));
      const double sigma_c =
          std::sqrt(c * c * std::pow(set.sigma_C(n, m), 2) + s * s * std::pow(set.sigma_S(n, m), 2));
      CHECK_THAT(out.sigma_C(n, m), WithinRel(sigma_c, 1e-12));
    }
  CHECK(frame_label(out) == "rotated");
  CHECK(out.history.back().find("rotated") != std::string::npos);
  // The O(n^2) closed-form path agrees with the general rotation.
  require_sets_close(rotate_about_z(set, a), out, 30, 1e-14);
  const CoefficientSet z_only = rotate_about_z(set, a);
  CHECK_THAT(z_only.sigma_S(7, 3), WithinRel(out.sigma_S(7, 3), 1e-12));
}

TEST_CASE("rotating a set equals the set computed exactly from the rotated mesh to degree 20 (1e-12)",
          "[transforms]") {
  // Independent path: the exact polyhedron coefficients (compute.h) of the mesh rotated by x -> Q x about
  // the mesh origin, with the same origin and reference radius.
  const Mesh mesh = transformed(lumpy_body(3), Eigen::Matrix3d::Identity(), Eigen::Vector3d(150, -90, 60));
  std::mt19937 rng(11);
  const Eigen::Matrix3d Q = random_rotation(rng);
  const int degree = 20;
  const double R = 2500;
  const CoefficientSet before = compute_about(mesh, degree, R, OriginKind::mesh);
  const CoefficientSet expected =
      compute_about(transformed(mesh, Q, Eigen::Vector3d::Zero()), degree, R, OriginKind::mesh);
  for (const Convention& convention : {Convention{}, Convention{Normalization::schmidt, true, true}}) {
    CAPTURE(describe(convention));
    const CoefficientSet rotated = rotate_set(convert_convention(before, convention), Q);
    const CoefficientSet fully = convert_convention(rotated, Convention{});
    require_sets_close(fully, expected, degree, 1e-12);
    CHECK(rotated.convention == convention);
    CHECK((rotated.axes_in_mesh - Q).cwiseAbs().maxCoeff() < 1e-15);
  }
}

TEST_CASE(
    "rotation by Q then Q^T returns the set: 1e-14 to degree 30, 1e-12 (relative per degree) to degree 120",
    "[transforms]") {
  // Round trip (D(Q^T) = D(Q)^T for an orthogonal representation).
  std::mt19937 rng(5);
  const Eigen::Matrix3d Q = random_rotation(rng);
  const CoefficientSet low = random_set(30, rng);
  const CoefficientSet back_low = rotate_set(rotate_set(low, Q), Q.transpose());
  require_sets_close(back_low, low, 30, 1e-14);
  CHECK((back_low.axes_in_mesh - Eigen::Matrix3d::Identity()).cwiseAbs().maxCoeff() < 1e-15);
  const CoefficientSet high = random_set(120, rng);
  CHECK(worst_relative_by_degree(rotate_set(rotate_set(high, Q), Q.transpose()), high, 120) < 1e-12);
}

TEST_CASE("rotation keeps the potential: U_new(Q x) = U_old(x) at exterior points", "[transforms]") {
  // Series evaluation of series.h (checked there against GSL sums and the polyhedron field).
  std::mt19937 rng(8);
  const CoefficientSet set = compute_about(lumpy_body(2), 16, 0, OriginKind::center_of_mass);
  const Eigen::Matrix3d Q = random_rotation(rng);
  const CoefficientSet rotated = rotate_set(set, Q);
  for (const Eigen::Vector3d& x : {Eigen::Vector3d(4000, 1000, -500), Eigen::Vector3d(-300, 200, 3100)}) {
    CHECK_THAT(evaluate_series(rotated, Q * x).potential,
               WithinRel(evaluate_series(set, x).potential, 1e-14));
    const double disturbing_old = evaluate_series(set, x).potential - set.gm / x.norm();
    const double disturbing_new = evaluate_series(rotated, Q * x).potential - set.gm / x.norm();
    CHECK_THAT(disturbing_new, WithinRel(disturbing_old, 1e-11));
  }
}

TEST_CASE("Euler angles z-y-z: the matrix equals the textbook product and rotation composes",
          "[transforms]") {
  // Entries of Rz(a) Ry(b) Rz(c) written out (Goldstein, Poole & Safko 2002, Classical Mechanics, 3rd ed.,
  // sec. 4.4, here for the y-convention and active rotations; from memory).
  const double a = 0.3, b = 1.1, c = -0.8;
  const Eigen::Matrix3d Q = euler_zyz_matrix(a, b, c);
  const double ca = std::cos(a), sa = std::sin(a), cb = std::cos(b), sb = std::sin(b), cc = std::cos(c),
               sc = std::sin(c);
  Eigen::Matrix3d expected;
  expected << ca * cb * cc - sa * sc, -ca * cb * sc - sa * cc, ca * sb,  //
      sa * cb * cc + ca * sc, -sa * cb * sc + ca * cc, sa * sb,          //
      -sb * cc, sb * sc, cb;
  CHECK((Q - expected).cwiseAbs().maxCoeff() < 1e-15);
  std::mt19937 rng(2);
  const CoefficientSet set = random_set(12, rng);
  const CoefficientSet in_one = rotate_set(set, Q);
  const CoefficientSet in_three =
      rotate_set(rotate_set(rotate_set(set, euler_zyz_matrix(0, 0, c)), euler_zyz_matrix(0, b, 0)),
                 euler_zyz_matrix(a, 0, 0));
  require_sets_close(in_one, in_three, 12, 1e-15);
}

TEST_CASE(
    "principal axes from degree 2 equal compute --frame principal (about the centre of mass and the "
    "mesh origin)",
    "[transforms]") {
  // Independent path: mass_properties' eigen-decomposition of the polyhedron's exact inertia tensor.
  std::mt19937 rng(4);
  const Mesh mesh = transformed(lumpy_body(3), random_rotation(rng), Eigen::Vector3d(220, 130, -170));
  const double R = 2600;
  for (OriginKind origin : {OriginKind::center_of_mass, OriginKind::mesh}) {
    CAPTURE(origin == OriginKind::mesh);
    const CoefficientSet in_mesh_frame = compute_about(mesh, 12, R, origin);
    const CoefficientSet expected = compute_about(mesh, 12, R, origin, FrameKind::principal);
    const CoefficientSet principal = rotate_to_principal_axes(in_mesh_frame);
    require_sets_close(principal, expected, 12, 1e-12);
    CHECK((principal.axes_in_mesh - expected.axes_in_mesh).cwiseAbs().maxCoeff() < 1e-11);
    CHECK(frame_label(principal) == "principal");
    // Principal frame: C21 = S21 = S22 = 0 (about the centre of mass), Heiskanen & Moritz 1967 sec. 2-13.
    if (origin == OriginKind::center_of_mass) {
      CHECK(std::abs(principal.C(2, 1)) < 1e-15);
      CHECK(std::abs(principal.S(2, 1)) < 1e-15);
      CHECK(std::abs(principal.S(2, 2)) < 1e-15);
    }
  }
}

TEST_CASE("principal axes are refused for an axisymmetric degree-2 field", "[transforms]") {
  CoefficientSet set = make_empty_set(2);
  set.C(0, 0) = 1;
  set.C(2, 0) = -1e-2;
  set.reference_radius = 1000;
  set.gm = 1;
  CHECK_THROWS_AS(principal_axes_rotation(set), ConventionError);
  CHECK_THROWS_AS(principal_axes_rotation(make_empty_set(1)), ConventionError);
}

TEST_CASE("shifting the origin to the centre of mass equals computing about the centre of mass",
          "[transforms]") {
  // Independent path: the exact polyhedron coefficients about the centre of mass; the shift vector is
  // taken from the degree-1 terms (x_com = sqrt(3) R (C11, S11, C10), fully normalized).
  const Mesh mesh = transformed(lumpy_body(3), Eigen::Matrix3d::Identity(), Eigen::Vector3d(310, -140, 95));
  const int degree = 16;
  const double R = 2400;
  const CoefficientSet about_mesh = compute_about(mesh, degree, R, OriginKind::mesh);
  const CoefficientSet about_com = compute_about(mesh, degree, R, OriginKind::center_of_mass);
  const Eigen::Vector3d offset = center_of_mass_offset(about_mesh);
  CHECK((offset - about_com.center_of_mass).norm() < 1e-9);
  const CoefficientSet shifted = shift_origin(about_mesh, offset);
  require_sets_close(shifted, about_com, degree, 1e-13);
  CHECK(to_string(shifted.origin) == "com");
  CHECK((shifted.origin_in_mesh - about_com.origin_in_mesh).norm() < 1e-9);
  CHECK(shifted.brillouin_radius == Approx(about_mesh.brillouin_radius + offset.norm()));
  CHECK(shifted.notes.back().find("converges only outside") != std::string::npos);
}

TEST_CASE("computing about a given point equals computing the translated mesh about its own origin",
          "[transforms]") {
  // Independent path for compute's point origin: moving the mesh by -p and expanding about the mesh origin.
  const Eigen::Vector3d p(420, -310, 150);
  const Mesh mesh = lumpy_body(3);
  ComputeOptions options;
  options.degree = 12;
  options.reference_radius = 2600;
  options.origin = OriginKind::point;
  options.origin_point = p;
  const CoefficientSet about_point = compute_coefficients({DensityRegion{mesh, 2100.0}}, options);
  const Mesh moved = transformed(mesh, Eigen::Matrix3d::Identity(), -p);
  const CoefficientSet reference = compute_about(moved, 12, 2600, OriginKind::mesh);
  require_sets_close(about_point, reference, 12, 1e-13);
  CHECK(to_string(about_point.origin) == "point");
  CHECK(about_point.origin_in_mesh == p);
}

TEST_CASE("a far shift at high degree states a rounding bound that covers the true error (issue 10, defect 13)",
          "[transforms]") {
  // Reference: the same body computed directly about the new origin. The stated bound is Higham's running
  // bound of the translation sums (Higham 2002, Accuracy and Stability of Numerical Algorithms, sec. 4.2);
  // the measured error must stay below it and the note must appear for a shift of 0.75 R_B at degree 70.
  const Mesh mesh = lumpy_body(4);
  const int degree = 70;
  const CoefficientSet about_com = compute_about(mesh, degree, 2600, OriginKind::center_of_mass);
  const Eigen::Vector3d d = 0.75 * about_com.brillouin_radius * Eigen::Vector3d(0, 0.2, 1).normalized();
  const CoefficientSet shifted = shift_origin(about_com, d);
  ComputeOptions direct_options;
  direct_options.degree = degree;
  direct_options.reference_radius = 2600;
  direct_options.origin = OriginKind::point;
  direct_options.origin_point = about_com.origin_in_mesh + d;
  const CoefficientSet direct = compute_coefficients({DensityRegion{mesh, 2100.0}}, direct_options);
  double worst_error = 0;
  for (int n = 2; n <= degree; ++n) {
    double diff = 0, rms = 0;
    for (int m = 0; m <= n; ++m) {
      diff += std::pow(shifted.C(n, m) - direct.C(n, m), 2) + std::pow(shifted.S(n, m) - direct.S(n, m), 2);
      rms += std::pow(direct.C(n, m), 2) + std::pow(direct.S(n, m), 2);
    }
    worst_error = std::max(worst_error, std::sqrt(diff / rms));
  }
  const std::string& note = shifted.notes.back();
  INFO(note);
  REQUIRE(note.find("Accuracy after the origin shift") != std::string::npos);
  const size_t at = note.find("reaches ") + 8;
  const double stated = std::stod(note.substr(at, note.find(' ', at) - at));
  CHECK(worst_error > 1e-10);  // the loss is real at this shift and degree
  CHECK(worst_error <= stated);
  // A small shift at low degree loses nothing worth a note.
  const CoefficientSet near =
      shift_origin(compute_about(mesh, 12, 2600, OriginKind::center_of_mass), Eigen::Vector3d(30, 0, 0));
  CHECK(near.notes.back().find("Accuracy after the origin shift") == std::string::npos);
}

TEST_CASE("shifting by an arbitrary vector equals computing from the translated mesh, in every convention",
          "[transforms]") {
  // The set about point d equals the set of the mesh translated by -d about the mesh origin.
  const Mesh mesh = lumpy_body(3);
  const Eigen::Vector3d d(-260, 410, 180);
  const int degree = 18;
  const double R = 2500;
  const CoefficientSet about_origin = compute_about(mesh, degree, R, OriginKind::mesh);
  const CoefficientSet expected =
      compute_about(transformed(mesh, Eigen::Matrix3d::Identity(), -d), degree, R, OriginKind::mesh);
  for (const Convention& convention : {Convention{}, Convention{Normalization::unnormalized, true, false},
                                       Convention{Normalization::orthonormal, false, true}}) {
    CAPTURE(describe(convention));
    const CoefficientSet shifted = shift_origin(convert_convention(about_origin, convention), d);
    CHECK(shifted.convention == convention);
    require_sets_close(convert_convention(shifted, Convention{}), expected, degree, 1e-13);
  }
}

TEST_CASE("shifting in a rotated frame moves the origin along the set's axes", "[transforms]") {
  // origin_in_mesh' = origin_in_mesh + A^T d, and the coefficients equal those about that mesh-frame point.
  const Mesh mesh = lumpy_body(2);
  std::mt19937 rng(9);
  const Eigen::Matrix3d Q = random_rotation(rng);
  const double R = 2400;
  const CoefficientSet rotated = rotate_set(compute_about(mesh, 10, R, OriginKind::mesh), Q);
  const Eigen::Vector3d d(100, -200, 50);
  const CoefficientSet shifted = shift_origin(rotated, d);
  const Eigen::Vector3d mesh_point = Q.transpose() * d;
  CHECK((shifted.origin_in_mesh - mesh_point).norm() < 1e-12);
  const CoefficientSet expected = rotate_set(
      compute_about(transformed(mesh, Eigen::Matrix3d::Identity(), -mesh_point), 10, R, OriginKind::mesh), Q);
  require_sets_close(shifted, expected, 10, 1e-13);
}

TEST_CASE("shift by d then -d returns the set; sigmas propagate as for independent errors", "[transforms]") {
  std::mt19937 rng(6);
  CoefficientSet set = random_set(12, rng);
  const Eigen::Vector3d d(300, -150, 420);
  const CoefficientSet there = shift_origin(set, d);
  const CoefficientSet back = shift_origin(there, -d, ShiftOptions{true});
  require_sets_close(back, set, 12, 1e-14);
  // The shift is linear, so the propagated variance is the sum of squared partial derivatives times the input
  // variances (common practice); the partials are measured here by shifting unit sets.
  const int n_out = 5, m_out = 2;
  double var_c = 0;
  for (int k = 0; k <= n_out; ++k)
    for (int l = 0; l <= k; ++l)
      for (int part = 0; part < 2; ++part) {
        if (part == 1 && l == 0) continue;
        CoefficientSet unit = set;
        unit.C.setZero();
        unit.S.setZero();
        (part == 0 ? unit.C : unit.S)(k, l) = 1.0;
        const double partial = shift_origin(unit, d).C(n_out, m_out);
        const double sigma = (part == 0 ? set.sigma_C : set.sigma_S)(k, l);
        var_c += partial * partial * sigma * sigma;
      }
  CHECK_THAT(there.sigma_C(n_out, m_out), WithinRel(std::sqrt(var_c), 1e-12));
}

TEST_CASE("a shift beyond the Brillouin radius is refused unless allowed, then noted", "[transforms]") {
  std::mt19937 rng(1);
  CoefficientSet set = random_set(6, rng);
  set.brillouin_radius = 1500;
  const Eigen::Vector3d far(1200, 1000, 0);
  CHECK_THROWS_WITH(shift_origin(set, far), Catch::Contains("outside the Brillouin sphere"));
  const CoefficientSet allowed = shift_origin(set, far, ShiftOptions{true});
  CHECK(allowed.notes.back().find("CAUTION") != std::string::npos);
  CHECK(to_string(allowed.origin) == "shifted");
}

TEST_CASE("reference radius and GM rescaling keep the potential and round-trip", "[transforms]") {
  // C(R_new) = C(R_old) (R_old/R_new)^n and C(GM_new) = C(GM_old) GM_old/GM_new leave
  // U = GM/r sum (R/r)^n ... unchanged (IERS Conventions 2010, eq. 6.6 form); potential by series.h.
  const CoefficientSet set = compute_about(lumpy_body(2), 20, 0, OriginKind::center_of_mass);
  const CoefficientSet radius = rescale_reference_radius(set, 3100.0);
  const CoefficientSet gm = rescale_gm(set, set.gm * 1.37);
  for (int n = 0; n <= 20; ++n)
    CHECK_THAT(radius.C(n, n), WithinRel(set.C(n, n) * std::pow(set.reference_radius / 3100.0, n), 1e-14));
  CHECK_THAT(gm.C(0, 0), WithinRel(1 / 1.37, 1e-15));
  const Eigen::Vector3d x(3300, -2100, 1400);
  const double u = evaluate_series(set, x).potential;
  CHECK_THAT(evaluate_series(radius, x).potential, WithinRel(u, 1e-14));
  CHECK_THAT(evaluate_series(gm, x).potential, WithinRel(u, 1e-14));
  require_sets_close(rescale_reference_radius(radius, set.reference_radius), set, 20, 1e-16);
  CHECK(worst_relative_by_degree(rescale_reference_radius(radius, set.reference_radius), set, 20) < 1e-14);
  CHECK(worst_relative_by_degree(rescale_gm(gm, set.gm), set, 20) < 1e-15);
  CHECK(radius.history.back().find("reference radius changed") != std::string::npos);
  CHECK_THROWS_AS(rescale_reference_radius(set, -1), ConventionError);
  CHECK_THROWS_AS(rescale_gm(set, 0), ConventionError);
}

TEST_CASE("non-rotations are refused", "[transforms]") {
  std::mt19937 rng(1);
  const CoefficientSet set = random_set(3, rng);
  Eigen::Matrix3d reflection = Eigen::Matrix3d::Identity();
  reflection(1, 1) = -1;
  CHECK_THROWS_WITH(rotate_set(set, reflection), Catch::Contains("reflection"));
  CHECK_THROWS_WITH(rotate_set(set, 1.01 * Eigen::Matrix3d::Identity()), Catch::Contains("not orthogonal"));
}

TEST_CASE("a rotation drops the frame's pole, meridian and epoch with a history line and keeps its name",
          "[transforms]") {
  // The pole and prime meridian of a body-fixed frame fix its axes (the cartographic rotation model, common
  // practice); rotated axes are not those axes any more, so those values cannot stay attached to the set.
  CoefficientSet set = compute_about(lumpy_body(2), 6, 0, OriginKind::center_of_mass);
  FrameMetadata frame;
  frame.name = "Lumpy fixed";
  frame.definition = "mesh axes";
  frame.pole_ra = 12.5;
  frame.pole_dec = -30;
  frame.meridian = 100;
  frame.epoch = "2000-01-01T12:00:00Z";
  declare_frame_metadata(set, frame);
  CHECK(set.history.back() == "frame metadata given: " + describe(frame));
  const CoefficientSet shifted = shift_origin(set, Eigen::Vector3d(10, 0, 0));
  CHECK(shifted.frame_metadata.pole_ra == 12.5);  // the axes stay: so does the orientation
  for (const CoefficientSet& rotated : {rotate_set(set, euler_zyz_matrix(0.3, 0.2, 0.1)),
                                        rotate_about_z(set, 0.4), rotate_to_principal_axes(set)}) {
    CHECK(rotated.frame_metadata.name == frame.name);
    CHECK(rotated.frame_metadata.definition == frame.definition);
    CHECK_FALSE(rotated.frame_metadata.pole_ra);
    CHECK_FALSE(rotated.frame_metadata.pole_dec);
    CHECK_FALSE(rotated.frame_metadata.meridian);
    CHECK_FALSE(rotated.frame_metadata.epoch);
    CAPTURE(rotated.history);
    // The line before the rotation's own (the last, which says how the axes turned).
    const std::string& dropped = rotated.history[rotated.history.size() - 2];
    CHECK(dropped.find(
              "pole RA 12.5 deg Dec -30 deg, prime meridian 100 deg at 2000-01-01T12:00:00Z dropped") !=
          std::string::npos);
    CHECK(dropped.find("'Lumpy fixed' now names the frame the axes were rotated from") != std::string::npos);
    CHECK(rotated.history.back().find("axes rotated") == 0);
  }
  // Without orientation, a rotation adds no such line.
  CoefficientSet named = compute_about(lumpy_body(2), 6, 0, OriginKind::center_of_mass);
  named.frame_metadata.name = "Lumpy fixed";
  const CoefficientSet turned = rotate_about_z(named, 0.4);
  CHECK(turned.history.size() == named.history.size() + 1);
}
