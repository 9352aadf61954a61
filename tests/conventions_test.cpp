// Normalization, phase and J_n conventions: factors against GSL and Boost.Math Legendre functions, the
// potential unchanged by every conversion (evaluated natively in each convention with GSL functions, that
// evaluator checked against the exact polyhedron field), and round trips between every pair.
#include "polystokes/sets/conventions.h"

#include <fmt/format.h>
#include <gsl/gsl_sf_legendre.h>

#include <algorithm>
#include <boost/math/special_functions/legendre.hpp>
#include <catch2/catch.hpp>
#include <cmath>
#include <set>

#include "polystokes/io/coefficient_file.h"
#include "polystokes/core/errors.h"
#include "polystokes/harmonics/compute.h"
#include "polystokes/field/polyhedron_gravity.h"
#include "polystokes/mesh/shapes.h"
#include "test_support.h"

using namespace polystokes;
using namespace polystokes::test;
using Catch::Matchers::WithinAbs;
using Catch::Matchers::WithinRel;

namespace {

// P_X(n, m)(t) of convention X (normalization and phase), all n <= degree, from GSL's arrays. GSL manual,
// "Associated Legendre Polynomials and Spherical Harmonics": NONE = Ferrers P_l^m, SCHMIDT =
// sqrt((2 - d_m0)(l-m)!/(l+m)!) P, SPHARM = sqrt((2l+1)/(4pi) (l-m)!/(l+m)!) P, FULL =
// sqrt((l+1/2)(l-m)!/(l+m)!) P; csphase = -1 includes (-1)^m. So fully (4pi) = sqrt(2(2 - d_m0)) FULL and
// orthonormal (4pi fully normalized over sqrt(4pi)) = sqrt(2 - d_m0) SPHARM.
Eigen::MatrixXd gsl_legendre(const Convention& convention, int degree, double t) {
  gsl_sf_legendre_t kind = GSL_SF_LEGENDRE_NONE;
  switch (convention.normalization) {
    case Normalization::unnormalized:
      kind = GSL_SF_LEGENDRE_NONE;
      break;
    case Normalization::schmidt:
      kind = GSL_SF_LEGENDRE_SCHMIDT;
      break;
    case Normalization::fully:
      kind = GSL_SF_LEGENDRE_FULL;
      break;
    case Normalization::orthonormal:
      kind = GSL_SF_LEGENDRE_SPHARM;
      break;
  }
  std::vector<double> values(gsl_sf_legendre_array_n(size_t(degree)));
  REQUIRE(gsl_sf_legendre_array_e(kind, size_t(degree), t, convention.condon_shortley ? -1.0 : 1.0,
                                  values.data()) == 0);
  Eigen::MatrixXd p = Eigen::MatrixXd::Zero(degree + 1, degree + 1);
  for (int n = 0; n <= degree; ++n)
    for (int m = 0; m <= n; ++m) {
      double scale = 1;
      if (convention.normalization == Normalization::fully) scale = std::sqrt(2.0 * (m == 0 ? 1.0 : 2.0));
      if (convention.normalization == Normalization::orthonormal) scale = std::sqrt(m == 0 ? 1.0 : 2.0);
      p(n, m) = scale * values[gsl_sf_legendre_array_index(size_t(n), size_t(m))];
    }
  return p;
}

// The defining sum U = GM/r sum_n (R/r)^n sum_m P_X(n,m)(sin lat) (C cos m lon + S sin m lon) in the set's
// own convention (J_n = -C_n0 undone first for n >= 1; degree 0 is C00 in every form), with GSL's
// functions: no conversion code of the library involved.
double potential_in_own_convention(const CoefficientSet& set, const Eigen::Vector3d& x) {
  const double r = x.norm();
  const Eigen::MatrixXd p = gsl_legendre(set.convention, set.degree, x.z() / r);
  const double lon = std::atan2(x.y(), x.x());
  double sum = 0, ratio = 1;
  for (int n = 0; n <= set.degree; ++n, ratio *= set.reference_radius / r) {
    double term = 0;
    for (int m = 0; m <= n; ++m) {
      const double c = m == 0 && n >= 1 && set.convention.zonal_as_j ? -set.C(n, m) : set.C(n, m);
      term += p(n, m) * (c * std::cos(m * lon) + set.S(n, m) * std::sin(m * lon));
    }
    sum += ratio * term;
  }
  return set.gm / r * sum;
}

Mesh lumpy_body() {
  return make_deformed_sphere(3, [](const Eigen::Vector3d& u) {
    const double r =
        1.0 + 0.15 * u.x() * u.y() + 0.1 * u.z() * u.z() * u.x() + 0.07 * std::sin(3 * u.y() + 1);
    return Eigen::Vector3d(1500.0 * r * u.x(), 1100.0 * r * u.y(), 800.0 * r * u.z());
  });
}

const std::vector<DensityRegion>& body_regions() {
  static const std::vector<DensityRegion> regions{DensityRegion{lumpy_body(), 2000.0}};
  return regions;
}

const CoefficientSet& body_set() {
  static const CoefficientSet set = [] {
    ComputeOptions options;
    options.degree = 20;
    CoefficientSet s = compute_coefficients(body_regions(), options);
    for (int n = 0; n <= s.degree; ++n)
      for (int m = 0; m <= n; ++m) {
        s.sigma_C(n, m) = 1e-3 * std::abs(s.C(n, m)) + 1e-12;
        s.sigma_S(n, m) = m == 0 ? 0.0 : 1e-3 * std::abs(s.S(n, m)) + 1e-12;
      }
    return s;
  }();
  return set;
}

}  // namespace

TEST_CASE(
    "normalization factors and phase agree with GSL gsl_sf_legendre_array (NONE, SCHMIDT, SPHARM, FULL) "
    "to degree 40",
    "[conventions]") {
  // coefficient_factor(from, to) = P_from / P_to, because C_X P_X is the same for every X.
  for (double t : {-0.83, -0.2, 0.31, 0.77}) {
    std::vector<Eigen::MatrixXd> p;
    std::vector<Convention> conventions;
    for (const Convention& c : all_conventions()) {
      if (c.zonal_as_j) continue;
      conventions.push_back(c);
      p.push_back(gsl_legendre(c, 40, t));
    }
    const Eigen::MatrixXd none = gsl_legendre(Convention{Normalization::unnormalized, false, false}, 40, t);
    const Eigen::MatrixXd fully = gsl_legendre(Convention{}, 40, t);
    for (size_t i = 0; i < conventions.size(); ++i) {
      for (int n = 0; n <= 40; ++n)
        for (int m = 0; m <= n; ++m) {
          // Near a zero of P_nm the ratios carry the functions' cancellation, not the factors: skipped.
          if (std::abs(fully(n, m)) < 1e-3) continue;
          CAPTURE(t, describe(conventions[i]), n, m);
          // legendre_normalization: P_X = N_X P_unnormalized (phase aside).
          const double phase = conventions[i].condon_shortley && m % 2 ? -1.0 : 1.0;
          CHECK_THAT(legendre_normalization(conventions[i].normalization, n, m) * phase,
                     WithinRel(p[i](n, m) / none(n, m), 1e-12));
          for (size_t j = 0; j < conventions.size(); j += 3)
            CHECK_THAT(coefficient_factor(conventions[i], conventions[j], n, m),
                       WithinRel(p[i](n, m) / p[j](n, m), 1e-12));
        }
    }
  }
}

TEST_CASE("Condon-Shortley functions equal N * Boost.Math legendre_p, which carries the (-1)^m phase",
          "[conventions]") {
  // Boost.Math documentation, "Legendre (and Associated) Polynomials": legendre_p(l, m, x) includes (-1)^m.
  for (double t : {-0.5, 0.2, 0.9})
    for (Normalization normalization : {Normalization::fully, Normalization::unnormalized,
                                        Normalization::schmidt, Normalization::orthonormal}) {
      const Eigen::MatrixXd p = gsl_legendre(Convention{normalization, true, false}, 25, t);
      const Eigen::MatrixXd fully = gsl_legendre(Convention{}, 25, t);
      for (int n = 0; n <= 25; ++n)
        for (int m = 0; m <= n; ++m) {
          if (std::abs(fully(n, m)) < 1e-3) continue;  // near a zero of P_nm (e.g. P_13^11 at t = 0.2)
          CAPTURE(t, to_string(normalization), n, m);
          const double boost_value =
              legendre_normalization(normalization, n, m) * boost::math::legendre_p(n, m, t);
          CHECK_THAT(boost_value, WithinRel(p(n, m), 1e-12));
        }
    }
}

TEST_CASE("the GSL-sum evaluator equals the exact polyhedron potential outside the body", "[conventions]") {
  // Werner & Scheeres 1997 closed form (polyhedron_gravity.h) against the degree-20 series at three times
  // the Brillouin radius, where the truncation error is below (1/3)^21 ~ 1e-10 of the disturbing part.
  const PolyhedronGravity exact(body_regions());
  const CoefficientSet& set = body_set();
  const double rb = set.brillouin_radius;
  for (const Eigen::Vector3d& direction :
       {Eigen::Vector3d(1, 0.3, -0.2), Eigen::Vector3d(-0.4, 1, 0.7), Eigen::Vector3d(0.1, -0.2, -1)}) {
    const Eigen::Vector3d x = set.center_of_mass + 3.0 * rb * direction.normalized();
    const double series = potential_in_own_convention(set, x - set.center_of_mass);
    const double polyhedron = exact.evaluate(x).potential;
    const double point_mass = set.gm / (x - set.center_of_mass).norm();
    CHECK_THAT(series, WithinRel(polyhedron, 1e-12));
    CHECK_THAT(series - point_mass, WithinRel(polyhedron - point_mass, 1e-8));
  }
}

TEST_CASE("every conversion leaves the potential unchanged (1e-13) and records itself", "[conventions]") {
  const CoefficientSet& set = body_set();
  const std::vector<Eigen::Vector3d> points{
      Eigen::Vector3d(2600, 700, -300), Eigen::Vector3d(-900, 1400, 2100), Eigen::Vector3d(100, -200, -2400)};
  for (const Convention& from : all_conventions()) {
    const CoefficientSet source = convert_convention(set, from);
    for (const Convention& to : all_conventions()) {
      CAPTURE(describe(from), describe(to));
      const CoefficientSet target = convert_convention(source, to);
      CHECK(target.convention == to);
      CHECK(target.history.back().find(describe(to)) != std::string::npos);
      for (const Eigen::Vector3d& x : points) {
        const double before = potential_in_own_convention(source, x),
                     after = potential_in_own_convention(target, x);
        CHECK_THAT(after, WithinRel(before, 1e-13));
        const double central = set.gm / x.norm();
        CHECK_THAT(after - central, WithinRel(before - central, 1e-11));
      }
    }
  }
}

TEST_CASE("round trips A -> B -> A are exact to 1e-14 for every pair of conventions, sigmas included",
          "[conventions]") {
  const CoefficientSet& set = body_set();
  for (const Convention& a : all_conventions()) {
    const CoefficientSet in_a = expressed_in(set, a);
    for (const Convention& b : all_conventions()) {
      CAPTURE(describe(a), describe(b));
      const CoefficientSet back = expressed_in(expressed_in(in_a, b), a);
      double worst = 0;
      for (int n = 0; n <= set.degree; ++n)
        for (int m = 0; m <= n; ++m) {
          auto rel = [](double x, double y) { return x == y ? 0.0 : std::abs(x - y) / std::abs(y); };
          worst = std::max({worst, rel(back.C(n, m), in_a.C(n, m)), m ? rel(back.S(n, m), in_a.S(n, m)) : 0.0,
                            rel(back.sigma_C(n, m), in_a.sigma_C(n, m))});
        }
      CHECK(worst <= 1e-14);
    }
  }
}

TEST_CASE("sigmas scale by |factor| and J_n flips only the zonal column", "[conventions]") {
  // IERS Conventions 2010, ch. 6: J_n = -C_n0 (unnormalized) ; sigmas are magnitudes.
  const CoefficientSet& set = body_set();
  const Convention target{Normalization::unnormalized, true, true};
  const CoefficientSet out = convert_convention(set, target);
  for (int n = 2; n <= 6; ++n) {
    CHECK_THAT(out.C(n, 0), WithinRel(-set.C(n, 0) * std::sqrt(2.0 * n + 1.0), 1e-14));
    CHECK_THAT(out.C(n, 1),
               WithinRel(-set.C(n, 1) * legendre_normalization(Normalization::fully, n, 1), 1e-14));
    CHECK(out.sigma_C(n, 1) > 0);
    CHECK_THAT(out.sigma_C(n, 1),
               WithinRel(set.sigma_C(n, 1) * legendre_normalization(Normalization::fully, n, 1), 1e-14));
  }
  // J2 from fully normalized C20: J2 = -sqrt(5) C20bar (IERS Conventions 2010, eq. 6.2 with the
  // normalization).
  CHECK_THAT(out.C(2, 0), WithinRel(-std::sqrt(5.0) * set.C(2, 0), 1e-15));
}

TEST_CASE("convention names: 16 distinct conventions, descriptions and short names", "[conventions]") {
  const auto all = all_conventions();
  REQUIRE(all.size() == 16);
  std::set<std::string> names, descriptions;
  for (const auto& c : all) {
    names.insert(short_name(c));
    descriptions.insert(describe(c));
  }
  CHECK(names.size() == 16);
  CHECK(descriptions.size() == 16);
  CHECK(short_name(Convention{Normalization::schmidt, true, true}) == "schmidt+cs+J");
  CHECK(all.front() == Convention{});
  CHECK_THROWS_AS(legendre_normalization(Normalization::fully, 2, 3), ConventionError);
  CHECK_THROWS_AS(parse_normalization("full"), ConventionError);
}

// ---- polystokes convert, end to end ----

namespace {

std::string quoted(const std::string& path) { return "'" + path + "'"; }

std::string written_set(const std::string& dir, const CoefficientSet& set) {
  const std::string path = dir + "/in.txt";
  write_coefficient_file(set, path);
  return path;
}

}  // namespace

TEST_CASE("convert CLI: conventions change exactly as the library does, text and JSON, history recorded",
          "[conventions][cli]") {
  const std::string dir = temp_directory();
  const std::string in = written_set(dir, body_set());
  const CommandResult result = run_cli(
      "convert " + quoted(in) + " -o " + quoted(dir + "/out.txt") + " --json " + quoted(dir + "/out.json") +
      " --to-normalization unnormalized --to-condon-shortley on --to-zonal j");
  CAPTURE(result.output);
  REQUIRE(result.exit_code == 0);
  CHECK(result.output.find("converted from fully normalized") != std::string::npos);
  const CoefficientSet out = read_coefficient_file(dir + "/out.txt");
  const CoefficientSet expected =
      convert_convention(body_set(), Convention{Normalization::unnormalized, true, true});
  CHECK(out.convention == expected.convention);
  CHECK(out.C == expected.C);
  CHECK(out.S == expected.S);
  CHECK(out.sigma_C == expected.sigma_C);
  REQUIRE(out.history.size() == body_set().history.size() + 3);
  CHECK(out.history[out.history.size() - 3] == "polystokes convert of " + in);
  CHECK(out.history[out.history.size() - 2] == "inputs as interpreted: unit m (bare lengths)");
  const CoefficientSet json = read_coefficient_file(dir + "/out.json");
  CHECK(json.C == out.C);
  // Potential unchanged, by the GSL-sum evaluator in each file's own convention.
  const Eigen::Vector3d x(2500, -1200, 900);
  CHECK_THAT(potential_in_own_convention(out, x),
             WithinRel(potential_in_own_convention(body_set(), x), 1e-13));
}

TEST_CASE("convert CLI: Euler rotation and its inverse, radius in km and back, return the set",
          "[conventions][cli]") {
  // Inverse of Rz(a) Ry(b) Rz(c) is Rz(-c) Ry(-b) Rz(-a).
  const std::string dir = temp_directory();
  const std::string in = written_set(dir, body_set());
  const std::string there = dir + "/there.txt", back = dir + "/back.txt";
  REQUIRE(run_cli("convert " + quoted(in) + " -q -o " + quoted(there) +
                  " --rotate-euler 30,20,-75 --to-ref-radius 2.5 --unit km")
              .exit_code == 0);
  const CoefficientSet mid = read_coefficient_file(there);
  CHECK(mid.reference_radius == 2500.0);
  CHECK(frame_label(mid) == "rotated");
  const std::string radius = fmt::format("{}", body_set().reference_radius);
  REQUIRE(run_cli("convert " + quoted(there) + " -q -o " + quoted(back) +
                  " --rotate-euler 75,-20,-30 --to-ref-radius " + radius)
              .exit_code == 0);
  const CoefficientSet out = read_coefficient_file(back);
  require_sets_close(out, body_set(), body_set().degree, 1e-14);
  CHECK((out.axes_in_mesh - Eigen::Matrix3d::Identity()).cwiseAbs().maxCoeff() < 1e-14);
}

TEST_CASE("convert CLI: refusals give one error line, exit code 2 or 1, and no output file",
          "[conventions][cli]") {
  const std::string dir = temp_directory();
  const std::string in = written_set(dir, body_set());
  const std::string out = dir + "/out.txt";
  struct Refusal {
    std::string arguments, expected;
    int code;
  };
  const std::vector<Refusal> refusals{
      {"--shift 1e5,0,0", "--allow-outside", 2},
      {"--rotate-matrix 1,0,0,0,-1,0,0,0,1", "reflection", 2},
      {"--rotate-matrix 1,0,0", "nine comma-separated numbers", 2},
      {"--rotate-euler 1,2,3 --to-principal", "excludes", 1},
      {"--to-normalization full", "fully", 1},
      {"--allow-outside", "--shift", 1},
      {"--columns n,m,C,S",
       "--normalization, --condon-shortley or --no-condon-shortley, --ref-radius, --gm are required", 2},
  };
  for (const Refusal& refusal : refusals) {
    const CommandResult result =
        run_cli("convert " + quoted(in) + " -o " + quoted(out) + " " + refusal.arguments);
    CAPTURE(refusal.arguments, result.output);
    CHECK(result.exit_code == refusal.code);
    CHECK(result.output.find(refusal.expected) != std::string::npos);
    CHECK(!file_exists(out));
  }
  const CommandResult missing = run_cli("convert " + quoted(dir + "/none.txt") + " -o " + quoted(out));
  CHECK(missing.exit_code == 2);
  CHECK(!file_exists(out));
}

TEST_CASE("convert CLI: shift allowed outside the Brillouin sphere writes the caution into the notes",
          "[conventions][cli]") {
  const std::string dir = temp_directory();
  const std::string in = written_set(dir, body_set());
  const CommandResult result = run_cli("convert " + quoted(in) + " -o " + quoted(dir + "/out.txt") +
                                       " --shift 4,0,0 --unit km --allow-outside");
  CAPTURE(result.output);
  REQUIRE(result.exit_code == 0);
  CHECK(result.output.find("CAUTION") != std::string::npos);
  const CoefficientSet out = read_coefficient_file(dir + "/out.txt");
  CHECK(out.notes.back().find("CAUTION") != std::string::npos);
  CHECK(out.origin_in_mesh.x() == Approx(body_set().origin_in_mesh.x() + 4000.0));
}

TEST_CASE("degree 0 stays C00 = +1 in every zonal form and through every conversion", "[conventions]") {
  // Issue 10, defect 14: the J form stored C00 as -1. J_n = -C_n0 is defined for the zonal terms n >= 1
  // (IERS Conventions 2010, eq. 6.2; Heiskanen & Moritz 1967, sec. 2-9); C00 = 1 for GM the total (common
  // practice), except the orthonormal C00 = sqrt(4 pi) that makes C00 P00 = 1.
  const CoefficientSet& set = body_set();
  REQUIRE(set.C(0, 0) == 1.0);
  for (const Convention& from : all_conventions()) {
    const CoefficientSet source = convert_convention(set, from);
    CAPTURE(describe(from));
    const double expected = from.normalization == Normalization::orthonormal ? std::sqrt(4 * M_PI) : 1.0;
    CHECK_THAT(source.C(0, 0), WithinRel(expected, 1e-15));
    CHECK(zonal_sign(from, 0, 0) == 1.0);
    CHECK(zonal_sign(from, 2, 0) == (from.zonal_as_j ? -1.0 : 1.0));
    CHECK(zonal_sign(from, 2, 1) == 1.0);
  }
}

TEST_CASE(
    "the normalization name table round-trips every normalization and names each once (common practice)",
    "[conventions]") {
  const auto& names = normalization_names();
  REQUIRE(names.size() == 4);
  std::vector<std::string> words;
  for (const NormalizationName& name : names) {
    CAPTURE(name.word);
    CHECK(parse_normalization(name.word) == name.value);
    CHECK(to_string(name.value) == name.word);
    CHECK(describe(name.value) == name.description);
    CHECK(std::count(words.begin(), words.end(), std::string(name.word)) == 0);
    words.emplace_back(name.word);
  }
  CHECK(normalization_words() == words);
  CHECK(normalization_choices(true) == "fully (4pi), unnormalized, schmidt or orthonormal");
  CHECK(normalization_choices(false) == "fully, unnormalized, schmidt or orthonormal");
  CHECK_THROWS_WITH(parse_normalization("full"),
                    "unknown normalization 'full' (expected fully, unnormalized, schmidt or orthonormal)");
  // describe(Convention) opens with the normalization's description.
  for (const Convention& convention : all_conventions())
    CHECK(describe(convention).rfind(describe(convention.normalization) + ", ", 0) == 0);
}
