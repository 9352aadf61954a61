// Frame metadata (issue 12) end to end: given to compute, uncertainty and convert, echoed, kept by every
// command that passes a set on, dropped in part by a rotation with a history line, refused when out of range.
#include <algorithm>
#include <catch2/catch.hpp>
#include <nlohmann/json.hpp>

#include "polystokes/io/coefficient_file.h"
#include "test_support.h"

using namespace polystokes;
using namespace polystokes::test;

namespace {

std::string arg(const std::string& path) { return "'" + path + "'"; }

// The options of a frame with every field; the angles in the IAU report's style for a small body (made-up
// values, degrees).
const std::string kFrameOptions =
    " --frame-name 'Cube fixed' --frame-definition 'z along the spin axis' --frame-pole 11.35,17.22"
    " --frame-meridian 326.07 --frame-epoch 2000-01-01T12:00:00Z";

void require_full_frame(const CoefficientSet& set) {
  CHECK(set.frame_metadata.name == std::optional<std::string>("Cube fixed"));
  CHECK(set.frame_metadata.definition == std::optional<std::string>("z along the spin axis"));
  CHECK(set.frame_metadata.pole_ra == 11.35);
  CHECK(set.frame_metadata.pole_dec == 17.22);
  CHECK(set.frame_metadata.meridian == 326.07);
  CHECK(set.frame_metadata.epoch == std::optional<std::string>("2000-01-01T12:00:00Z"));
}

struct Computed {
  std::string dir = temp_directory();
  std::string cube = source_path("shapes-demo/unit_cube.obj");
  std::string set = dir + "/cube.txt";
  Computed() {
    const CommandResult run = run_cli("compute " + arg(cube) + " --density 1000 --degree 4" + kFrameOptions +
                                      " -o " + arg(set) + " --json " + arg(dir + "/cube.json"));
    INFO(run.output);
    REQUIRE(run.exit_code == 0);
    CHECK(run.output.find("frame metadata") != std::string::npos);  // echoed as interpreted
    CHECK(run.output.find("pole RA 11.35 deg Dec 17.22 deg") != std::string::npos);
  }
};

}  // namespace

TEST_CASE("compute records frame metadata in text and JSON; convert, compare, report and validate keep it",
          "[frame_metadata_cli]") {
  const Computed in;
  require_full_frame(read_coefficient_file(in.set));
  require_full_frame(read_coefficient_file(in.dir + "/cube.json"));

  const CommandResult converted =
      run_cli("convert " + arg(in.set) + " --to-normalization schmidt --to-ref-radius 2 -o " +
              arg(in.dir + "/s.json"));
  INFO(converted.output);
  REQUIRE(converted.exit_code == 0);
  CHECK(converted.output.find("frame metadata     name 'Cube fixed'") != std::string::npos);
  require_full_frame(read_coefficient_file(in.dir + "/s.json"));

  const CommandResult compared = run_cli("compare " + arg(in.set) + " " + arg(in.dir + "/s.json") +
                                         " --json " + arg(in.dir + "/c.json"));
  INFO(compared.output);
  CHECK(compared.output.find("frame name 'Cube fixed'") != std::string::npos);
  const auto comparison = nlohmann::json::parse(read_bytes(in.dir + "/c.json"));
  CHECK(comparison["frame_a"].get<std::string>().find("prime meridian 326.07 deg") != std::string::npos);
  CHECK(comparison["frame_b"] == comparison["frame_a"]);

  const CommandResult report = run_cli("report " + arg(in.set) + " -o " + arg(in.dir + "/r.html"));
  INFO(report.output);
  REQUIRE(report.exit_code == 0);
  CHECK(read_bytes(in.dir + "/r.html").find("frame metadata") != std::string::npos);

  const CommandResult validated = run_cli("validate " + arg(in.cube) + " " + arg(in.set) + " --samples 20");
  INFO(validated.output);
  REQUIRE(validated.exit_code == 0);
  CHECK(validated.output.find("the set's frame metadata: name 'Cube fixed'") != std::string::npos);
}

TEST_CASE("a rotation by convert drops the pole and meridian with a history line; new metadata can follow",
          "[frame_metadata_cli]") {
  const Computed in;
  const CommandResult rotated =
      run_cli("convert " + arg(in.set) + " --rotate-euler 30,0,0 -o " + arg(in.dir + "/rot.txt"));
  INFO(rotated.output);
  REQUIRE(rotated.exit_code == 0);
  CHECK(rotated.output.find("dropped, as it described the axes before the rotation") != std::string::npos);
  const CoefficientSet set = read_coefficient_file(in.dir + "/rot.txt");
  CHECK(set.frame_metadata.name == std::optional<std::string>("Cube fixed"));
  CHECK_FALSE(set.frame_metadata.pole_ra);
  CHECK_FALSE(set.frame_metadata.meridian);
  CHECK_FALSE(set.frame_metadata.epoch);
  // Given with the rotation, metadata describes the axes the set ends in.
  const CommandResult renamed =
      run_cli("convert " + arg(in.set) + " --rotate-euler 30,0,0 --frame-name Rotated --frame-pole 1,2 -o " +
              arg(in.dir + "/rot2.txt"));
  INFO(renamed.output);
  REQUIRE(renamed.exit_code == 0);
  const CoefficientSet set2 = read_coefficient_file(in.dir + "/rot2.txt");
  CHECK(set2.frame_metadata.name == std::optional<std::string>("Rotated"));
  CHECK(set2.frame_metadata.pole_ra == 1.0);
  CHECK(set2.frame_metadata.pole_dec == 2.0);
}

TEST_CASE("uncertainty keeps frame metadata through shards and their merge", "[frame_metadata_cli]") {
  const std::string dir = temp_directory();
  const std::string cube = arg(source_path("shapes-demo/unit_cube.obj"));
  const std::string common =
      " --density 1000 --degree 2 --samples 4 --shape-sigma 0.01 --seed 7" + kFrameOptions;
  for (const char* shard : {"1/2", "2/2"}) {
    const CommandResult run = run_cli("uncertainty " + cube + common + " --shard " + shard + " -o " +
                                      arg(dir + "/part" + std::string(1, shard[0]) + ".shard"));
    INFO(run.output);
    REQUIRE(run.exit_code == 0);
  }
  const CommandResult merged = run_cli("uncertainty-merge " + arg(dir + "/part1.shard") + " " +
                                       arg(dir + "/part2.shard") + " -o " + arg(dir + "/merged.json"));
  INFO(merged.output);
  REQUIRE(merged.exit_code == 0);
  require_full_frame(read_coefficient_file(dir + "/merged.json"));
}

TEST_CASE("frame metadata out of range or a bad epoch: one-line error, exit 2, no output",
          "[frame_metadata_cli]") {
  // Ranges: right ascension [0, 360), declination [-90, 90] (equatorial coordinates, common practice).
  const std::string dir = temp_directory();
  const std::string cube = arg(source_path("shapes-demo/unit_cube.obj"));
  const Computed in;
  const std::vector<std::pair<std::string, std::string>> cases = {
      {"compute " + cube + " --density 1000 --degree 2 --frame-pole 360,0",
       "right ascension 360 deg is outside [0, 360)"},
      {"compute " + cube + " --density 1000 --degree 2 --frame-pole 10,-90.5",
       "declination -90.5 deg is outside [-90, 90]"},
      {"compute " + cube + " --density 1000 --degree 2 --frame-meridian 5 --frame-epoch 2024-13-01T00:00:00Z",
       "frame epoch: '2024-13-01T00:00:00Z' is not an ISO 8601 UTC time"},
      {"compute " + cube + " --density 1000 --degree 2 --frame-meridian 5", "needs the epoch"},
      {"uncertainty " + cube + " --density 1000 --degree 2 --samples 2 --shape-sigma 0.01 --frame-pole 400,0",
       "outside [0, 360)"},
      {"convert " + arg(in.set) + " --frame-epoch 2000-01-01T25:00:00Z", "not an ISO 8601 UTC time"},
  };
  for (const auto& [command, message] : cases) {
    const std::string out = dir + "/out.txt";
    const CommandResult result = run_cli(command + " -o " + arg(out));
    CAPTURE(command, result.output);
    CHECK(result.exit_code == 2);
    CHECK(result.output.find(message) != std::string::npos);
    CHECK(std::count(result.output.begin(), result.output.end(), '\n') == 1);
    CHECK_FALSE(file_exists(out));
  }
  // A pole angle that is no number is a usage error (exit 1), caught while the options are parsed.
  CHECK(run_cli("compute " + cube + " --density 1000 --frame-pole ten,20 -o " + arg(dir + "/u.txt"))
            .exit_code == 1);
}
