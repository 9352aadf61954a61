// --format through the CLI: the bare vertex-facet layout is read when named and refused by extension alone,
// every command that reads a mesh accepts the option, and the chosen format is echoed.
#include <fmt/format.h>

#include <catch2/catch.hpp>

#include "polystokes/io/coefficient_file.h"
#include "polystokes/io/mesh_io.h"
#include "polystokes/mesh/shapes.h"
#include "test_support.h"

using namespace polystokes;
using namespace polystokes::test;

namespace {

std::string shell_arg(const std::string& text) { return "'" + text + "'"; }

/// One body written as OBJ and in the vertex-facet layout (with index columns), both in shortest round-trip
/// digits, so both files hold the same doubles.
struct TwoLayouts {
  std::string dir = temp_directory();
  std::string obj = dir + "/body.obj";
  std::string tab = dir + "/body.tab";
  TwoLayouts() {
    const Mesh body = make_ellipsoid(2, 1400.0, 1000.0, 800.0);
    write_obj(body, obj, LengthUnit::meter);
    std::string text = fmt::format("{} {}\n", body.vertices.rows(), body.faces.rows());
    for (Eigen::Index v = 0; v < body.vertices.rows(); ++v)
      text +=
          fmt::format("{} {} {} {}\n", v + 1, body.vertices(v, 0), body.vertices(v, 1), body.vertices(v, 2));
    for (Eigen::Index f = 0; f < body.faces.rows(); ++f)
      text += fmt::format("{} {} {} {}\n", f + 1, body.faces(f, 0) + 1, body.faces(f, 1) + 1,
                          body.faces(f, 2) + 1);
    write_text(tab, text);
  }
};

}  // namespace

TEST_CASE("compute --format vertex-facet gives the coefficients of the same body read from OBJ",
          "[mesh_formats_cli]") {
  const TwoLayouts files;
  const std::string a = files.dir + "/a.txt", b = files.dir + "/b.txt";
  const CommandResult from_obj =
      run_cli("compute " + shell_arg(files.obj) + " --density 2000 --degree 6 -o " + shell_arg(a));
  INFO(from_obj.output);
  REQUIRE(from_obj.exit_code == 0);
  const CommandResult from_tab =
      run_cli("compute " + shell_arg(files.tab) + " --format vertex-facet --density 2000 --degree 6 -o " +
              shell_arg(b));
  INFO(from_tab.output);
  REQUIRE(from_tab.exit_code == 0);
  // Same doubles in, same numerics: identical coefficients (a bitwise invariance, common practice).
  const CoefficientSet sa = read_coefficient_file(a), sb = read_coefficient_file(b);
  CHECK(sa.C == sb.C);
  CHECK(sa.S == sb.S);
}

TEST_CASE("a mesh whose extension does not name its format is refused without --format (exit 2, one line)",
          "[mesh_formats_cli]") {
  const TwoLayouts files;
  const CommandResult refused = run_cli("inspect " + shell_arg(files.tab));
  CHECK(refused.exit_code == 2);
  CHECK(refused.output ==
        "polystokes: error: " + files.tab +
            ": unknown mesh format '.tab': give the format with --format (obj, off, ply, stl, "
            "vertex-facet)\n");
  const CommandResult unknown = run_cli("inspect " + shell_arg(files.tab) + " --format tab");
  CHECK(unknown.exit_code == 1);

  const CommandResult named = run_cli("inspect " + shell_arg(files.tab) + " --format vertex-facet");
  INFO(named.output);
  CHECK(named.exit_code == 0);
  CHECK(named.output.find("mesh " + files.tab + " (vertex-facet, ") != std::string::npos);
  const CommandResult by_extension = run_cli("inspect " + shell_arg(files.obj));
  CHECK(by_extension.output.find("mesh " + files.obj + " (obj, ") != std::string::npos);
}

TEST_CASE("every command that reads a mesh accepts --format", "[mesh_formats_cli]") {
  for (const char* command : {"inspect", "compute", "field", "validate", "uncertainty", "report"}) {
    CAPTURE(command);
    const CommandResult help = run_cli(std::string(command) + " --help");
    CHECK(help.exit_code == 0);
    CHECK(help.output.find("--format") != std::string::npos);
    CHECK(help.output.find("vertex-facet") != std::string::npos);
  }
}
