// Behaviour every polystokes command shares: --help with a worked example, the documented exit codes,
// -q/-v, "-" for standard output, refusing oversized requests up front, and never leaving a partial or
// half-replaced output file, whether a run fails or is interrupted by a signal.
// Exit statuses and signal semantics follow POSIX.1-2017 (The Open Group, 2018: wait(), sigaction(),
// rename()); the exit-code scheme 0/1/2/3 is the project's own, documented in README.md.
#include <fcntl.h>
#include <signal.h>
#include <sys/wait.h>
#include <unistd.h>

#include <catch2/catch.hpp>
#include <algorithm>
#include <chrono>
#include <filesystem>
#include <sstream>
#include <thread>
#include <vector>

#include "polystokes/io/coefficient_file.h"
#include "polystokes/io/mesh_io.h"
#include "polystokes/mesh/shapes.h"
#include "test_support.h"

using namespace polystokes;
using namespace polystokes::test;

namespace {

std::string quoted(const std::string& text) { return "'" + text + "'"; }

struct SplitResult {
  int exit_code = -1;
  std::string out;  ///< standard output
  std::string err;  ///< standard error
  double seconds = 0;
};

/// Runs the CLI through the shell with stdout and stderr kept apart; `prefix` runs first in the same shell
/// (e.g. "ulimit -v N;").
SplitResult run_split(const std::string& arguments, const std::string& prefix = "") {
  const std::string dir = temp_directory();
  const std::string out = dir + "/stdout", err = dir + "/stderr";
  const std::string command = prefix + " exec " + quoted(POLYSTOKES_CLI) + " " + arguments + " >" + quoted(out) +
                              " 2>" + quoted(err);
  const auto start = std::chrono::steady_clock::now();
  const int status = std::system(("sh -c " + quoted(command)).c_str());
  SplitResult result;
  result.seconds = std::chrono::duration<double>(std::chrono::steady_clock::now() - start).count();
  result.exit_code = WIFEXITED(status) ? WEXITSTATUS(status) : -1;
  result.out = read_bytes(out);
  result.err = read_bytes(err);
  return result;
}

std::vector<std::string> lines_of(const std::string& text) {
  std::vector<std::string> lines;
  std::istringstream in(text);
  for (std::string line; std::getline(in, line);) lines.push_back(line);
  return lines;
}


/// Files in `dir` other than `keep`: leftover temporaries would show up here.
std::vector<std::string> other_files(const std::string& dir, const std::vector<std::string>& keep) {
  std::vector<std::string> found;
  for (const auto& entry : std::filesystem::directory_iterator(dir)) {
    const std::string name = entry.path().filename().string();
    if (std::find(keep.begin(), keep.end(), name) == keep.end()) found.push_back(name);
  }
  return found;
}

const std::string old_content = "previous content that a failed run must leave alone\n";

/// A running CLI process with its stderr on a pipe, for sending signals at known points of a run.
class Child {
 public:
  explicit Child(const std::vector<std::string>& arguments) {
    int fds[2];
    REQUIRE(::pipe(fds) == 0);
    pid_ = ::fork();
    REQUIRE(pid_ >= 0);
    if (pid_ == 0) {
      ::dup2(fds[1], STDERR_FILENO);
      const int null = ::open("/dev/null", O_WRONLY);
      ::dup2(null, STDOUT_FILENO);
      ::close(fds[0]);
      std::vector<char*> argv;
      std::string program = POLYSTOKES_CLI;
      argv.push_back(program.data());
      std::vector<std::string> copies = arguments;
      for (auto& a : copies) argv.push_back(a.data());
      argv.push_back(nullptr);
      ::execv(program.c_str(), argv.data());
      ::_exit(127);
    }
    ::close(fds[1]);
    stderr_ = ::fdopen(fds[0], "r");
  }
  ~Child() {
    if (stderr_) std::fclose(stderr_);
    if (pid_ > 0 && !reaped_) {
      ::kill(pid_, SIGKILL);
      ::waitpid(pid_, nullptr, 0);
    }
  }
  /// Reads stderr until a line containing `text`; false at end of stream.
  bool wait_for_line(const std::string& text) {
    char buffer[4096];
    while (std::fgets(buffer, sizeof buffer, stderr_)) {
      seen_ += buffer;
      if (std::string(buffer).find(text) != std::string::npos) return true;
    }
    return false;
  }
  void signal(int number) { ::kill(pid_, number); }
  /// Waits for the end of the process and returns its wait() status.
  int wait() {
    char buffer[4096];
    while (std::fgets(buffer, sizeof buffer, stderr_)) seen_ += buffer;
    int status = 0;
    ::waitpid(pid_, &status, 0);
    reaped_ = true;
    return status;
  }
  const std::string& seen() const { return seen_; }

 private:
  pid_t pid_ = -1;
  std::FILE* stderr_ = nullptr;
  bool reaped_ = false;
  std::string seen_;
};

// Address-space limits (ulimit -v) cannot be combined with AddressSanitizer, which reserves terabytes of
// shadow memory at start-up; those checks run in the normal build only.
#if defined(__SANITIZE_ADDRESS__)
constexpr bool address_limits_usable = false;
#else
constexpr bool address_limits_usable = true;
#endif

}  // namespace

TEST_CASE("every command has --help with a worked example and the top-level help documents the exit codes",
          "[cli_behaviour]") {
  // Common practice for command-line tools: --help prints usage on stdout and exits 0.
  const SplitResult top = run_split("--help");
  CAPTURE(top.out);
  REQUIRE(top.exit_code == 0);
  for (const char* code : {"0 ok", "1 usage error", "2 bad input", "3 internal"})
    CHECK(top.out.find(code) != std::string::npos);
  CHECK(top.out.find("Caution") != std::string::npos);

  const std::vector<std::string> names = subcommand_names();
  CAPTURE(names);
  // The commands of the core issue are there; any added later are checked as well.
  for (const char* expected : {"inspect", "compute"})
    CHECK(std::find(names.begin(), names.end(), expected) != names.end());
  for (const std::string& name : names) {
    const SplitResult help = run_split(name + " --help");
    CAPTURE(name, help.out, help.err);
    CHECK(help.exit_code == 0);
    // "Example:" or "Examples:", then at least one command line of this command.
    const size_t example = help.out.find("Example");
    REQUIRE(example != std::string::npos);
    CHECK(help.out.find("polystokes " + name + " ", example) != std::string::npos);
    CHECK(help.out.find("Usage:") != std::string::npos);
  }
}

TEST_CASE("every worked example in --help names files that exist in the source tree", "[cli_behaviour]") {
  // An example a newcomer cannot run as printed is worse than none: each shapes-demo/ path it mentions exists.
  for (const std::string& name : subcommand_names()) {
    const std::string help = run_split(name + " --help").out;
    for (size_t at = help.find("shapes-demo/"); at != std::string::npos; at = help.find("shapes-demo/", at + 1)) {
      const std::string path = help.substr(at, help.find_first_of(" \n", at) - at);
      CAPTURE(name, path);
      CHECK(file_exists(source_path(path)));
    }
  }
}

TEST_CASE("usage errors exit 1, bad input exits 2 with a one-line message naming the file", "[cli_behaviour]") {
  const std::string dir = temp_directory();
  const std::string cube = quoted(source_path("shapes-demo/unit_cube.obj"));
  SECTION("no command, an unknown option or a missing required option is a usage error") {
    CHECK(run_split("").exit_code == 1);
    CHECK(run_split("compute " + cube + " --density 1000 --no-such-option -o " + quoted(dir + "/a.txt")).exit_code == 1);
    CHECK(run_split("compute " + cube + " --density 1000").exit_code == 1);
    CHECK(run_split("compute " + cube + " --density 1000 --degree seven -o " + quoted(dir + "/a.txt")).exit_code == 1);
    // A mistyped option leaves its value as a stray positional: still a usage error, not a missing file.
    const SplitResult typo = run_split("compute " + cube + " --density 1000 --degre 16 -o " + quoted(dir + "/a.txt"));
    CAPTURE(typo.err);
    CHECK(typo.exit_code == 1);
    CHECK(typo.err.find("--degre") != std::string::npos);
    CHECK(!file_exists(dir + "/a.txt"));
  }
  SECTION("a missing input file is bad input, for every command that reads a mesh") {
    for (const std::string& command : {std::string("inspect"), std::string("compute --density 1000 -o ") +
                                                                      quoted(dir + "/a.txt")}) {
      const SplitResult result = run_split(command + " " + quoted(dir + "/missing.obj"));
      CAPTURE(command, result.err);
      CHECK(result.exit_code == 2);
      CHECK(result.err.find("missing.obj") != std::string::npos);
      CHECK(lines_of(result.err).size() == 1);
    }
    CHECK(!file_exists(dir + "/a.txt"));
  }
  SECTION("an open mesh is bad input") {
    const SplitResult result = run_split("inspect " + quoted(source_path("tests/data/open_box.obj")));
    CHECK(result.exit_code == 2);
    CHECK(result.err.find("open_box.obj") != std::string::npos);
    CHECK(result.err.find("closed") != std::string::npos);
  }
  SECTION("an output directory that does not exist is refused before any work") {
    const SplitResult result = run_split("compute " + cube + " --density 1000 -o " + quoted(dir + "/no/such/dir/a.txt"));
    CHECK(result.exit_code == 2);
    CHECK(result.err.find("does not exist") != std::string::npos);
  }
}

TEST_CASE("quiet (-q) prints nothing on success, verbose (-v) adds detail on stderr", "[cli_behaviour]") {
  const std::string dir = temp_directory();
  const std::string cube = quoted(source_path("shapes-demo/unit_cube.obj"));
  // In km the demo cube is a plausible small body, and its 12 facets resolve degree 1 (pi R_eq / mean edge),
  // so degree 2 has no warning to print.
  const SplitResult quiet =
      run_split("-q compute " + cube + " --unit km --density 1000 --degree 2 -o " + quoted(dir + "/q.txt"));
  CHECK(quiet.exit_code == 0);
  CHECK(quiet.out.empty());
  CHECK(quiet.err.empty());
  CHECK(file_exists(dir + "/q.txt"));
  // A warning is never silenced: in metres the cube is smaller than any small body (docs/units.md).
  const SplitResult warned = run_split("-q compute " + cube + " --density 1000 --degree 4 -o " + quoted(dir + "/w.txt"));
  CHECK(warned.exit_code == 0);
  CHECK(warned.out.empty());
  CHECK(warned.err.find("polystokes: warning: the body reaches") != std::string::npos);

  // -q after the command name works too; inspect -q answers through its exit code alone.
  const SplitResult good = run_split("inspect " + cube + " -q");
  CHECK(good.exit_code == 0);
  CHECK(good.out.empty());
  const SplitResult bad = run_split("inspect " + quoted(source_path("tests/data/open_box.obj")) + " -q");
  CHECK(bad.exit_code == 2);
  CHECK(bad.out.empty());
  CHECK(lines_of(bad.err).size() == 1);

  const SplitResult verbose = run_split("compute " + cube + " --density 1000 --degree 4 -v -o " + quoted(dir + "/v.txt"));
  CAPTURE(verbose.err);
  CHECK(verbose.exit_code == 0);
  CHECK(verbose.err.find("GB of memory") != std::string::npos);
  CHECK(verbose.err.find("coefficients computed in") != std::string::npos);
  const SplitResult normal = run_split("compute " + cube + " --density 1000 --degree 4 -o " + quoted(dir + "/n.txt"));
  CHECK(normal.err.find("coefficients computed in") == std::string::npos);
}

TEST_CASE("compute prints an aligned summary table with the quantities a user checks first", "[cli_behaviour]") {
  const std::string dir = temp_directory();
  const SplitResult result = run_split("compute " + quoted(source_path("shapes-demo/unit_cube.obj")) +
                                       " --density 1000 --degree 4 -o " + quoted(dir + "/s.txt"));
  REQUIRE(result.exit_code == 0);
  CAPTURE(result.out);
  const std::vector<std::string> lines = lines_of(result.out);
  size_t value_column = std::string::npos;
  for (const char* label : {"volume", "mass", "GM", "centre of mass", "Brillouin radius", "degree", "reference radius",
                            "normalization", "time"}) {
    const auto line = std::find_if(lines.begin(), lines.end(),
                                   [&](const std::string& l) { return l.rfind("  " + std::string(label) + " ", 0) == 0; });
    CAPTURE(label);
    REQUIRE(line != lines.end());
    // Every value starts in the same column.
    const size_t column = line->find_first_not_of(' ', 2 + std::string(label).size());
    if (value_column == std::string::npos) value_column = column;
    CHECK(column == value_column);
  }
  // The unit cube of density 1000 kg/m^3: volume 1 m^3, mass 1000 kg (elementary).
  CHECK(result.out.find("  volume ") != std::string::npos);
  CHECK(result.out.find(" 1 m^3") != std::string::npos);
  CHECK(result.out.find(" 1000 kg") != std::string::npos);
  CHECK(result.out.find("CAUTION") != std::string::npos);
}

TEST_CASE("output \"-\" writes the set to standard output and the summary to standard error", "[cli_behaviour]") {
  const SplitResult result =
      run_split("compute " + quoted(source_path("shapes-demo/unit_cube.obj")) + " --density 1000 --degree 4 -o -");
  REQUIRE(result.exit_code == 0);
  const CoefficientSet set = parse_coefficient_text(result.out, "stdout");
  CHECK(set.degree == 4);
  CHECK(result.err.find("reference radius") != std::string::npos);
  CHECK(result.out.find("reference radius  ") == std::string::npos);
}

TEST_CASE("requests that would exceed memory fail fast with exit code 2 and a clear message", "[cli_behaviour]") {
  const std::string dir = temp_directory();
  const std::string out = dir + "/big.txt";
  SECTION("degree 10000") {
    const SplitResult result = run_split("compute " + quoted(source_path("shapes-demo/unit_cube.obj")) +
                                         " --density 1000 --degree 10000 -o " + quoted(out));
    CAPTURE(result.err);
    CHECK(result.exit_code == 2);
    CHECK(result.err.find("degree 10000") != std::string::npos);
    CHECK(result.err.find("GB") != std::string::npos);
    CHECK(result.seconds < 10);
    CHECK(!file_exists(out));
  }
  SECTION("an OFF header claiming 10^9 faces in a small file") {
    const std::string mesh = dir + "/liar.off";
    write_text(mesh, "OFF\n4 1000000000 0\n0 0 0\n1 0 0\n0 1 0\n0 0 1\n3 0 2 1\n3 0 1 3\n3 0 3 2\n3 1 2 3\n");
    for (const std::string& command : {std::string("inspect "), "compute --density 1000 -o " + quoted(out) + " "}) {
      const SplitResult result = run_split(command + quoted(mesh));
      CAPTURE(command, result.err);
      CHECK(result.exit_code == 2);
      CHECK(result.err.find("liar.off") != std::string::npos);
      CHECK(result.err.find("1000000000 faces") != std::string::npos);
      CHECK(result.seconds < 10);
    }
    CHECK(!file_exists(out));
  }
  SECTION("a degree or mesh beyond an address-space limit (ulimit -v)") {
    if (!address_limits_usable) {
      WARN("skipped under AddressSanitizer");
      return;
    }
    // Degree 3000 on one thread needs about 1.6 GB by the estimate, more than a 1 GB limit allows.
    const SplitResult degree = run_split("compute " + quoted(source_path("shapes-demo/unit_cube.obj")) +
                                             " --density 1000 --degree 3000 --threads 1 -o " + quoted(out),
                                         "ulimit -v 1000000;");
    CAPTURE(degree.err);
    CHECK(degree.exit_code == 2);
    CHECK(degree.err.find("would need about") != std::string::npos);
    CHECK(degree.err.find("refusing before starting") != std::string::npos);
    CHECK(!file_exists(out));

    // An 81920-face sphere (about 4 MB as OBJ, some 40 MB to read and check) under a 40 MB limit.
    const std::string mesh = dir + "/sphere6.obj";
    write_obj(make_icosphere(6), mesh, LengthUnit::meter);
    REQUIRE(read_mesh(mesh).faces.rows() == 81920);
    const SplitResult read = run_split("inspect " + quoted(mesh), "ulimit -v 40000;");
    CAPTURE(read.err);
    CHECK(read.exit_code == 2);
    CHECK(read.err.find("81920 faces would need about") != std::string::npos);
  }
}

TEST_CASE("a failed run leaves the previous output file intact and no temporary file", "[cli_behaviour]") {
  const std::string dir = temp_directory();
  const std::string out = dir + "/set.txt", json = dir + "/set.json";
  write_text(out, old_content);
  write_text(json, old_content);
  SECTION("bad mesh") {
    const SplitResult result = run_split("compute " + quoted(source_path("tests/data/open_box.obj")) +
                                         " --density 1000 -o " + quoted(out) + " --json " + quoted(json));
    CHECK(result.exit_code == 2);
  }
  SECTION("JSON output in a directory that does not exist: neither file is touched") {
    const SplitResult result = run_split("compute " + quoted(source_path("shapes-demo/unit_cube.obj")) +
                                         " --density 1000 -o " + quoted(out) + " --json " +
                                         quoted(dir + "/missing/set.json"));
    CHECK(result.exit_code == 2);
  }
  SECTION("degree refused") {
    const SplitResult result = run_split("compute " + quoted(source_path("shapes-demo/unit_cube.obj")) +
                                         " --density 1000 --degree 30000 -o " + quoted(out));
    CHECK(result.exit_code == 2);
  }
  CHECK(read_bytes(out) == old_content);
  CHECK(read_bytes(json) == old_content);
  CHECK(other_files(dir, {"set.txt", "set.json"}).empty());
}

TEST_CASE("an interrupt during compute leaves the previous file; one during writing lets the file complete",
          "[cli_behaviour]") {
  // POSIX rename() replaces the target in one step; the CLI defers SIGINT/SIGTERM while writing so that the
  // temporary file is either renamed or removed before the default action (termination) happens.
  const std::string dir = temp_directory();
  const std::string out = dir + "/set.txt";
  write_text(out, old_content);
  SECTION("SIGINT while the coefficients are being computed") {
    // Degree 300 of the 20480-face Varnek takes seconds; the signal is sent once the meshes are checked.
    Child child({"compute", source_path("shapes-demo/varnek.obj"), "--unit", "km", "--density", "1900", "--degree",
                 "300", "--threads", "1", "-v", "-o", out});
    REQUIRE(child.wait_for_line("meshes read and checked"));
    child.signal(SIGINT);
    const int status = child.wait();
    CAPTURE(child.seen());
    REQUIRE(WIFSIGNALED(status));
    CHECK(WTERMSIG(status) == SIGINT);
    CHECK(read_bytes(out) == old_content);
  }
  SECTION("SIGTERM while the file is being written") {
    // Writing a degree-1000 set (about 29 MB of text, flushed to disk) takes far longer than the signal.
    Child child({"compute", source_path("shapes-demo/unit_cube.obj"), "--density", "1000", "--degree", "1000", "-v",
                 "-o", out});
    REQUIRE(child.wait_for_line("writing "));
    child.signal(SIGTERM);
    const int status = child.wait();
    CAPTURE(child.seen());
    REQUIRE(WIFSIGNALED(status));
    CHECK(WTERMSIG(status) == SIGTERM);
    // The signal took effect after the write: the file is the complete new set, not the old one.
    const CoefficientSet set = read_coefficient_file(out);
    CHECK(set.degree == 1000);
  }
  CHECK(other_files(dir, {"set.txt"}).empty());
}
