// `polystokes export` end to end: the header's own read-back command, pasted into convert, gives back the set
// bit for bit with its origin and axes; bad options are one-line errors with no output.
#include <fmt/format.h>

#include <catch2/catch.hpp>
#include <tuple>

#include "polystokes/io/coefficient_file.h"
#include "test_support.h"

using namespace polystokes;
using namespace polystokes::test;

namespace {

std::string arg(const std::string& path) { return "'" + path + "'"; }

// The header line "# read back with: polystokes convert TABLE -o SET ..." as a command for run_cli.
std::string read_back_command(const std::string& table_text, const std::string& table,
                              const std::string& set) {
  const std::string prefix = "# read back with: polystokes ";
  const size_t at = table_text.find(prefix);
  REQUIRE(at != std::string::npos);
  std::string command = table_text.substr(at + prefix.size(), table_text.find('\n', at) - at - prefix.size());
  command.replace(command.find("TABLE"), 5, arg(table));
  command.replace(command.find(" SET"), 4, " " + arg(set));
  return command;
}

struct Exported {
  std::string dir = temp_directory();
  std::string set = dir + "/cube.txt";
  Exported() {
    const CommandResult run =
        run_cli("compute " + arg(source_path("shapes-demo/unit_cube.obj")) +
                " --density 1000 --degree 6 --origin 0.1,0.2,-0.3 --frame-name 'Cube fixed' -o " + arg(set));
    INFO(run.output);
    REQUIRE(run.exit_code == 0);
  }
};

}  // namespace

TEST_CASE(
    "export then the header's read-back command gives the set bit for bit, with origin, axes and frame name",
    "[export_cli]") {
  const Exported in;
  const std::string table = in.dir + "/cube.tab";
  const CommandResult exported =
      run_cli("export " + arg(in.set) + " -o " + arg(table) +
              " --columns n,m,C,S,sigma_C,sigma_S --normalization fully --no-condon-shortley --ref-radius " +
              "0.8660254037844386 --gm 6.6743e-8 --separator comma");
  INFO(exported.output);
  REQUIRE(exported.exit_code == 0);
  CHECK(exported.output.find("CAUTION") != std::string::npos);
  const CoefficientSet set = read_coefficient_file(in.set);
  const std::string text = read_bytes(table);
  CHECK(text.find("# GM = ") != std::string::npos);
  CHECK(text.find("# frame metadata: name 'Cube fixed'") != std::string::npos);
  const std::string back = in.dir + "/back.txt";
  const std::string command = read_back_command(text, table, back);
  const CommandResult imported = run_cli(command);
  CAPTURE(command, imported.output);
  REQUIRE(imported.exit_code == 0);
  const CoefficientSet read = read_coefficient_file(back);
  // GM and radius as declared on export, so the numbers were rescaled by convert's own rules; exported
  // again with the set's own GM and radius the table must be the set's numbers.
  const CommandResult own =
      run_cli("export " + arg(in.set) + " -o " + arg(in.dir + "/own.tab") +
              fmt::format(" --columns n,m,C,S,sigma_C,sigma_S --normalization fully --no-condon-shortley "
                          "--ref-radius {:.17g}m --gm {:.17g}",
                          set.reference_radius, set.gm));
  INFO(own.output);
  REQUIRE(own.exit_code == 0);
  const std::string own_back = in.dir + "/own_back.txt";
  REQUIRE(
      run_cli(read_back_command(read_bytes(in.dir + "/own.tab"), in.dir + "/own.tab", own_back)).exit_code ==
      0);
  const CoefficientSet own_read = read_coefficient_file(own_back);
  require_sets_identical(own_read, set);
  CHECK(own_read.origin_in_mesh == set.origin_in_mesh);
  CHECK(own_read.origin_known);
  CHECK(own_read.frame == FrameKind::mesh);
  CHECK(own_read.axes_in_mesh == set.axes_in_mesh);
  CHECK(own_read.frame_metadata.name == std::optional<std::string>("Cube fixed"));
  CHECK(read.gm == 6.6743e-8);
  CHECK(read.frame_metadata.name == std::optional<std::string>("Cube fixed"));
}

TEST_CASE("export: bad options are one-line errors, exit 1 (usage) or 2 (bad input), and write nothing",
          "[export_cli]") {
  const Exported in;
  const std::string table = in.dir + "/bad.tab";
  const std::string declared =
      " --normalization fully --no-condon-shortley --ref-radius 1 --gm 1 -o " + arg(table);
  const std::vector<std::tuple<std::string, int, std::string>> cases = {
      {"--columns n,m,X" + declared, 2, "unknown column 'X'"},
      {"--columns n,m,skip,C" + declared, 2, "an exported table has no skip column"},
      {"--columns n,m,C --max-degree 7" + declared, 2, "--max-degree 7: the set has degree 6"},
      {"--columns n,m,C -o " + arg(table), 2,
       "--normalization, --condon-shortley or --no-condon-shortley, --ref-radius, "
       "--gm are required"},
      {"--columns n,m,C --digits 18" + declared, 1, "--digits"},
      {"--columns n,m,C --separator tab" + declared, 1, "--separator"},
  };
  for (const auto& [options, code, message] : cases) {
    const CommandResult result = run_cli("export " + arg(in.set) + " " + options);
    CAPTURE(options, result.output);
    CHECK(result.exit_code == code);
    CHECK(result.output.find(message) != std::string::npos);
    if (code == 2) CHECK(std::count(result.output.begin(), result.output.end(), '\n') == 1);
    CHECK_FALSE(file_exists(table));
  }
}
