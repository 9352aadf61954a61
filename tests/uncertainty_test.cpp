// Monte Carlo uncertainty: shape-noise sigmas against the first-order perturbation formula, density and
// core scenarios against closed forms (mass scaling, shell theorem, point-mass coefficients), and the
// reproducibility guarantees (same seed, any thread count, shards merged = one run, bit for bit).
#include "polystokes/core/constants.h"
#include "polystokes/uncertainty/uncertainty.h"

#include <gsl/gsl_sf_legendre.h>

#include <Eigen/Geometry>
#include <array>
#include <fmt/format.h>

#include <catch2/catch.hpp>
#include <cmath>
#include <functional>
#include <numeric>

#include "polystokes/core/errors.h"
#include "polystokes/io/shard_file.h"
#include "polystokes/mesh/mass_properties.h"
#include "polystokes/mesh/shapes.h"
#include "test_support.h"

using namespace polystokes;
using Catch::Matchers::Contains;
using Catch::Matchers::WithinAbs;
using Catch::Matchers::WithinRel;

namespace {

constexpr double kDensity = 2000.0;

// Geodesy 4pi fully normalized Pnm(t) from GSL's GSL_SF_LEGENDRE_FULL (integral of P^2 over [-1,1] = 1,
// no Condon-Shortley phase with csphase = 1): larger by sqrt(2 (2 - delta_m0)) (GSL manual, "Associated
// Legendre Polynomials and Spherical Harmonics"). Independent of the library's recursion.
double legendre_4pi(int n, int m, double t) {
  std::vector<double> values(gsl_sf_legendre_array_n(size_t(n)));
  gsl_sf_legendre_array_e(GSL_SF_LEGENDRE_FULL, size_t(n), t, 1.0, values.data());
  return std::sqrt(2.0 * (m == 0 ? 1.0 : 2.0)) * values[gsl_sf_legendre_array_index(size_t(n), size_t(m))];
}

struct Term {
  int n, m;
  bool sine;
};

std::vector<Term> terms(int from, int to) {
  std::vector<Term> out;
  for (int n = from; n <= to; ++n)
    for (int m = 0; m <= n; ++m) {
      out.push_back({n, m, false});
      if (m > 0) out.push_back({n, m, true});
    }
  return out;
}

// Y(v) = Pnm(sin lat) cos(m lon) or sin(m lon) at a point.
double harmonic(const Term& term, const Eigen::Vector3d& p) {
  const double lon = std::atan2(p.y(), p.x());
  const double P = legendre_4pi(term.n, term.m, p.z() / p.norm());
  return P * (term.sine ? std::sin(term.m * lon) : std::cos(term.m * lon));
}

// First-order effect of moving each vertex along its unit normal on the moments of a polyhedron.
// The sampled surface interpolates the moved vertices linearly, so a point with barycentric coordinates b_k
// on face f moves by sum_k b_k dr_k n_k, and to first order (shape derivative of a volume integral,
// Reynolds transport theorem; common practice)
//   delta int_V g dV = sum_v dr_v G_v,   G_v = sum_{f at v} int_f b_v (n_v . nhat_f) g dA.
// n_v is the normalized sum of the area vectors of the faces at v (the documented displacement direction).
// With g = (r/R)^n Y_nm(x), a homogeneous polynomial of degree n (solid harmonic), b_v g has degree n+1 <= 5,
// so Radon's 7-point rule of degree 5 integrates it exactly (Stroud 1971, Approximate Calculation of
// Multiple Integrals, formula T2:5-1).
std::vector<double> shape_derivative(const Mesh& mesh,
                                     const std::function<double(const Eigen::Vector3d&)>& g) {
  const Eigen::Index V = mesh.vertices.rows();
  std::vector<Eigen::Vector3d> normal(size_t(V), Eigen::Vector3d::Zero());
  auto corner = [&](Eigen::Index f, int k) -> Eigen::Vector3d { return mesh.vertices.row(mesh.faces(f, k)); };
  for (Eigen::Index f = 0; f < mesh.faces.rows(); ++f) {
    const Eigen::Vector3d area = 0.5 * (corner(f, 1) - corner(f, 0)).cross(corner(f, 2) - corner(f, 0));
    for (int k = 0; k < 3; ++k) normal[size_t(mesh.faces(f, k))] += area;
  }
  for (auto& n : normal) n.normalize();
  const double s15 = std::sqrt(15.0);
  const double a1 = (6 - s15) / 21, a2 = (6 + s15) / 21, w1 = (155 - s15) / 1200, w2 = (155 + s15) / 1200;
  const std::vector<std::array<double, 4>> rule = {{1.0 / 3, 1.0 / 3, 1.0 / 3, 9.0 / 40},
                                                   {a1, a1, 1 - 2 * a1, w1},
                                                   {a1, 1 - 2 * a1, a1, w1},
                                                   {1 - 2 * a1, a1, a1, w1},
                                                   {a2, a2, 1 - 2 * a2, w2},
                                                   {a2, 1 - 2 * a2, a2, w2},
                                                   {1 - 2 * a2, a2, a2, w2}};
  std::vector<double> G(size_t(V), 0.0);
  for (Eigen::Index f = 0; f < mesh.faces.rows(); ++f) {
    const Eigen::Vector3d area = 0.5 * (corner(f, 1) - corner(f, 0)).cross(corner(f, 2) - corner(f, 0));
    for (const auto& [b0, b1, b2, w] : rule) {
      const double value = w * g(b0 * corner(f, 0) + b1 * corner(f, 1) + b2 * corner(f, 2));
      const double b[3] = {b0, b1, b2};
      for (int k = 0; k < 3; ++k)
        G[size_t(mesh.faces(f, k))] += b[k] * value * normal[size_t(mesh.faces(f, k))].dot(area);
    }
  }
  return G;
}

// G^T K G for the covariance K_vw = exp(-d_vw^2 / (2 L^2)), or the identity for L = 0.
double covariance_form(const Mesh& mesh, const std::vector<double>& G, double L) {
  double sum = 0;
  for (Eigen::Index v = 0; v < mesh.vertices.rows(); ++v) {
    if (L == 0) {
      sum += G[size_t(v)] * G[size_t(v)];
      continue;
    }
    for (Eigen::Index w = 0; w < mesh.vertices.rows(); ++w) {
      const double d2 = (mesh.vertices.row(v) - mesh.vertices.row(w)).squaredNorm();
      sum += G[size_t(v)] * G[size_t(w)] * std::exp(-d2 / (2 * L * L));
    }
  }
  return sum;
}

double sigma_of(const CoefficientSet& set, const Term& term) {
  return term.sine ? set.sigma_S(term.n, term.m) : set.sigma_C(term.n, term.m);
}

ComputeOptions degree_options(int degree) {
  ComputeOptions options;
  options.degree = degree;
  return options;
}

// First-order shape noise on a sphere (derivation for both tests below). With the shape derivative above
// and C_nm = rho int (r/R)^n Y_nm dV / (M (2n+1)) (fully normalized; IERS Conventions 2010, ch. 6),
//   delta C_nm = rho / (M (2n+1)) sum_v dr_v G_v(n, m),
// because the nominal C_nm vanish for 1 <= n <= 5 (an icosphere has icosahedral symmetry, whose lowest
// invariant harmonic above degree 0 is of degree 6 -- from memory, checked on the nominal set below), so the
// change of M does not enter. For zero-mean dr with covariance sigma^2 K_vw:
//   var(delta C_nm) = (rho sigma / (M (2n+1)))^2 G^T K G,   and likewise var(delta M) = (rho sigma)^2 G0^T K
//   G0.
// A sigma estimated from K samples has a relative sampling error of about 1/sqrt(2K) (chi-square, K degrees
// of freedom). Returns the squared ratios MC / first order, one per checked term, after checking each.
std::vector<double> check_against_first_order(const Mesh& sphere, const UncertaintyResult& result,
                                              double sigma, double L, long K) {
  const CoefficientSet& set = result.set;
  const double M = kDensity * volume_moments(sphere).volume;
  const double R = set.reference_radius;
  const double tolerance = 5.0 / std::sqrt(2.0 * double(K));
  std::vector<double> squared_ratios;
  for (const Term& term : terms(1, 4)) {
    CAPTURE(term.n, term.m, term.sine);
    REQUIRE(std::abs(term.sine ? set.S(term.n, term.m) : set.C(term.n, term.m)) < 1e-15);
    const auto G = shape_derivative(
        sphere, [&](const Eigen::Vector3d& x) { return std::pow(x.norm() / R, term.n) * harmonic(term, x); });
    const double expected =
        kDensity * sigma / (M * (2 * term.n + 1)) * std::sqrt(covariance_form(sphere, G, L));
    const double ratio = sigma_of(set, term) / expected;
    CAPTURE(expected, ratio);
    CHECK(std::abs(ratio - 1) < tolerance);
    squared_ratios.push_back(ratio * ratio);
  }
  const auto G0 = shape_derivative(sphere, [](const Eigen::Vector3d&) { return 1.0; });
  const double expected_gm =
      gravitational_constant * kDensity * sigma * std::sqrt(covariance_form(sphere, G0, L));
  CHECK(std::abs(result.summary.gm_sigma / expected_gm - 1) < tolerance);
  return squared_ratios;
}

}  // namespace

TEST_CASE(
    "independent vertex noise on a sphere: sigma of degree 1-4 coefficients and of GM match the "
    "first-order formula (common practice) within sampling error",
    "[uncertainty]") {
  const Mesh sphere = make_icosphere(3);  // 1280 faces, mean edge ~ 0.13
  UncertaintySettings settings;
  settings.samples = 400;
  settings.seed = 20240611;
  settings.shape.sigma = 2e-3;
  const UncertaintyPlan plan =
      plan_uncertainty({DensityRegion{sphere, kDensity}}, degree_options(4), settings);
  const UncertaintyResult result = run_uncertainty(plan);
  const auto squared = check_against_first_order(sphere, result, settings.shape.sigma, 0.0, settings.samples);
  // Independent Gaussian vertex noise makes the terms (nearly orthogonal functionals) independent, so the
  // mean of the squared ratios pins the overall scale much tighter.
  const double pooled = std::accumulate(squared.begin(), squared.end(), 0.0) / double(squared.size());
  CHECK(std::abs(pooled - 1) < 4.0 * std::sqrt(2.0 / (double(settings.samples) * double(squared.size()))));
  // The nominal sphere has no signal at degrees 1-5, so noise dominates every degree from 2 up.
  CHECK(result.summary.dominated_from == 2);
}

TEST_CASE(
    "correlated vertex noise on a sphere: sigma matches the first-order formula with the Gaussian "
    "covariance (common practice) within sampling error",
    "[uncertainty]") {
  const Mesh sphere = make_icosphere(3);
  UncertaintySettings settings;
  settings.samples = 500;
  settings.seed = 77;
  settings.shape.sigma = 2e-3;
  settings.shape.correlation_length = 0.3;
  const UncertaintyPlan plan =
      plan_uncertainty({DensityRegion{sphere, kDensity}}, degree_options(4), settings);
  const UncertaintyResult result = run_uncertainty(plan);
  // Each term on its own (the terms share the random field's features, so they are not pooled). The
  // correlated sigma of degree 1 is about ten times the independent one: ignoring L could not pass.
  check_against_first_order(sphere, result, settings.shape.sigma, settings.shape.correlation_length,
                            settings.samples);
}

TEST_CASE(
    "density scale: normalized coefficients of a homogeneous body do not change, GM sigma equals the "
    "relative density sigma (definition of C_nm, IERS Conventions 2010 ch. 6)",
    "[uncertainty]") {
  const Mesh body = make_ellipsoid(3, 1300, 900, 700);
  UncertaintySettings settings;
  settings.samples = 300;
  settings.seed = 5;
  settings.density_sigma = 0.05;
  const UncertaintyPlan plan = plan_uncertainty({DensityRegion{body, kDensity}}, degree_options(6), settings);
  const UncertaintyResult result = run_uncertainty(plan);
  for (int n = 0; n <= 6; ++n)
    for (int m = 0; m <= n; ++m) {
      CAPTURE(n, m, result.set.sigma_C(n, m), result.set.sigma_S(n, m));
      CHECK(result.set.sigma_C(n, m) <= 1e-14);
      CHECK(result.set.sigma_S(n, m) <= 1e-14);
    }
  CHECK(result.set.C(2, 0) < -0.03);  // the coefficients themselves are far from zero
  CHECK(result.summary.dominated_from == -1);
  CHECK(result.summary.isolated.empty());
  // GM = G rho V scales with the density; the 4-sigma truncation lowers the variance by only ~0.1%.
  const double relative = result.summary.gm_sigma / result.set.gm;
  CHECK(std::abs(relative / settings.density_sigma - 1) < 5.0 / std::sqrt(2.0 * settings.samples));
  bool noted = false;
  for (const auto& note : result.set.notes) noted = noted || note.find("GM sigma") != std::string::npos;
  CHECK(noted);
}

TEST_CASE(
    "concentric core or void in a sphere: degrees 1-5 unchanged (shell theorem, symmetry), GM changes by "
    "G drho V_core",
    "[uncertainty]") {
  const double R = 1000;
  const Mesh body = transformed(make_icosphere(4), R * Eigen::Matrix3d::Identity(), Eigen::Vector3d::Zero());
  const double core_radius = 400, contrast = 1500;
  for (const bool empty : {false, true}) {
    CAPTURE(empty);
    UncertaintySettings settings;
    settings.samples = 2;
    Inclusion core;
    core.empty = empty;
    core.radius = core_radius;
    core.contrast = contrast;
    settings.inclusions.push_back(core);
    const UncertaintyPlan plan =
        plan_uncertainty({DensityRegion{body, kDensity}}, degree_options(6), settings);
    const UncertaintyResult result = run_uncertainty(plan);
    for (const Term& term : terms(1, 5)) {
      CAPTURE(term.n, term.m, term.sine);
      CHECK(sigma_of(result.set, term) < 1e-15);
    }
    // The inscribed icosphere of the core (subdivision 3), volume from its signed tetrahedra.
    const Mesh core_mesh = transformed(make_icosphere(3), core_radius * Eigen::Matrix3d::Identity(),
                                       plan.nominal.center_of_mass);
    const double drho = empty ? -kDensity : contrast;
    CHECK_THAT(result.summary.gm_sigma,
               WithinRel(std::abs(gravitational_constant * drho * volume_moments(core_mesh).volume), 1e-12));
  }
}

TEST_CASE(
    "off-centre core: degree 1 shifts by m_core d / (M + m_core) and degrees 2-5 by the point-mass terms "
    "(Newton's theorem for a ball; addition theorem, common practice)",
    "[uncertainty]") {
  const double R = 1000;
  const Mesh body = transformed(make_icosphere(4), R * Eigen::Matrix3d::Identity(), Eigen::Vector3d::Zero());
  const Eigen::Vector3d d(300, -200, 250);
  const double core_radius = 200, contrast = 3000;
  const double M = kDensity * volume_moments(body).volume;
  for (const bool preserve : {false, true}) {
    CAPTURE(preserve);
    UncertaintySettings settings;
    settings.samples = 2;
    settings.preserve_mass = preserve;
    Inclusion core;
    core.radius = core_radius;
    core.contrast = contrast;
    core.center = d;
    settings.inclusions.push_back(core);
    const UncertaintyPlan plan =
        plan_uncertainty({DensityRegion{body, kDensity}}, degree_options(5), settings);
    const UncertaintyResult result = run_uncertainty(plan);
    const Eigen::Vector3d c0 = plan.nominal.center_of_mass;
    const Mesh core_mesh = transformed(make_icosphere(3), core_radius * Eigen::Matrix3d::Identity(), d);
    const double excess = contrast * volume_moments(core_mesh).volume;
    // Total mass M + m (or M when the mantle is lightened); the first moment about c0 is m (d - c0), because
    // a uniform lightening of the mantle has its centroid at c0.
    const double total = preserve ? M : M + excess;
    const Eigen::Vector3d shift = excess * (d - c0) / total;
    const double sqrt3R = std::sqrt(3.0) * plan.nominal.reference_radius;  // C10 = z / (sqrt(3) R), ...
    CHECK_THAT(result.set.sigma_C(1, 1), WithinRel(std::abs(shift.x()) / sqrt3R, 1e-10));
    CHECK_THAT(result.set.sigma_S(1, 1), WithinRel(std::abs(shift.y()) / sqrt3R, 1e-10));
    CHECK_THAT(result.set.sigma_C(1, 0), WithinRel(std::abs(shift.z()) / sqrt3R, 1e-10));
    CHECK_THAT(result.summary.com_sigma.x(), WithinRel(std::abs(shift.x()), 1e-10));
    CHECK_THAT(result.summary.gm_sigma, WithinAbs(preserve ? 0.0 : gravitational_constant * excess,
                                                  1e-12 * gravitational_constant * M));
    // A ball's exterior field is that of a point mass at its centre; the inscribed icosphere has no moments
    // of degree 1-5 of its own, so up to degree 5 it acts as the point mass m at d exactly. Point mass:
    //   C_nm + i S_nm = m / (M + m) (|d| / R)^n Pnm(sin lat_d) e^{i m lon_d} / (2n + 1)  (about c0 ~ 0).
    const Eigen::Vector3d p = d - c0;
    for (const Term& term : terms(2, 5)) {
      CAPTURE(term.n, term.m, term.sine);
      const double expected = excess / total * std::pow(p.norm() / plan.nominal.reference_radius, term.n) *
                              harmonic(term, p) / (2 * term.n + 1);
      CHECK_THAT(sigma_of(result.set, term), WithinAbs(std::abs(expected), 1e-12 * excess / total));
    }
  }
}

TEST_CASE(
    "lateral density variation: GM sigma of 12 equal cones equals G rho sigma V / sqrt(12) (variance of a "
    "sum of independent terms; icosahedral symmetry)",
    "[uncertainty]") {
  const Mesh sphere =
      transformed(make_icosphere(4), 500 * Eigen::Matrix3d::Identity(), Eigen::Vector3d::Zero());
  UncertaintySettings settings;
  settings.samples = 400;
  settings.seed = 3;
  settings.lateral.sigma = 0.1;
  settings.lateral.sectors = 12;
  const UncertaintyPlan plan =
      plan_uncertainty({DensityRegion{sphere, kDensity}}, degree_options(2), settings);
  const UncertaintyResult result = run_uncertainty(plan);
  const double V = volume_moments(sphere).volume;
  const double expected = gravitational_constant * kDensity * settings.lateral.sigma * V / std::sqrt(12.0);
  CHECK(std::abs(result.summary.gm_sigma / expected - 1) < 5.0 / std::sqrt(2.0 * settings.samples));
  CHECK(result.set.sigma_C(2, 0) > 0);  // laterally varying density shows up in the shape terms
}

TEST_CASE("same seed gives identical results for any thread count; a different seed does not",
          "[uncertainty]") {
  const Mesh body = make_ellipsoid(2, 1200, 900, 800);
  UncertaintySettings settings;
  settings.samples = 6;
  settings.seed = 11;
  settings.shape.sigma = 5;
  settings.shape.correlation_length = 400;
  const UncertaintyPlan plan = plan_uncertainty({DensityRegion{body, kDensity}}, degree_options(6), settings);
  SampleOptions one, two;
  one.threads = 1;
  two.threads = 2;
  const UncertaintyResult a = run_uncertainty(plan, one), b = run_uncertainty(plan, two);
  CHECK(a.set.sigma_C == b.set.sigma_C);
  CHECK(a.set.sigma_S == b.set.sigma_S);
  CHECK(a.set.notes == b.set.notes);
  settings.seed = 12;
  const UncertaintyResult c =
      run_uncertainty(plan_uncertainty({DensityRegion{body, kDensity}}, degree_options(6), settings));
  CHECK(c.set.sigma_C != a.set.sigma_C);
}

TEST_CASE("shards written, read back and merged equal one run bit for bit", "[uncertainty]") {
  const Mesh body = make_ellipsoid(2, 1200, 900, 800);
  UncertaintySettings settings;
  settings.samples = 11;
  settings.seed = 99;
  settings.shape.sigma = 4;
  settings.shape.correlation_length = 300;
  settings.density_sigma = 0.02;
  settings.lateral.sigma = 0.05;
  Inclusion core;
  core.radius = 150;
  core.contrast = 800;
  core.offset = 200;
  settings.inclusions.push_back(core);
  ComputeOptions options = degree_options(5);
  options.convention.normalization = Normalization::schmidt;  // conversion happens after the statistics
  const UncertaintyPlan plan = plan_uncertainty({DensityRegion{body, kDensity}}, options, settings);
  const UncertaintyResult single = run_uncertainty(plan);

  std::vector<UncertaintyShard> shards;
  std::vector<std::string> names;
  for (int i = 1; i <= 3; ++i) {
    const std::string text = format_shard_text(run_shard(plan, Shard{i, 3}));
    names.push_back("shard" + std::to_string(i));
    shards.push_back(parse_shard_text(text, names.back()));
    CHECK(format_shard_text(shards.back()) == text);  // doubles round-trip exactly
  }
  const UncertaintyResult merged = merge_shards(shards, names);
  CHECK(merged.set.convention.normalization == Normalization::schmidt);
  CHECK(merged.set.C == single.set.C);
  CHECK(merged.set.sigma_C == single.set.sigma_C);
  CHECK(merged.set.sigma_S == single.set.sigma_S);
  CHECK(merged.set.notes == single.set.notes);
  CHECK(merged.summary.gm_sigma == single.summary.gm_sigma);
  CHECK(merged.set.sigma_C(3, 1) > 0);

  SECTION("a missing shard is named") {
    REQUIRE_THROWS_WITH(merge_shards({shards[0], shards[2]}, {names[0], names[2]}),
                        Contains("4 of the 11 samples are missing") && Contains("1/3, 3/3"));
  }
  SECTION("a shard given twice is refused") {
    REQUIRE_THROWS_WITH(merge_shards({shards[0], shards[1], shards[1]}, {"a", "b", "c"}),
                        Contains("sample 1 is in both b and c"));
  }
  SECTION("a shard of another run is refused") {
    UncertaintySettings other = settings;
    other.seed = 100;
    const auto stray =
        run_shard(plan_uncertainty({DensityRegion{body, kDensity}}, options, other), Shard{3, 3});
    REQUIRE_THROWS_WITH(merge_shards({shards[0], shards[1], stray}, {"a", "b", "c"}),
                        Contains("c does not belong to the same run as a") && Contains("seed 100"));
  }
  SECTION("a truncated shard file is refused with its line") {
    std::string text = format_shard_text(run_shard(plan, Shard{2, 3}));
    text.resize(text.rfind("sample "));
    REQUIRE_THROWS_AS(parse_shard_text(text, "cut.shard"), FormatError);
    REQUIRE_THROWS_WITH(parse_shard_text(text, "cut.shard"), Contains("cut.shard:") && Contains("truncated"));
    REQUIRE_THROWS_WITH(parse_shard_text("something else\n", "x.shard"),
                        Contains("x.shard:1: not a shard file"));
    // Values follow the one strict number rule of every reader, and errors name the line.
    std::string damaged = format_shard_text(run_shard(plan, Shard{2, 3}));
    const size_t at = damaged.find("\nshape_sigma ") + 1;
    const long line = long(std::count(damaged.begin(), damaged.begin() + long(at), '\n')) + 1;
    damaged.replace(at, damaged.find('\n', at) - at, "shape_sigma 0x10");
    REQUIRE_THROWS_WITH(parse_shard_text(damaged, "bad.shard"),
                        Contains(fmt::format("bad.shard:{}: shape_sigma '0x10' is not a number", line)));
  }
}

TEST_CASE("bad uncertainty settings are refused with a clear message", "[uncertainty]") {
  const Mesh body =
      transformed(make_icosphere(2), 1000 * Eigen::Matrix3d::Identity(), Eigen::Vector3d::Zero());
  const std::vector<DensityRegion> regions{DensityRegion{body, kDensity}};
  UncertaintySettings settings;
  REQUIRE_THROWS_WITH(plan_uncertainty(regions, degree_options(4), settings), Contains("nothing to vary"));
  Inclusion core;
  core.radius = 300;
  core.contrast = 500;
  core.center = Eigen::Vector3d(800, 0, 0);
  settings.inclusions.push_back(core);
  REQUIRE_THROWS_WITH(plan_uncertainty(regions, degree_options(4), settings),
                      Contains("is not inside the body"));
  settings.inclusions.clear();
  settings.density_sigma = 0.3;
  REQUIRE_THROWS_WITH(plan_uncertainty(regions, degree_options(4), settings), Contains("density sigma"));
  settings.density_sigma = 0;
  settings.shape.sigma = 300;  // far beyond the edge length: faces fold over
  REQUIRE_THROWS_WITH(run_uncertainty(plan_uncertainty(regions, degree_options(4), settings)),
                      Contains("folds face"));
  for (const char* text : {"0/3", "4/3", "2", "a/b", "1/0"}) {
    CAPTURE(text);
    REQUIRE_THROWS_AS(parse_shard(text), ConventionError);
  }
  CHECK(shard_samples(parse_shard("2/3"), 8) == std::vector<long>{1, 4, 7});
}
