// Covariance of the coefficients: the Monte Carlo covariance against its definition summed independently, its
// diagonal against the sigmas bit for bit, shards merged against one run, files round-tripped and refused
// when damaged, and its propagation through convert's linear maps against closed forms and against the
// samples transformed one by one.
#include "polystokes/sets/covariance.h"

#include <Eigen/Eigenvalues>
#include <catch2/catch.hpp>
#include <cmath>
#include <fstream>

#include "polystokes/core/errors.h"
#include "polystokes/io/covariance_file.h"
#include "polystokes/io/mesh_io.h"
#include "polystokes/io/shard_file.h"
#include "polystokes/mesh/shapes.h"
#include "polystokes/sets/compare.h"
#include "polystokes/sets/transforms.h"
#include "polystokes/uncertainty/uncertainty.h"
#include "test_support.h"

using namespace polystokes;
using Catch::Matchers::Contains;

namespace {

constexpr double kDensity = 2000.0;
constexpr int kDegree = 5;
constexpr long kSamples = 12;  // fewer than the 36 parameters of degrees 0..5: a rank-deficient covariance

UncertaintyPlan small_plan(Normalization normalization = Normalization::fully) {
  UncertaintySettings settings;
  settings.samples = kSamples;
  settings.seed = 5;
  settings.shape.sigma = 6;
  settings.shape.correlation_length = 350;
  settings.density_sigma = 0.02;
  ComputeOptions options;
  options.degree = kDegree;
  options.convention.normalization = normalization;
  return plan_uncertainty({DensityRegion{make_ellipsoid(2, 1200, 900, 800), kDensity}}, options, settings);
}

// A sample's coefficients as a set (nominal plus its delta), fully normalized.
CoefficientSet sample_set(const CoefficientSet& nominal, const SampleResult& sample) {
  CoefficientSet out = nominal;
  Eigen::Index i = 0;
  for (int n = 0; n <= nominal.degree; ++n)
    for (int m = 0; m <= n; ++m) out.C(n, m) += sample.delta(i++);
  for (int n = 0; n <= nominal.degree; ++n)
    for (int m = 0; m <= n; ++m) out.S(n, m) += sample.delta(i++);
  return out;
}

double value_of(const CoefficientSet& set, const CoefficientParameter& p) {
  return (p.sine ? set.S : set.C)(p.n, p.m);
}

// Second moment about `center` of the sets, over the parameters of degrees 0..degree, by the definition.
Eigen::MatrixXd second_moment(const std::vector<CoefficientSet>& sets, const CoefficientSet& center,
                              int degree) {
  const auto parameters = covariance_parameters(degree);
  const Eigen::Index P = Eigen::Index(parameters.size());
  Eigen::MatrixXd out = Eigen::MatrixXd::Zero(P, P);
  for (const CoefficientSet& set : sets)
    for (Eigen::Index i = 0; i < P; ++i)
      for (Eigen::Index j = 0; j < P; ++j)
        out(i, j) += (value_of(set, parameters[size_t(i)]) - value_of(center, parameters[size_t(i)])) *
                     (value_of(set, parameters[size_t(j)]) - value_of(center, parameters[size_t(j)]));
  return out / double(sets.size());
}

double max_abs(const Eigen::MatrixXd& m) { return m.cwiseAbs().maxCoeff(); }

}  // namespace

TEST_CASE("parameter order: degree blocks n^2..(n+1)^2-1, C then S, no S(n,0)", "[covariance]") {
  // Common practice (the order of a packed real spherical-harmonic vector), checked by counting.
  const auto parameters = covariance_parameters(7);
  REQUIRE(parameters.size() == 64);
  for (size_t i = 0; i < parameters.size(); ++i) {
    const CoefficientParameter& p = parameters[i];
    CAPTURE(i, p.n, p.m, p.sine);
    CHECK(covariance_index(p.n, p.m, p.sine) == Eigen::Index(i));
    CHECK(!(p.sine && p.m == 0));
    CHECK(Eigen::Index(p.n) * p.n <= Eigen::Index(i));
    CHECK(Eigen::Index(i) < Eigen::Index(p.n + 1) * (p.n + 1));
  }
  CHECK(covariance_bytes(30) == 961.0 * 961.0 * 8.0);  // the 7.4 MB the CLI announces for degree 30
  CHECK_NOTHROW(check_covariance_degree(106));
  REQUIRE_THROWS_AS(check_covariance_degree(107), ResourceError);
}

TEST_CASE("Monte Carlo covariance: the definition, sigmas its diagonal's roots bit for bit, rank <= K",
          "[covariance]") {
  for (const Normalization normalization : {Normalization::fully, Normalization::schmidt}) {
    CAPTURE(to_string(normalization));
    const UncertaintyPlan plan = small_plan(normalization);
    const std::vector<SampleResult> samples = run_samples(plan, shard_samples(Shard{}, kSamples));
    const UncertaintyResult result =
        summarize_uncertainty(plan.nominal, plan.settings, plan.convention, samples, plan.mean_edge, 40);
    REQUIRE(result.covariance);
    const CoefficientCovariance& c = *result.covariance;
    CHECK(c.degree == kDegree);  // capped at the set's degree
    CHECK(c.samples == kSamples);
    CHECK(c.convention == result.set.convention);
    // Sigmas are the square roots of the diagonal, compared with ==.
    for (const CoefficientParameter& p : covariance_parameters(c.degree)) {
      CAPTURE(p.n, p.m, p.sine);
      const Eigen::Index i = covariance_index(p.n, p.m, p.sine);
      CHECK((p.sine ? result.set.sigma_S : result.set.sigma_C)(p.n, p.m) == std::sqrt(c.values(i, i)));
    }
    CHECK(c.values == c.values.transpose());
    // The definition (common practice: second moment about the nominal), summed here sample by sample in
    // fully normalized numbers and converted by the closed-form factor of each parameter.
    std::vector<CoefficientSet> sets;
    for (const SampleResult& sample : samples) sets.push_back(sample_set(plan.nominal, sample));
    Eigen::MatrixXd expected = second_moment(sets, plan.nominal, kDegree);
    const auto parameters = covariance_parameters(kDegree);
    for (size_t i = 0; i < parameters.size(); ++i)
      for (size_t j = 0; j < parameters.size(); ++j)
        expected(Eigen::Index(i), Eigen::Index(j)) *=
            coefficient_factor(Convention{}, c.convention, parameters[i].n, parameters[i].m) *
            coefficient_factor(Convention{}, c.convention, parameters[j].n, parameters[j].m);
    CHECK(max_abs(c.values - expected) <= 1e-13 * max_abs(expected));
    // A sum of K outer products has rank at most K; positive semidefinite to rounding.
    const Eigen::SelfAdjointEigenSolver<Eigen::MatrixXd> eigen(c.values);
    const double largest = eigen.eigenvalues().maxCoeff();
    CHECK(eigen.eigenvalues().minCoeff() >= -1e-12 * largest);
    CHECK((eigen.eigenvalues().array() > 1e-10 * largest).count() <= kSamples);
  }
}

TEST_CASE("shards written, read back and merged give the single run's covariance bit for bit",
          "[covariance]") {
  const UncertaintyPlan plan = small_plan(Normalization::schmidt);
  const UncertaintyResult single = run_uncertainty(plan, {}, 4);
  std::vector<UncertaintyShard> shards;
  std::vector<std::string> names;
  for (int i = 1; i <= 3; ++i) {
    names.push_back("shard" + std::to_string(i));
    shards.push_back(parse_shard_text(format_shard_text(run_shard(plan, Shard{i, 3})), names.back()));
  }
  const UncertaintyResult merged = merge_shards(shards, names, 4);
  REQUIRE(merged.covariance);
  CHECK(merged.covariance->values == single.covariance->values);
  CHECK(merged.set.sigma_C == single.set.sigma_C);
  CHECK(!merge_shards(shards, names).covariance);  // none unless asked for
}

TEST_CASE("covariance files round-trip exactly as text and binary; damage is refused", "[covariance]") {
  const UncertaintyResult result = run_uncertainty(small_plan(), {}, 3);
  const CoefficientCovariance& c = *result.covariance;
  for (const CovarianceFormat format : {CovarianceFormat::text, CovarianceFormat::binary}) {
    CAPTURE(to_string(format));
    const std::string bytes = format_covariance(c, format);
    const CoefficientCovariance back = parse_covariance(bytes, "c");
    CHECK(back.values == c.values);  // round-trip doubles (common practice: shortest round-trip decimals)
    CHECK(back.degree == c.degree);
    CHECK(back.samples == c.samples);
    CHECK(back.convention == c.convention);
    CHECK(back.gm == c.gm);
    CHECK(format_covariance(back, format) == bytes);
    REQUIRE_THROWS_WITH(parse_covariance(bytes.substr(0, bytes.size() - 3), "c"),
                        Contains("c:") && (Contains("truncated") || Contains("expected")));
  }
  std::string text = format_covariance(c, CovarianceFormat::text);
  text.replace(text.find("parameter 2 C 1 1"), 17, "parameter 2 S 1 1");
  REQUIRE_THROWS_WITH(parse_covariance(text, "c"), Contains("out of order"));
  // A binary header announcing far more bytes than the file holds is refused before any allocation.
  std::string binary = format_covariance(c, CovarianceFormat::binary);
  const size_t at = binary.find("degree 3");
  binary.replace(at, 8, "degree 90");
  binary.replace(binary.find("parameters 16"), 13, "parameters 8281");
  REQUIRE_THROWS_AS(parse_covariance(binary, "c"), FormatError);
  binary = format_covariance(c, CovarianceFormat::binary);
  binary.replace(binary.find("bytes 2048"), 10, "bytes 2056");
  REQUIRE_THROWS_WITH(parse_covariance(binary, "c"),
                      Contains("16 parameters take 2048 bytes, the header says 2056"));
}

TEST_CASE("a set written with its covariance finds it again; a changed companion is refused",
          "[covariance]") {
  const std::string dir = test::temp_directory();
  const UncertaintyResult result = run_uncertainty(small_plan(), {}, 3);
  write_set_with_covariance(result.set, {{dir + "/s.txt", CoefficientForm::text}}, *result.covariance,
                            {dir + "/s.cov.bin", CovarianceFormat::binary});
  const CoefficientSet set = read_coefficient_file(dir + "/s.txt");
  const auto link = covariance_link(set);
  REQUIRE(link);
  CHECK(link->file == "s.cov.bin");
  CHECK(link->sha256 == sha256_file_hex(dir + "/s.cov.bin"));
  const auto covariance = read_companion_covariance(set, dir + "/s.txt");
  REQUIRE(covariance);
  CHECK(covariance->values == result.covariance->values);
  CHECK(companion_covariance_path(dir + "/s.txt", CovarianceFormat::text) == dir + "/s.cov.txt");
  std::ofstream(dir + "/s.cov.bin", std::ios::app) << "x";
  REQUIRE_THROWS_WITH(read_companion_covariance(set, dir + "/s.txt"),
                      Contains("s.cov.bin: SHA-256") && Contains("not the covariance of this set"));
  CHECK(!read_companion_covariance(result.set, dir + "/s.txt"));  // a set without a link has none
}

TEST_CASE("normalization change: C' = F C F with the closed-form factors", "[covariance]") {
  const UncertaintyResult result = run_uncertainty(small_plan(), {}, kDegree);
  const CoefficientCovariance& c = *result.covariance;
  const Convention schmidt{Normalization::schmidt, true, true};
  const CoefficientCovariance out = transform_covariance(
      c, result.set, [&](const CoefficientSet& s) { return convert_convention(s, schmidt); });
  CHECK(out.convention == schmidt);
  // Fully / Schmidt = sqrt(2n+1) (IERS Conventions 2010, ch. 6, and the Schmidt definition); the phase
  // (-1)^m and the J_n sign -1 at m = 0, n >= 1.
  const auto parameters = covariance_parameters(c.degree);
  for (size_t i = 0; i < parameters.size(); ++i)
    for (size_t j = 0; j < parameters.size(); ++j) {
      auto factor = [](const CoefficientParameter& p) {
        return std::sqrt(2.0 * p.n + 1.0) * (p.m % 2 ? -1.0 : 1.0) * (p.m == 0 && p.n >= 1 ? -1.0 : 1.0);
      };
      const Eigen::Index a = Eigen::Index(i), b = Eigen::Index(j);
      CAPTURE(i, j);
      CHECK(std::abs(out.values(a, b) - factor(parameters[i]) * factor(parameters[j]) * c.values(a, b)) <=
            1e-15 * std::abs(factor(parameters[i]) * factor(parameters[j]) * c.values(a, b)));
    }
}

TEST_CASE(
    "rotation, shift, radius and GM: T C T^T equals the covariance of the samples transformed one by one",
    "[covariance]") {
  const UncertaintyPlan plan = small_plan();
  const std::vector<SampleResult> samples = run_samples(plan, shard_samples(Shard{}, kSamples));
  const UncertaintyResult result =
      summarize_uncertainty(plan.nominal, plan.settings, plan.convention, samples, plan.mean_edge, kDegree);
  const CoefficientMap map = [](const CoefficientSet& s) {
    CoefficientSet out = shift_origin(s, Eigen::Vector3d(30, -20, 45));
    out = rotate_set(out, euler_zyz_matrix(0.3, 0.7, -1.1));
    out = rescale_reference_radius(out, 1500);
    return rescale_gm(out, 1.1 * s.gm);
  };
  const CoefficientCovariance out = transform_covariance(*result.covariance, result.set, map);
  // Independent of T: each sampled body's coefficients go through the same transforms, then their second
  // moment about the transformed nominal set is taken by its definition (a linear map commutes with it).
  std::vector<CoefficientSet> transformed;
  for (const SampleResult& sample : samples) transformed.push_back(map(sample_set(plan.nominal, sample)));
  const Eigen::MatrixXd expected = second_moment(transformed, map(plan.nominal), kDegree);
  CHECK(max_abs(out.values - expected) <= 1e-10 * max_abs(expected));
  CHECK(out.reference_radius == 1500);
  CHECK(out.values == out.values.transpose());
}

TEST_CASE("compare brings B's covariance to A: chi-square of a difference in the covariance's range",
          "[covariance]") {
  const UncertaintyResult result = run_uncertainty(small_plan(), {}, kDegree);
  const CoefficientSet& a = result.set;
  const CoefficientCovariance& covariance = *result.covariance;
  // d = C_2 w at degree 2 (a difference the covariance spans): with both sets carrying C, the combined block
  // is 2 C_2 and d^T (2 C_2)^+ d = w^T C_2 w / 2 (Moore-Penrose inverse; common practice).
  const Eigen::Index first = 4, k = 5;
  const Eigen::MatrixXd block = covariance.values.block(first, first, k, k);
  Eigen::VectorXd w(k);
  w << 1.0, -0.5, 0.25, 2.0, 0.75;
  w /= std::sqrt(block.diagonal().maxCoeff());
  const Eigen::VectorXd d = block * w;
  CoefficientSet moved = a;
  const auto parameters = covariance_parameters(2);
  for (Eigen::Index i = 0; i < k; ++i) {
    const CoefficientParameter& p = parameters[size_t(first + i)];
    (p.sine ? moved.S : moved.C)(p.n, p.m) -= d(i);
  }
  // B is that set in another convention, radius and GM, with its covariance transformed to match.
  const CoefficientMap to_b = [](const CoefficientSet& s) {
    CoefficientSet out = rescale_reference_radius(s, 1700);
    out = rescale_gm(out, 0.9 * s.gm);
    return convert_convention(out, Convention{Normalization::schmidt, true, true});
  };
  const CoefficientSet b = to_b(moved);
  const CoefficientCovariance covariance_b = transform_covariance(covariance, a, to_b);
  CompareOptions options;
  options.diagnose = false;
  const Comparison c = compare_sets(a, b, options, &covariance, &covariance_b);
  REQUIRE(c.uncertainty);
  const DegreeUncertainty& two = c.uncertainty->degrees[2];
  CHECK(two.from_covariance);
  CHECK(two.parameters == 5);
  CHECK_THAT(two.chi_square, Catch::Matchers::WithinRel(0.5 * w.dot(block * w), 1e-6));
}
