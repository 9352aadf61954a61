// End-to-end checks of the covariance companion (issue 12): uncertainty and uncertainty-merge write it beside
// the set (identical bytes from shards), convert transforms it and takes the sigmas from its new diagonal,
// compare tests the difference against it, and a companion that is not the one the set records is refused.
#include <fmt/format.h>
#include <sys/stat.h>
#include <unistd.h>

#include <Eigen/Eigenvalues>
#include <catch2/catch.hpp>
#include <cmath>

#include "polystokes/io/coefficient_file.h"
#include "polystokes/io/covariance_file.h"
#include "polystokes/sets/conventions.h"
#include "test_support.h"

using namespace polystokes;
using namespace polystokes::test;
using Catch::Matchers::Contains;

namespace {

std::string quoted(const std::string& path) { return "'" + path + "'"; }

// The demo sphere (radius 1 km) with correlated shape noise and a density sigma, 9 samples at degree 4.
std::string run_arguments(int seed = 77, int degree = 4) {
  return "uncertainty " + quoted(source_path("shapes-demo/sphere.obj")) +
         " --unit km --density 2100 --degree " + std::to_string(degree) + " --samples 9 --seed " +
         std::to_string(seed) + " --shape-sigma 0.002 --correlation-length 0.3 --density-sigma 0.01";
}

// Every sigma of the covered degrees is the square root of the covariance's diagonal, bit for bit.
void check_sigmas_from_diagonal(const CoefficientSet& set, const CoefficientCovariance& covariance) {
  for (const CoefficientParameter& p : covariance_parameters(covariance.degree)) {
    CAPTURE(p.n, p.m, p.sine);
    const Eigen::Index i = covariance_index(p.n, p.m, p.sine);
    CHECK((p.sine ? set.sigma_S : set.sigma_C)(p.n, p.m) == std::sqrt(covariance.values(i, i)));
  }
}

}  // namespace

TEST_CASE("uncertainty writes the covariance companion; shards merged give the same bytes",
          "[covariance_cli]") {
  const std::string dir = temp_directory();
  const CommandResult single = run_cli(run_arguments() + " -o " + quoted(dir + "/single.txt"));
  CAPTURE(single.output);
  REQUIRE(single.exit_code == 0);
  // The memory is announced before the run, with the rank bound.
  CHECK_THAT(single.output, Contains("covariance: degrees 0..4, 25 parameters") &&
                                Contains("from 9 samples its rank is at most 9"));
  const CoefficientSet set = read_coefficient_file(dir + "/single.txt");
  const auto covariance = read_companion_covariance(set, dir + "/single.txt");
  REQUIRE(covariance);
  CHECK(covariance->degree == 4);  // default 30, capped at the set's degree
  CHECK(covariance->samples == 9);
  check_sigmas_from_diagonal(set, *covariance);
  // A sum of 9 outer products: rank at most 9 of the 25 parameters; symmetric positive semidefinite.
  const Eigen::SelfAdjointEigenSolver<Eigen::MatrixXd> eigen(covariance->values);
  const double largest = eigen.eigenvalues().maxCoeff();
  CHECK((eigen.eigenvalues().array() > 1e-10 * largest).count() <= 9);
  CHECK(eigen.eigenvalues().minCoeff() >= -1e-12 * largest);

  std::vector<std::string> shards;
  for (int i = 1; i <= 2; ++i) {
    shards.push_back(dir + "/part" + std::to_string(i) + ".shard");
    REQUIRE(run_cli(run_arguments() + " -q --shard " + std::to_string(i) + "/2 -o " + quoted(shards.back()))
                .exit_code == 0);
  }
  const CommandResult merged = run_cli("uncertainty-merge " + quoted(shards[1]) + " " + quoted(shards[0]) +
                                       " -o " + quoted(dir + "/merged.txt"));
  CAPTURE(merged.output);
  REQUIRE(merged.exit_code == 0);
  CHECK(read_bytes(dir + "/merged.cov.txt") == read_bytes(dir + "/single.cov.txt"));
  CHECK(covariance_link(read_coefficient_file(dir + "/merged.txt"))->sha256 == covariance_link(set)->sha256);

  SECTION("a JSON copy in another directory names the companion relative to itself") {
    REQUIRE(mkdir((dir + "/sets").c_str(), 0777) == 0);
    REQUIRE(run_cli(run_arguments() + " -q -o " + quoted(dir + "/sets/x.txt") + " --json " +
                    quoted(dir + "/x.json"))
                .exit_code == 0);
    const auto from_json = read_companion_covariance(read_coefficient_file(dir + "/x.json"), dir + "/x.json");
    REQUIRE(from_json);
    CHECK(covariance_link(read_coefficient_file(dir + "/x.json"))->file == "sets/x.cov.txt");
    CHECK(from_json->values == covariance->values);
  }
  SECTION("--covariance-degree 0 writes none; binary holds the same values") {
    REQUIRE(
        run_cli(run_arguments() + " -q --covariance-degree 0 -o " + quoted(dir + "/none.txt")).exit_code ==
        0);
    CHECK(!file_exists(dir + "/none.cov.txt"));
    CHECK(!covariance_link(read_coefficient_file(dir + "/none.txt")));
    REQUIRE(run_cli(run_arguments() + " -q --covariance-format binary --covariance-degree 2 -o " +
                    quoted(dir + "/bin.txt"))
                .exit_code == 0);
    const auto binary = read_covariance_file(dir + "/bin.cov.bin");
    CHECK(binary.values == covariance->values.topLeftCorner(9, 9));
  }
}

TEST_CASE("relative file names: the set records its companion's name and finds it again",
          "[covariance_cli]") {
  // Regression: a relative -o once recorded an empty companion name.
  const std::string dir = temp_directory();
  char previous[4096];
  REQUIRE(::getcwd(previous, sizeof previous));
  REQUIRE(::chdir(dir.c_str()) == 0);
  const CommandResult made = run_cli(run_arguments() + " -q -o a.txt");
  const CommandResult converted = run_cli("convert a.txt -o b.txt -q --to-normalization schmidt");
  REQUIRE(::chdir(previous) == 0);
  CAPTURE(made.output, converted.output);
  REQUIRE(made.exit_code == 0);
  REQUIRE(converted.exit_code == 0);
  CHECK(covariance_link(read_coefficient_file(dir + "/a.txt"))->file == "a.cov.txt");
  CHECK(covariance_link(read_coefficient_file(dir + "/b.txt"))->file == "b.cov.txt");
  CHECK(read_companion_covariance(read_coefficient_file(dir + "/b.txt"), dir + "/b.txt"));
}

TEST_CASE("uncertainty refuses a covariance above the memory limit, naming --covariance-degree",
          "[covariance_cli]") {
  // Regression: before the covariance existed there was nothing to refuse; the limit is 1 GiB (degree 106).
  const std::string dir = temp_directory();
  const CommandResult result =
      run_cli(run_arguments(77, 120) + " --covariance-degree 120 -o " + quoted(dir + "/big.txt"));
  CAPTURE(result.output);
  CHECK(result.exit_code == 2);
  CHECK_THAT(result.output, Contains("--covariance-degree") && Contains("MB"));
  CHECK(!file_exists(dir + "/big.txt"));
  CHECK(!file_exists(dir + "/big.cov.txt"));
}

TEST_CASE("convert transforms the covariance with the set; sigmas are the new diagonal's roots",
          "[covariance_cli]") {
  const std::string dir = temp_directory();
  REQUIRE(run_cli(run_arguments() + " -q -o " + quoted(dir + "/in.txt")).exit_code == 0);
  const CoefficientSet input = read_coefficient_file(dir + "/in.txt");
  const auto before = read_companion_covariance(input, dir + "/in.txt");
  REQUIRE(before);
  const CommandResult result =
      run_cli("convert " + quoted(dir + "/in.txt") + " -o " + quoted(dir + "/out.txt") +
              " --to-normalization schmidt --rotate-euler 10,40,-20 --to-ref-radius 1.5 --unit km");
  CAPTURE(result.output);
  REQUIRE(result.exit_code == 0);
  const CoefficientSet output = read_coefficient_file(dir + "/out.txt");
  const auto after = read_companion_covariance(output, dir + "/out.txt");
  REQUIRE(after);
  CHECK(after->convention.normalization == Normalization::schmidt);
  check_sigmas_from_diagonal(output, *after);
  // Regression (sigmas were propagated as if uncorrelated): a rotation mixes the orders of a degree, and the
  // variance of a rotated coefficient is the quadratic form of the covariance; the trace of each degree's
  // block is rotation-invariant (common practice: trace of D C D^T = trace of C for orthogonal D) once the
  // Schmidt factor (2n+1) (C_schmidt = sqrt(2n+1) C_fully, IERS Conventions 2010 ch. 6 and the Schmidt
  // definition) and the radius factor (R_old/R_new)^(2n) are taken out.
  for (int n = 1; n <= 4; ++n) {
    CAPTURE(n);
    const Eigen::Index first = Eigen::Index(n) * n, k = 2 * n + 1;
    const double scale = std::pow(1000.0 / 1500.0, 2 * n) * (2 * n + 1.0);
    CHECK_THAT(after->values.block(first, first, k, k).trace(),
               Catch::Matchers::WithinRel(scale * before->values.block(first, first, k, k).trace(), 1e-10));
  }

  SECTION("a companion that is not the recorded one is refused; --no-covariance drops it") {
    write_text(dir + "/in.cov.txt", read_bytes(dir + "/in.cov.txt") + "\n");
    const CommandResult bad =
        run_cli("convert " + quoted(dir + "/in.txt") + " -o " + quoted(dir + "/bad.txt"));
    CAPTURE(bad.output);
    CHECK(bad.exit_code == 2);
    CHECK_THAT(bad.output, Contains("in.cov.txt: SHA-256") && Contains("not the covariance of this set"));
    CHECK(!file_exists(dir + "/bad.txt"));
    const CommandResult dropped =
        run_cli("convert " + quoted(dir + "/in.txt") + " --no-covariance -o " + quoted(dir + "/plain.txt"));
    CAPTURE(dropped.output);
    REQUIRE(dropped.exit_code == 0);
    CHECK(!covariance_link(read_coefficient_file(dir + "/plain.txt")));
    CHECK(!file_exists(dir + "/plain.cov.txt"));
  }
}

TEST_CASE("compare reports differences in combined sigmas and says whether they agree within them",
          "[covariance_cli]") {
  const std::string dir = temp_directory();
  REQUIRE(run_cli(run_arguments(1) + " -q -o " + quoted(dir + "/a.txt")).exit_code == 0);
  // Another seed: the same nominal coefficients, so consistent at every degree.
  REQUIRE(run_cli(run_arguments(2) + " -q -o " + quoted(dir + "/b.txt")).exit_code == 0);
  const CommandResult same = run_cli("compare " + quoted(dir + "/a.txt") + " " + quoted(dir + "/b.txt"));
  CAPTURE(same.output);
  REQUIRE(same.exit_code == 0);
  CHECK_THAT(same.output, Contains("in units of the combined uncertainty (A: covariance to degree 4, B: "
                                   "covariance to degree 4") &&
                              Contains("within their uncertainty: CONSISTENT"));
  // An oblate body against the sphere's uncertainty: C20 differs by far more than the sampled sigmas.
  REQUIRE(run_cli("compute " + quoted(source_path("shapes-demo/sphere.obj")) +
                  " --unit km --density 2100 --degree 4 -q -o " + quoted(dir + "/plain.txt"))
              .exit_code == 0);
  CoefficientSet shifted = read_coefficient_file(dir + "/plain.txt");
  shifted.C(2, 0) += 1e-3;
  write_coefficient_file(shifted, dir + "/c.txt");
  const CommandResult differ = run_cli("compare " + quoted(dir + "/a.txt") + " " + quoted(dir + "/c.txt"));
  CAPTURE(differ.output);
  REQUIRE(differ.exit_code == 0);
  CHECK_THAT(differ.output, Contains("B: sigmas only") && Contains("INCONSISTENT at degree(s) 2"));
}

TEST_CASE("export writes the covariance in the table's conventions", "[covariance_cli]") {
  const std::string dir = temp_directory();
  REQUIRE(run_cli(run_arguments() + " -q -o " + quoted(dir + "/in.txt")).exit_code == 0);
  const CoefficientSet set = read_coefficient_file(dir + "/in.txt");
  const auto before = read_companion_covariance(set, dir + "/in.txt");
  REQUIRE(before);
  const CommandResult result = run_cli(
      "export " + quoted(dir + "/in.txt") + " -o " + quoted(dir + "/t.tab") + " --covariance " +
      quoted(dir + "/t.cov") + " --covariance-format binary --columns n,m,C,S --normalization unnormalized " +
      "--no-condon-shortley --zonal-j --ref-radius 1500 --gm " + fmt::format("{}", set.gm));
  CAPTURE(result.output);
  REQUIRE(result.exit_code == 0);
  const CoefficientCovariance table = read_covariance_file(dir + "/t.cov");
  CHECK(table.convention.normalization == Normalization::unnormalized);
  CHECK(table.reference_radius == 1500);
  // Variances times N_nm^2 (R/R')^(2n): N_nm = sqrt((2 - d_m0)(2n+1)(n-m)!/(n+m)!) turns fully normalized
  // into unnormalized coefficients (Heiskanen & Moritz 1967, Physical Geodesy, eq. 1-73), factorials by
  // tgamma.
  for (const CoefficientParameter& p : covariance_parameters(table.degree)) {
    CAPTURE(p.n, p.m, p.sine);
    const Eigen::Index i = covariance_index(p.n, p.m, p.sine);
    const double N2 =
        (p.m == 0 ? 1.0 : 2.0) * (2 * p.n + 1) * std::tgamma(p.n - p.m + 1) / std::tgamma(p.n + p.m + 1);
    const double expected = before->values(i, i) * N2 * std::pow(set.reference_radius / 1500.0, 2 * p.n);
    CHECK(std::abs(table.values(i, i) - expected) <= 1e-12 * expected);
  }
  // A set without a companion: nothing to write, one error line, no table either.
  REQUIRE(run_cli("compute " + quoted(source_path("shapes-demo/sphere.obj")) +
                  " --unit km --density 2100 --degree 2 -q -o " + quoted(dir + "/plain.txt"))
              .exit_code == 0);
  const CommandResult none =
      run_cli("export " + quoted(dir + "/plain.txt") + " -o " + quoted(dir + "/p.tab") + " --covariance " +
              quoted(dir + "/p.cov") +
              " --columns n,m,C,S --normalization fully --no-condon-shortley --ref-radius "
              "1000 --gm 1");
  CAPTURE(none.output);
  CHECK(none.exit_code == 2);
  CHECK_THAT(none.output, Contains("records no covariance companion"));
  CHECK(!file_exists(dir + "/p.tab"));
}
