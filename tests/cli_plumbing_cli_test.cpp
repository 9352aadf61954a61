// What every command shares at its edges: a missing input file is refused the same way everywhere, an output's
// form follows one rule (its name), a set and its JSON copy are written both or neither, no option name
// means two things, `--version` answers, and option help states the ranges the checks enforce.
// Exit codes are the project's documented scheme (README.md: 1 usage, 2 bad input); the message for a missing
// file carries strerror(ENOENT), "No such file or directory" (POSIX.1-2017, <errno.h>, glibc wording).
#include <catch2/catch.hpp>
#include <algorithm>
#include <filesystem>
#include <fstream>
#include <set>
#include <sstream>
#include <vector>

#include "polystokes/io/coefficient_file.h"
#include "test_support.h"

using namespace polystokes;
using namespace polystokes::test;
using Catch::Matchers::Contains;

namespace {

std::string shell_arg(const std::string& text) { return "'" + text + "'"; }

const std::string old_content = "previous content that a failed run must leave alone\n";


std::vector<std::string> entries_of(const std::string& dir) {
  std::vector<std::string> names;
  for (const auto& entry : std::filesystem::directory_iterator(dir)) names.push_back(entry.path().filename().string());
  std::sort(names.begin(), names.end());
  return names;
}

/// The demo unit cube scaled to 2 x 1 x 1.5 m and moved off the origin, so that its centre of mass, its
/// mesh origin and its principal axes are all distinct (faces and their orientation as in the demo cube).
std::string write_offset_box(const std::string& dir) {
  std::ifstream cube(source_path("shapes-demo/unit_cube.obj"));
  std::ostringstream out;
  for (std::string line; std::getline(cube, line);) {
    if (line.rfind("v ", 0) == 0) {
      std::istringstream xyz(line.substr(2));
      double x, y, z;
      xyz >> x >> y >> z;
      out << "v " << 2 * x + 3 << " " << y + 1 << " " << 1.5 * z + 2 << "\n";
    } else {
      out << line << "\n";
    }
  }
  const std::string path = dir + "/box.obj";
  write_text(path, out.str());
  return path;
}

/// Inputs every command can read: the demo cube, a set of it, a points file and one shard of an
/// uncertainty run.
struct Inputs {
  std::string dir = temp_directory();
  std::string cube = source_path("shapes-demo/unit_cube.obj");
  std::string set = dir + "/cube.txt";
  std::string points = dir + "/points.csv";
  std::string shard = dir + "/cube.shard";
  Inputs() {
    const CommandResult made = run_cli("compute " + shell_arg(cube) + " --density 1000 --degree 2 -o " + shell_arg(set));
    REQUIRE(made.exit_code == 0);
    write_text(points, "x,y,z\n3,0,0\n");
    const CommandResult part = run_cli("uncertainty " + shell_arg(cube) +
                                       " --density 1000 --degree 2 --samples 2 --shape-sigma 0.01 --shard 1/1 -o " +
                                       shell_arg(shard));
    CAPTURE(part.output);
    REQUIRE(part.exit_code == 0);
  }
};

bool is_json_file(const std::string& path) {
  const std::string text = read_bytes(path);
  const size_t first = text.find_first_not_of(" \t\r\n");
  return first != std::string::npos && text[first] == '{';
}

}  // namespace

TEST_CASE("every command refuses a missing input file with exit code 2 and the same one-line message",
          "[cli_plumbing]") {
  const Inputs in;
  const std::string out = in.dir + "/out";
  // {command, arguments with @ where the missing file goes}: every file a command reads, one at a time.
  const std::vector<std::pair<std::string, std::string>> reads = {
      {"inspect", "@"},
      {"compute", "@ --density 1000 -o " + shell_arg(out + ".txt")},
      {"convert", "@ -o " + shell_arg(out + ".txt")},
      {"export", "@ -o " + shell_arg(out + ".tab") +
                     " --columns n,m,C,S --normalization fully --no-condon-shortley --ref-radius 1 --gm 1"},
      {"compare", "@ " + shell_arg(in.set)},
      {"compare", shell_arg(in.set) + " @"},
      {"report", "@ -o " + shell_arg(out + ".html")},
      {"report", shell_arg(in.set) + " --mesh @ -o " + shell_arg(out + ".html")},
      {"report", shell_arg(in.set) + " --compare @ -o " + shell_arg(out + ".html")},
      {"field", "@ --points " + shell_arg(in.points) + " -o " + shell_arg(out + ".csv")},
      {"field", "@.obj --density 1000 --points " + shell_arg(in.points) + " -o " + shell_arg(out + ".csv")},
      {"field", shell_arg(in.set) + " --points @ -o " + shell_arg(out + ".csv")},
      {"validate", "@ " + shell_arg(in.set)},
      {"validate", shell_arg(in.cube) + " @"},
      {"uncertainty", "@ --density 1000 --degree 2 -o " + shell_arg(out + ".txt")},
      {"uncertainty-merge", "@ -o " + shell_arg(out + ".txt")},
      {"uncertainty-merge", shell_arg(in.shard) + " @ -o " + shell_arg(out + ".txt")},
      {"surface", "@.obj --density 1000 --spin-period 4h -o " + shell_arg(out + ".csv")},
  };
  std::set<std::string> covered;
  for (const auto& [command, arguments] : reads) {
    covered.insert(command);
    // The missing file's name differs per case, so the message must name the one given.
    const std::string missing = in.dir + "/missing-" + std::to_string(covered.size()) + "-" + command;
    std::string line = arguments;
    const size_t at = line.find('@');
    std::string path = missing;
    if (line.compare(at, 5, "@.obj") == 0) {
      path += ".obj";
      line.replace(at, 5, shell_arg(path));
    } else {
      line.replace(at, 1, shell_arg(path));
    }
    const CommandResult result = run_cli(command + " " + line);
    CAPTURE(command, line, result.output);
    CHECK(result.exit_code == 2);
    CHECK(result.output == "polystokes: error: " + path + ": cannot read: No such file or directory\n");
  }
  // Every command reads a file; one added later must be added above.
  const std::vector<std::string> names = subcommand_names();
  CHECK(std::set<std::string>(names.begin(), names.end()) == covered);
  // Nothing was written by the refused runs.
  CHECK(entries_of(in.dir) == std::vector<std::string>{"cube.shard", "cube.txt", "points.csv"});
}

TEST_CASE("the -o file's name chooses its form in every command that writes a set; --json takes .json names only",
          "[cli_plumbing]") {
  const Inputs in;
  const std::string dir = in.dir;
  // {command and inputs}: every command that writes a coefficient set.
  const std::vector<std::pair<std::string, std::string>> writers = {
      {"compute", shell_arg(in.cube) + " --density 1000 --degree 2"},
      {"convert", shell_arg(in.set)},
      {"uncertainty", shell_arg(in.cube) + " --density 1000 --degree 2 --samples 2 --shape-sigma 0.01"},
      {"uncertainty-merge", shell_arg(in.shard)},
  };
  for (const auto& [command, inputs] : writers) {
    CAPTURE(command);
    const std::string stem = dir + "/" + command;
    SECTION(command + ": -o x.json writes JSON, -o x.txt the text format, --json a second copy in JSON") {
      const CommandResult json = run_cli(command + " " + inputs + " -o " + shell_arg(stem + ".JSON"));
      CAPTURE(json.output);
      REQUIRE(json.exit_code == 0);
      CHECK(is_json_file(stem + ".JSON"));
      const CommandResult both =
          run_cli(command + " " + inputs + " -o " + shell_arg(stem + ".txt") + " --json " + shell_arg(stem + "-copy.json"));
      CAPTURE(both.output);
      REQUIRE(both.exit_code == 0);
      CHECK(!is_json_file(stem + ".txt"));
      CHECK(is_json_file(stem + "-copy.json"));
      // The same set in both forms (the readers tell the forms apart by content).
      CHECK(read_coefficient_file(stem + ".txt").C == read_coefficient_file(stem + "-copy.json").C);
    }
    SECTION(command + ": --json with a name that is not .json is a usage error, and nothing is written") {
      const CommandResult result =
          run_cli(command + " " + inputs + " -o " + shell_arg(stem + ".txt") + " --json " + shell_arg(stem + "-copy.txt"));
      CAPTURE(result.output);
      CHECK(result.exit_code == 1);
      CHECK_THAT(result.output, Contains("--json") && Contains("does not end in .json"));
      CHECK(!file_exists(stem + ".txt"));
      CHECK(!file_exists(stem + "-copy.txt"));
    }
    SECTION(command + ": -o and --json naming one file is refused before any work") {
      const CommandResult result =
          run_cli(command + " " + inputs + " -o " + shell_arg(stem + ".json") + " --json " + shell_arg(dir + "/./" + command + ".json"));
      CAPTURE(result.output);
      CHECK(result.exit_code == 2);
      CHECK_THAT(result.output, Contains("name the same file"));
      CHECK(!file_exists(stem + ".json"));
    }
  }
  SECTION("a shard file is never written under a .json name") {
    const CommandResult result = run_cli("uncertainty " + shell_arg(in.cube) +
                                         " --density 1000 --degree 2 --samples 2 --shape-sigma 0.01 --shard 1/2 -o " +
                                         shell_arg(dir + "/part.json"));
    CAPTURE(result.output);
    CHECK(result.exit_code == 2);
    CHECK_THAT(result.output, Contains("part.json") && Contains("shard"));
    CHECK(!file_exists(dir + "/part.json"));
  }
}

TEST_CASE("a set and its JSON copy are written both or neither: a JSON copy that cannot be written leaves -o as it was",
          "[cli_plumbing]") {
  const Inputs in;
  const std::vector<std::pair<std::string, std::string>> writers = {
      {"compute", shell_arg(in.cube) + " --density 1000 --degree 2"},
      {"convert", shell_arg(in.set)},
      {"uncertainty", shell_arg(in.cube) + " --density 1000 --degree 2 --samples 2 --shape-sigma 0.01"},
      {"uncertainty-merge", shell_arg(in.shard)},
  };
  for (const auto& [command, inputs] : writers) {
    const std::string dir = temp_directory();
    const std::string out = dir + "/set.txt";
    write_text(out, old_content);
    SECTION(command + ": the JSON copy's directory does not exist") {
      const CommandResult result =
          run_cli(command + " " + inputs + " -o " + shell_arg(out) + " --json " + shell_arg(dir + "/missing/set.json"));
      CAPTURE(command, result.output);
      CHECK(result.exit_code == 2);
      CHECK_THAT(result.output, Contains(dir + "/missing/set.json"));
    }
    // Found only while writing, after the text form is complete: a body label that is not UTF-8 can be
    // written in the text format (escaped) but not in JSON (RFC 8259 section 8.1: JSON text is Unicode).
    if (command != "uncertainty-merge") {
      SECTION(command + ": the JSON copy cannot hold the set's body label") {
        const std::string json = dir + "/set.json";
        write_text(json, old_content);
        const CommandResult result = run_cli(command + " " + inputs + " --body \"$(printf 'b\\377dy')\" -o " +
                                             shell_arg(out) + " --json " + shell_arg(json));
        CAPTURE(command, result.output);
        CHECK(result.exit_code == 2);
        CHECK_THAT(result.output, Contains("UTF-8"));
        CHECK(read_bytes(json) == old_content);
      }
    }
    CHECK(read_bytes(out) == old_content);
    // No temporary file is left behind either.
    for (const std::string& name : entries_of(dir)) {
      CAPTURE(command, name);
      CHECK((name == "set.txt" || name == "set.json"));
    }
  }
}

TEST_CASE("polystokes --version prints the version every written set records, and exits 0", "[cli_plumbing]") {
  const CommandResult version = run_cli("--version");
  CHECK(version.exit_code == 0);
  CHECK(version.output == std::string("polystokes ") + POLYSTOKES_VERSION + "\n");
  const Inputs in;
  CHECK_THAT(read_coefficient_file(in.set).created, Catch::StartsWith(std::string("polystokes ") + POLYSTOKES_VERSION + " "));
}

TEST_CASE("report --map-radius: the help states the open lower bound 1 that the check enforces", "[cli_plumbing]") {
  const Inputs in;
  const std::string help = run_cli("report --help").output;
  CAPTURE(help);
  CHECK_THAT(help, Contains("(1, 1e6]") && Contains("greater than 1"));
  const std::string page = shell_arg(in.dir + "/page.html");
  // 1 is the Brillouin sphere itself, where the series need not converge: refused as a malformed argument.
  for (const char* refused : {"1", "0.5", "1e7"}) {
    const CommandResult result = run_cli("report " + shell_arg(in.set) + " --map-radius " + refused + " -o " + page);
    CAPTURE(refused, result.output);
    CHECK(result.exit_code == 1);
    CHECK_THAT(result.output, Contains("--map-radius"));
  }
  for (const char* accepted : {"1.001", "1e6"}) {
    const CommandResult result = run_cli("report " + shell_arg(in.set) + " --map-radius " + accepted + " -o " + page);
    CAPTURE(accepted, result.output);
    CHECK(result.exit_code == 0);
  }
}

TEST_CASE("compare aligns origins and axes with --align-frames; --frame belongs to compute alone", "[cli_plumbing]") {
  const std::string dir = temp_directory();
  const std::string box = shell_arg(write_offset_box(dir));
  const std::string a = shell_arg(dir + "/com.txt"), b = shell_arg(dir + "/mesh.txt");
  REQUIRE(run_cli("compute " + box + " --density 1000 --degree 6 --origin com --frame principal -o " + a).exit_code == 0);
  REQUIRE(run_cli("compute " + box + " --density 1000 --degree 6 --origin mesh -o " + b).exit_code == 0);
  // The same body about two origins and in two frames: one field once B is moved to A's origin and axes
  // (an exact translation and rotation of the exterior series, Hobson 1931, The Theory of Spherical and
  // Ellipsoidal Harmonics, ch. IX; see docs/conventions.md).
  const CommandResult aligned = run_cli("compare " + a + " " + b + " --align-frames");
  CAPTURE(aligned.output);
  CHECK(aligned.exit_code == 0);
  CHECK_THAT(aligned.output, Contains("AGREE"));
  const CommandResult plain = run_cli("compare " + a + " " + b);
  CAPTURE(plain.output);
  CHECK_THAT(plain.output, Contains("DIFFER"));
  // --frame picks axes in compute (mesh|principal); compare has no option of that name.
  const CommandResult old_switch = run_cli("compare " + a + " " + b + " --frame");
  CHECK(old_switch.exit_code == 1);
}
