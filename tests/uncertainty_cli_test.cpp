// End-to-end checks of `polystokes uncertainty` and `uncertainty-merge`: shards run as separate processes
// and merged give the single-run set bit for bit; bad merges fail with one line, exit code 2 and no output.
#include <sys/stat.h>

#include <catch2/catch.hpp>

#include "polystokes/io/coefficient_file.h"
#include "test_support.h"

using namespace polystokes;
using namespace polystokes::test;
using Catch::Matchers::Contains;

namespace {

std::string quoted(const std::string& path) { return "'" + path + "'"; }

// The demo sphere (radius 1 km, 5120 faces): shape noise of 2 m correlated over 300 m, a density sigma and a
// core drawn anywhere within 200 m of the centre.
std::string run_arguments(int seed = 4242) {
  return "uncertainty " + quoted(source_path("shapes-demo/sphere.obj")) +
         " --unit km --density 2100 --degree 4 --samples 7 --seed " + std::to_string(seed) +
         " --shape-sigma 0.002"
         " --correlation-length 0.3 --density-sigma 0.01 --core-radius 0.2 --core-contrast 900 --core-offset "
         "0.2";
}

}  // namespace

TEST_CASE("uncertainty in three shard processes, merged, equals one run bit for bit", "[uncertainty_cli]") {
  const std::string dir = temp_directory();
  // The single and the merged set under one file name in two directories: a set records its covariance
  // companion by name (set.cov.txt), so the notes are comparable.
  REQUIRE(mkdir((dir + "/single").c_str(), 0777) == 0);
  REQUIRE(mkdir((dir + "/merged").c_str(), 0777) == 0);
  const CommandResult single = run_cli(run_arguments() + " -o " + quoted(dir + "/single/set.txt") +
                                       " --json " + quoted(dir + "/single.json"));
  CAPTURE(single.output);
  REQUIRE(single.exit_code == 0);
  CHECK_THAT(single.output, Contains("7, seed 4242") && Contains("CAUTION"));
  std::vector<std::string> shards;
  for (int i = 1; i <= 3; ++i) {
    shards.push_back(dir + "/part" + std::to_string(i) + ".shard");
    const CommandResult part =
        run_cli(run_arguments() + " --shard " + std::to_string(i) + "/3 -o " + quoted(shards.back()));
    CAPTURE(part.output);
    REQUIRE(part.exit_code == 0);
  }
  // Any order of the shard files.
  const CommandResult merged = run_cli("uncertainty-merge " + quoted(shards[2]) + " " + quoted(shards[0]) +
                                       " " + quoted(shards[1]) + " -o " + quoted(dir + "/merged/set.txt"));
  CAPTURE(merged.output);
  REQUIRE(merged.exit_code == 0);
  const CoefficientSet a = read_coefficient_file(dir + "/single/set.txt");
  const CoefficientSet b = read_coefficient_file(dir + "/merged/set.txt");
  CHECK(a.C == b.C);
  CHECK(a.sigma_C == b.sigma_C);
  CHECK(a.sigma_S == b.sigma_S);
  CHECK(a.notes == b.notes);
  CHECK(a.sigma_C(2, 0) > 0);
  const CoefficientSet from_json = read_coefficient_file(dir + "/single.json");
  CHECK(from_json.sigma_C == a.sigma_C);

  SECTION("a missing shard: one error line, exit code 2, no output") {
    const CommandResult bad = run_cli("uncertainty-merge " + quoted(shards[0]) + " " + quoted(shards[2]) +
                                      " -o " + quoted(dir + "/incomplete.txt"));
    CAPTURE(bad.output);
    CHECK(bad.exit_code == 2);
    CHECK_THAT(bad.output, Contains("error") && Contains("samples are missing") && Contains("1/3, 3/3"));
    CHECK(!file_exists(dir + "/incomplete.txt"));
  }
  SECTION("a shard of a different run is refused") {
    const std::string other = dir + "/other.shard";
    REQUIRE(run_cli(run_arguments(1) + " --shard 2/3 -o " + quoted(other)).exit_code == 0);
    const CommandResult bad = run_cli("uncertainty-merge " + quoted(shards[0]) + " " + quoted(other) + " " +
                                      quoted(shards[2]) + " -o " + quoted(dir + "/mixed.txt"));
    CAPTURE(bad.output);
    CHECK(bad.exit_code == 2);
    CHECK_THAT(bad.output, Contains("does not belong to the same run") && Contains("seed"));
    CHECK(!file_exists(dir + "/mixed.txt"));
  }
  SECTION("a damaged shard file names the file and line") {
    std::string text = read_bytes(shards[1]);
    text.resize(text.size() / 2);
    write_text(dir + "/cut.shard", text);
    const CommandResult bad =
        run_cli("uncertainty-merge " + quoted(shards[0]) + " " + quoted(dir + "/cut.shard") + " " +
                quoted(shards[2]) + " -o " + quoted(dir + "/cut.txt"));
    CAPTURE(bad.output);
    CHECK(bad.exit_code == 2);
    CHECK_THAT(bad.output, Contains("cut.shard:"));
    CHECK(!file_exists(dir + "/cut.txt"));
  }
}

TEST_CASE("uncertainty refuses bad settings with one error line and no output file", "[uncertainty_cli]") {
  const std::string dir = temp_directory();
  const std::string mesh = quoted(source_path("shapes-demo/sphere.obj"));
  const struct {
    std::string arguments, expected;
  } cases[] = {
      {"--density 2000 --shape-sigma 0.001 --shard 4/3", "shard must be i/k"},
      {"--density 2000", "nothing to vary"},
      {"--density 2000 --core-radius 0.5 --core-contrast 500 --core-center 0.8,0,0", "not inside the body"},
      {"--density 2000 --core-radius 0.3", "--core-contrast"},
  };
  for (const auto& c : cases) {
    CAPTURE(c.arguments);
    const CommandResult result = run_cli("uncertainty " + mesh + " --unit km --degree 2 --samples 4 " +
                                         c.arguments + " -o " + quoted(dir + "/x.txt"));
    CAPTURE(result.output);
    CHECK(result.exit_code == 2);
    CHECK_THAT(result.output, Contains(c.expected));
    CHECK(!file_exists(dir + "/x.txt"));
  }
}
