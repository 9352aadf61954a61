// Series evaluation: potential against the defining sum with GSL Legendre functions (moderate and high
// degree), acceleration and gradient against the classical spherical-coordinate formulas and finite
// differences, handbook point-mass and J2 closed forms, the poles, conventions and truncation.
#include "polystokes/field/series.h"

#include <gsl/gsl_sf_legendre.h>

#include <catch2/catch.hpp>
#include <cmath>
#include <ctime>
#include <random>

#include "polystokes/sets/conventions.h"
#include "polystokes/core/errors.h"

using namespace polystokes;

namespace {

// Random coefficients with a Kaula-like 1/n^2 decay, fully normalized, C00 = 1.
CoefficientSet random_set(int degree, unsigned seed, double radius = 1000.0, double gm = 3.0e5) {
  CoefficientSet set = make_empty_set(degree);
  std::mt19937_64 rng(seed);
  std::uniform_real_distribution<double> u(-1.0, 1.0);
  set.gm = gm;
  set.reference_radius = radius;
  set.C(0, 0) = 1.0;
  for (int n = 1; n <= degree; ++n)
    for (int m = 0; m <= n; ++m) {
      set.C(n, m) = 0.1 * u(rng) / (n * n);
      if (m > 0) set.S(n, m) = 0.1 * u(rng) / (n * n);
    }
  return set;
}

// Spherical-coordinate brute force with GSL: Pbar_nm(sin lat) = sqrt(4 pi (2 - delta_m0)) * GSL SPHARM
// (GSL manual, "Associated Legendre Polynomials and Spherical Harmonics"; SPHARM is
// sqrt((2l+1)/(4pi) (l-m)!/(l+m)!) P_l^m, csphase = +1 leaves out the (-1)^m phase).
// U = GM/r sum_n (R/r)^n sum_m Pbar_nm (C cos m lon + S sin m lon) (IERS Conventions 2010, eq. 6.6).
struct BruteForce {
  double potential = 0;
  Eigen::Vector3d acceleration = Eigen::Vector3d::Zero();
};

BruteForce brute_force(const CoefficientSet& set, const Eigen::Vector3d& p, bool with_acceleration) {
  const int N = set.degree;
  const double r = p.norm(), lat = std::asin(p.z() / r), lon = std::atan2(p.y(), p.x());
  std::vector<double> P(gsl_sf_legendre_array_n(size_t(N))), dP(P.size());
  // d/dtheta of P(cos theta) with theta the colatitude; d/dlat = -d/dtheta.
  if (with_acceleration)
    gsl_sf_legendre_deriv_alt_array_e(GSL_SF_LEGENDRE_SPHARM, size_t(N), std::sin(lat), 1.0, P.data(),
                                      dP.data());
  else
    gsl_sf_legendre_array_e(GSL_SF_LEGENDRE_SPHARM, size_t(N), std::sin(lat), 1.0, P.data());
  double u = 0, du_dr = 0, du_dlat = 0, du_dlon = 0;
  for (int n = 0; n <= N; ++n) {
    const double rn = std::pow(set.reference_radius / r, n);
    for (int m = 0; m <= n; ++m) {
      const double norm = std::sqrt(4.0 * M_PI * (m == 0 ? 1.0 : 2.0));
      const size_t i = gsl_sf_legendre_array_index(size_t(n), size_t(m));
      const double pbar = norm * P[i], dpbar = -norm * dP[i];
      const double c = std::cos(m * lon), s = std::sin(m * lon);
      const double trig = set.C(n, m) * c + set.S(n, m) * s;
      u += rn * pbar * trig;
      du_dr -= (n + 1.0) * rn * pbar * trig;
      du_dlat += rn * dpbar * trig;
      du_dlon += rn * pbar * m * (set.S(n, m) * c - set.C(n, m) * s);
    }
  }
  BruteForce out;
  out.potential = set.gm / r * u;
  if (with_acceleration) {
    const Eigen::Vector3d e_r(std::cos(lat) * std::cos(lon), std::cos(lat) * std::sin(lon), std::sin(lat));
    const Eigen::Vector3d e_lat(-std::sin(lat) * std::cos(lon), -std::sin(lat) * std::sin(lon),
                                std::cos(lat));
    const Eigen::Vector3d e_lon(-std::sin(lon), std::cos(lon), 0.0);
    out.acceleration = set.gm / (r * r) * (du_dr * e_r + du_dlat * e_lat + du_dlon / std::cos(lat) * e_lon);
  }
  return out;
}

double brute_potential(const CoefficientSet& set, const Eigen::Vector3d& p) {
  return brute_force(set, p, false).potential;
}

// Fourth-order central difference (Abramowitz & Stegun 1964, 25.3.6) of f along axis k.
template <class F>
auto central_difference(F&& f, const Eigen::Vector3d& p, int k, double h) {
  using Value = decltype(f(p));  // evaluated here, not returned as an expression of temporaries
  Eigen::Vector3d e = Eigen::Vector3d::Zero();
  e[k] = h;
  return Value((f(Eigen::Vector3d(p - 2 * e)) - 8.0 * f(Eigen::Vector3d(p - e)) +
                8.0 * f(Eigen::Vector3d(p + e)) - f(Eigen::Vector3d(p + 2 * e))) /
               (12.0 * h));
}

Eigen::Vector3d spherical_point(double r, double lat_deg, double lon_deg) {
  const double lat = lat_deg * M_PI / 180, lon = lon_deg * M_PI / 180;
  return r * Eigen::Vector3d(std::cos(lat) * std::cos(lon), std::cos(lat) * std::sin(lon), std::sin(lat));
}

}  // namespace

TEST_CASE(
    "point mass: potential, acceleration and gradient equal Newton's GM/r, -GM x/r^3, GM(3xx^T - r^2 I)/r^5",
    "[series]") {
  // Newton's point-mass field (any mechanics text, e.g. Goldstein 1980, Classical Mechanics, ch. 3): common
  // practice.
  CoefficientSet set = make_empty_set(6);
  set.gm = 4.2e4;
  set.reference_radius = 700.0;
  set.C(0, 0) = 1.0;
  for (const Eigen::Vector3d p : {Eigen::Vector3d(1200.0, -300.0, 450.0), Eigen::Vector3d(0.0, 0.0, 900.0),
                                  Eigen::Vector3d(0.0, 0.0, -2500.0), Eigen::Vector3d(-800.0, 10.0, 0.0)}) {
    CAPTURE(p.transpose());
    const FieldValue v = evaluate_series(set, p);
    const double r = p.norm();
    CHECK(v.potential == Approx(set.gm / r).epsilon(1e-15));
    const Eigen::Vector3d a = -set.gm * p / (r * r * r);
    CHECK((v.acceleration - a).norm() <= 1e-15 * a.norm());
    const Eigen::Matrix3d t =
        set.gm * (3.0 * p * p.transpose() - r * r * Eigen::Matrix3d::Identity()) / std::pow(r, 5);
    CHECK((v.gradient - t).norm() <= 1e-14 * t.norm());
  }
}

TEST_CASE(
    "J2 field equals the classical zonal J2 acceleration (Vallado 2013, Fundamentals of Astrodynamics, "
    "sec. 8.6, from memory)",
    "[series]") {
  // a_x,y = -GM x,y/r^3 [1 - 3/2 J2 (R/r)^2 (5 z^2/r^2 - 1)], a_z = -GM z/r^3 [1 - 3/2 J2 (R/r)^2 (5 z^2/r^2
  // - 3)], U = GM/r [1 - J2 (R/r)^2 (3 z^2/r^2 - 1)/2], and C20 (fully normalized) = -J2 / sqrt(5).
  const double j2 = 0.07, radius = 1500.0, gm = 6.0e5;
  CoefficientSet set = make_empty_set(2);
  set.gm = gm;
  set.reference_radius = radius;
  set.C(0, 0) = 1.0;
  set.C(2, 0) = -j2 / std::sqrt(5.0);
  for (const Eigen::Vector3d p :
       {Eigen::Vector3d(1800.0, 700.0, -900.0), Eigen::Vector3d(0.0, 0.0, 2000.0)}) {
    const FieldValue v = evaluate_series(set, p);
    const double r = p.norm(), q = radius / r, zr = p.z() / r;
    CHECK(v.potential == Approx(gm / r * (1 - j2 * q * q * (3 * zr * zr - 1) / 2)).epsilon(1e-14));
    const double f_xy = -gm / (r * r * r) * (1 - 1.5 * j2 * q * q * (5 * zr * zr - 1));
    const double f_z = -gm / (r * r * r) * (1 - 1.5 * j2 * q * q * (5 * zr * zr - 3));
    const Eigen::Vector3d a(f_xy * p.x(), f_xy * p.y(), f_z * p.z());
    CHECK((v.acceleration - a).norm() <= 1e-14 * a.norm());
  }
}

TEST_CASE("potential and acceleration match the defining sum with GSL Legendre functions at degree 20",
          "[series]") {
  const CoefficientSet set = random_set(20, 11);
  const SeriesModel model(set);
  for (const Eigen::Vector3d p : {spherical_point(1100.0, 37.0, 122.0), spherical_point(1500.0, -64.0, -10.0),
                                  spherical_point(3000.0, 1.0, 271.0), spherical_point(1050.0, 88.5, 45.0)}) {
    CAPTURE(p.transpose());
    const FieldValue v = model.evaluate(p);
    const BruteForce b = brute_force(set, p, true);
    CHECK(v.potential == Approx(b.potential).epsilon(1e-13));
    CHECK((v.acceleration - b.acceleration).norm() <= 1e-13 * b.acceleration.norm());
  }
}

TEST_CASE("stable at degree 200: series equals the GSL brute-force sum near the reference sphere",
          "[series]") {
  const CoefficientSet set = random_set(200, 5);
  const SeriesModel model(set);
  for (const Eigen::Vector3d p : {spherical_point(1020.0, 12.0, 33.0), spherical_point(1005.0, -71.0, 190.0),
                                  spherical_point(1001.0, 45.0, -60.0)}) {
    CAPTURE(p.transpose());
    const FieldValue v = model.evaluate(p);
    const BruteForce b = brute_force(set, p, true);
    CHECK(v.potential == Approx(b.potential).epsilon(1e-13));
    CHECK((v.acceleration - b.acceleration).norm() <= 1e-12 * b.acceleration.norm());
  }
}

TEST_CASE("acceleration and gradient equal finite differences of the GSL brute-force field", "[series]") {
  const CoefficientSet set = random_set(8, 3);
  const SeriesModel model(set);
  const double h = 0.5;  // m at r ~ 1300 m: truncation ~ (8 h / r)^4 ~ 1e-10, rounding ~ 1e-13
  for (const Eigen::Vector3d p :
       {spherical_point(1300.0, 20.0, 40.0), spherical_point(1250.0, -50.0, 200.0)}) {
    CAPTURE(p.transpose());
    const FieldValue v = model.evaluate(p);
    for (int k = 0; k < 3; ++k) {
      CAPTURE(k);
      const double du =
          central_difference([&](const Eigen::Vector3d& q) { return brute_potential(set, q); }, p, k, h);
      CHECK(std::abs(v.acceleration[k] - du) <= 1e-9 * v.acceleration.norm());
      const Eigen::Vector3d da = central_difference(
          [&](const Eigen::Vector3d& q) { return brute_force(set, q, true).acceleration; }, p, k, h);
      CHECK((v.gradient.col(k) - da).norm() <= 1e-9 * v.gradient.norm());
    }
  }
}

TEST_CASE(
    "no pole singularity: at both poles the field is finite and equals finite differences of the GSL "
    "brute-force potential",
    "[series]") {
  const CoefficientSet set = random_set(6, 7);
  const SeriesModel model(set);
  for (const double z : {1400.0, -1400.0}) {
    const Eigen::Vector3d pole(0.0, 0.0, z);
    const FieldValue v = model.evaluate(pole);
    CAPTURE(z);
    REQUIRE(std::isfinite(v.potential));
    REQUIRE(v.acceleration.allFinite());
    REQUIRE(v.gradient.allFinite());
    CHECK(v.potential == Approx(brute_potential(set, pole)).epsilon(1e-14));
    const double h = 0.7;
    auto potential = [&](const Eigen::Vector3d& q) { return brute_potential(set, q); };
    for (int k = 0; k < 3; ++k) {
      CAPTURE(k);
      CHECK(std::abs(v.acceleration[k] - central_difference(potential, pole, k, h)) <=
            1e-9 * v.acceleration.norm());
      // Second derivatives by differencing the (independently computed) first differences.
      for (int j = 0; j < 3; ++j) {
        const double d2 = central_difference(
            [&](const Eigen::Vector3d& q) { return central_difference(potential, q, j, h); }, pole, k, h);
        CAPTURE(j);
        CHECK(std::abs(v.gradient(j, k) - d2) <= 1e-6 * v.gradient.norm());
      }
    }
    // Just off the pole the acceleration changes by the gradient times the offset, nothing abrupt.
    const Eigen::Vector3d offset(1e-4, 2e-4, 0.0);
    const FieldValue near = model.evaluate(Eigen::Vector3d(pole + offset));
    CHECK((near.acceleration - v.acceleration - v.gradient * offset).norm() / v.acceleration.norm() <= 1e-13);
  }
}

TEST_CASE(
    "the field does not depend on the coefficient convention (conversion per IERS Conventions 2010 and "
    "Condon-Shortley / J_n definitions)",
    "[series]") {
  const CoefficientSet set = random_set(12, 9);
  Convention other;
  other.normalization = Normalization::unnormalized;
  other.condon_shortley = true;
  other.zonal_as_j = true;
  const CoefficientSet converted = convert_convention(set, other);
  const Eigen::Vector3d p = spherical_point(1700.0, -33.0, 77.0);
  const FieldValue a = evaluate_series(set, p), b = evaluate_series(converted, p);
  CHECK(b.potential == Approx(a.potential).epsilon(1e-14));
  CHECK((b.acceleration - a.acceleration).norm() <= 1e-14 * a.acceleration.norm());
  CHECK((b.gradient - a.gradient).norm() <= 1e-13 * a.gradient.norm());
}

TEST_CASE("partial sums by degree equal separately truncated series; Laplace's equation holds", "[series]") {
  const CoefficientSet set = random_set(15, 21);
  const Eigen::Vector3d p = spherical_point(1200.0, 60.0, 15.0);
  const auto sums = SeriesModel(set).partial_sums(p);
  REQUIRE(sums.size() == 16);
  for (int L : {0, 1, 2, 7, 15}) {
    CAPTURE(L);
    const FieldValue t = evaluate_series(set, p, L);
    CHECK(sums[size_t(L)].potential == Approx(t.potential).epsilon(1e-15));
    CHECK((sums[size_t(L)].acceleration - t.acceleration).norm() <= 1e-15 * t.acceleration.norm());
    CHECK((sums[size_t(L)].gradient - t.gradient).norm() <= 1e-14 * t.gradient.norm());
    // Exterior harmonic field: the trace of the gradient vanishes (Laplace), common practice.
    CHECK(std::abs(t.gradient.trace()) <= 1e-13 * t.gradient.norm());
  }
}

TEST_CASE("frames: to_set_frame and to_mesh_frame use the set's origin and axes", "[series]") {
  CoefficientSet set = random_set(4, 2);
  set.origin_in_mesh = Eigen::Vector3d(10.0, -20.0, 5.0);
  set.axes_in_mesh << 0, 1, 0, 0, 0, 1, 1, 0, 0;  // rows: set axes in the mesh frame
  const Eigen::Vector3d mesh_point(1500.0, 400.0, -300.0);
  const Eigen::Vector3d q = to_set_frame(set, mesh_point);
  CHECK(q.isApprox(Eigen::Vector3d(420.0, -305.0, 1490.0)));
  const FieldValue in_set = evaluate_series(set, q);
  const FieldValue in_mesh = to_mesh_frame(set, in_set);
  CHECK(in_mesh.acceleration.isApprox(
      Eigen::Vector3d(in_set.acceleration[2], in_set.acceleration[0], in_set.acceleration[1])));
  CHECK(in_mesh.gradient(0, 0) == Approx(in_set.gradient(2, 2)));
}

TEST_CASE("bad input is refused with a clear error", "[series]") {
  CoefficientSet set = random_set(3, 1);
  CHECK_THROWS_AS(evaluate_series(set, Eigen::Vector3d::Zero()), ConventionError);
  set.reference_radius = 0;
  CHECK_THROWS_WITH(SeriesModel(set), Catch::Contains("reference radius"));
}

TEST_CASE("threaded evaluation over many points gives the same values for any thread count", "[series]") {
  const SeriesModel model(random_set(30, 4));
  Points points(37, 3);
  for (int i = 0; i < 37; ++i)
    points.row(i) = spherical_point(1100.0 + 10 * i, -80.0 + 4.3 * i, 9.7 * i).transpose();
  const auto one = model.evaluate(points, 1), three = model.evaluate(points, 3);
  for (int i = 0; i < 37; ++i) {
    CHECK(one[size_t(i)].potential == three[size_t(i)].potential);
    CHECK(one[size_t(i)].gradient == three[size_t(i)].gradient);
  }
}

TEST_CASE("timing: microseconds per point by degree", "[series][.slow]") {
  for (const int degree : {20, 50, 150}) {
    const SeriesModel model(random_set(degree, 8));
    Points points(200, 3);
    for (int i = 0; i < 200; ++i)
      points.row(i) = spherical_point(1500.0, -89.0 + 0.89 * i, 7.3 * i).transpose();
    const std::clock_t start = std::clock();  // processor time: meaningful on a shared machine
    const auto values = model.evaluate(points, 1);
    const double seconds = double(std::clock() - start) / CLOCKS_PER_SEC;
    WARN("degree " << degree << ": " << seconds / 200.0 * 1e6
                   << " us per point (potential, acceleration, gradient)");
    CHECK(values.size() == 200);
  }
}
