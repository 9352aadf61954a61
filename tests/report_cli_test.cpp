// End-to-end checks of `polystokes report`: a set computed here and its mesh written as OBJ give one
// well-formed page with every section; bad inputs give a one-line error, exit code 2 and leave the
// previous output intact.
#include <fmt/format.h>

#include <catch2/catch.hpp>

#include "polystokes/io/coefficient_file.h"
#include "polystokes/core/constants.h"
#include "polystokes/harmonics/compute.h"
#include "polystokes/io/mesh_io.h"
#include "polystokes/mesh/shapes.h"
#include "render/svg_plot.h"
#include "test_support.h"
#include "xml_check.h"

using namespace polystokes;
using namespace polystokes::test;

namespace {

std::string quoted(const std::string& path) { return "'" + path + "'"; }

size_t count(const std::string& haystack, const std::string& needle) {
  size_t found = 0;
  for (size_t at = haystack.find(needle); at != std::string::npos;
       at = haystack.find(needle, at + needle.size()))
    ++found;
  return found;
}

// An invented body: a triaxial ellipsoid off the mesh origin, written in km, read back, and its set.
struct Files {
  std::string dir, mesh, set;
  CoefficientSet computed;
};
const Files& files() {
  static const Files made = [] {
    Files f;
    f.dir = temp_directory();
    f.mesh = f.dir + "/orrin.obj";
    f.set = f.dir + "/orrin.txt";
    const Mesh shape = transformed(make_ellipsoid(4, 2100, 1400, 1100), Eigen::Matrix3d::Identity(),
                                   Eigen::Vector3d(300, 120, -60));
    write_obj(shape, f.mesh, LengthUnit::kilometer);
    MeshReadOptions read;
    read.unit = LengthUnit::kilometer;
    ComputeOptions options;
    options.degree = 10;
    options.body = "Orrin";
    f.computed = compute_coefficients({DensityRegion{read_mesh(f.mesh, read), 1700.0}}, options);
    write_coefficient_file(f.computed, f.set);
    return f;
  }();
  return made;
}

}  // namespace

TEST_CASE(
    "report with --mesh writes one well-formed page with every section, the set's numbers and checksums",
    "[report_cli]") {
  const Files& f = files();
  const std::string out = f.dir + "/orrin.html";
  const CommandResult result =
      run_cli("report " + quoted(f.set) + " --mesh " + quoted(f.mesh) + " --unit km -o " + quoted(out));
  CAPTURE(result.output);
  REQUIRE(result.exit_code == 0);
  CHECK(result.output.find("written") != std::string::npos);
  const std::string html = read_bytes(out);
  CHECK(xml_problem(html) == "");
  CHECK(count(html, "<svg") == 5);
  for (const char* id : {"provenance", "mass", "spectrum", "coefficients", "shape", "field"})
    CHECK(html.find(fmt::format("<section id=\"{}\"", id)) != std::string::npos);
  CHECK(html.find(fmt::format("{}", f.computed.gm)) != std::string::npos);
  CHECK(html.find(fmt::format("{}", f.computed.reference_radius)) != std::string::npos);
  CHECK(html.find(fmt::format("{:.9e}", f.computed.C(2, 0))) != std::string::npos);
  CHECK(html.find(sha256_file_hex(f.set)) != std::string::npos);
  CHECK(html.find("matches region 1 of the set") != std::string::npos);
  CHECK(html.find("Orrin") != std::string::npos);
  const std::string caution = operational_caution();
  CHECK(count(html, svg::escape(caution.substr(caution.find(':') + 1))) >= 3);
  CHECK(count(html, "http") == count(html, "http://www.w3.org/2000/svg"));
}

TEST_CASE("report without a mesh omits the silhouettes, and - writes the page to stdout", "[report_cli]") {
  const Files& f = files();
  const CommandResult result = run_cli("report " + quoted(f.set) + " -q -o -");
  REQUIRE(result.exit_code == 0);
  CHECK(result.output.rfind("<!DOCTYPE html>", 0) == 0);
  CHECK(xml_problem(result.output) == "");
  CHECK(count(result.output, "<svg") == 2);
  CHECK(result.output.find("<section id=\"shape\"") == std::string::npos);
}

TEST_CASE("report --compare adds the per-degree differences and names the mismatch of a mangled copy",
          "[report_cli]") {
  // B: the same set with its zonal terms' sign flipped, as when J_n are read as C_n0.
  const Files& f = files();
  CoefficientSet flipped = f.computed;
  for (int n = 1; n <= flipped.degree; ++n) flipped.C(n, 0) = -flipped.C(n, 0);
  flipped.body = "Orrin (other team)";
  const std::string other = f.dir + "/orrin_other.txt";
  write_coefficient_file(flipped, other);
  const std::string out = f.dir + "/compared.html";
  const CommandResult result =
      run_cli("report " + quoted(f.set) + " --compare " + quoted(other) + " -q -o " + quoted(out));
  CAPTURE(result.output);
  REQUIRE(result.exit_code == 0);
  const std::string html = read_bytes(out);
  CHECK(xml_problem(html) == "");
  const size_t start = html.find("<section id=\"comparison\"");
  REQUIRE(start != std::string::npos);
  const std::string part = html.substr(start);
  CHECK(count(part, "<svg") == 1);
  CHECK(part.find("<tr class=\"best\"><td>j_sign</td>") != std::string::npos);
  CHECK(part.find("Orrin (other team)") != std::string::npos);
  CHECK(run_cli("report " + quoted(f.set) + " --compare " + quoted(f.dir + "/missing.txt") + " -o " +
                quoted(out))
            .exit_code == 2);
}

TEST_CASE("report refuses bad input with one error line and exit code 2, leaving the previous page intact",
          "[report_cli]") {
  const Files& f = files();
  const std::string out = f.dir + "/kept.html";
  write_text(out, "previous page");
  const std::string bad_set = f.dir + "/bad.txt";
  write_text(bad_set, "not a coefficient file\n");
  const std::string open_mesh = f.dir + "/open.obj";
  write_text(open_mesh,
             "v 0 0 0\nv 1 0 0\nv 0 1 0\nv 1 1 0\nv 0 0 1\nv 1 0 1\nv 0 1 1\nv 1 1 1\n"
             "f 1 3 2\nf 2 3 4\nf 1 2 5\nf 2 6 5\nf 3 7 4\nf 4 7 8\nf 1 5 3\nf 3 5 7\nf 2 4 6\nf 4 8 6\n");
  const struct {
    std::string arguments, expected;
  } cases[] = {
      {quoted(bad_set), bad_set},
      {quoted(f.set) + " --mesh " + quoted(open_mesh), "closed"},
  };
  for (const auto& c : cases) {
    const CommandResult result = run_cli("report " + c.arguments + " -o " + quoted(out));
    CAPTURE(c.arguments, result.output);
    CHECK(result.exit_code == 2);
    CHECK(result.output.find(c.expected) != std::string::npos);
    CHECK(result.output.find("error") != std::string::npos);
    CHECK(count(result.output, "\n") == 1);
    CHECK(read_bytes(out) == "previous page");
  }
  const CommandResult missing_output = run_cli("report " + quoted(f.set));
  CHECK(missing_output.exit_code == 1);
}

TEST_CASE("report reads a km mesh in the unit its set records, and refuses a --unit that contradicts it",
          "[report_cli]") {
  // The set was computed from orrin.obj read in km (files()); its mass from the set and from the mesh must
  // agree (the same mesh and density), not differ by 10^9 as when the mesh was read in metres.
  const Files& f = files();
  const std::string out = f.dir + "/orrin-unit.html";
  const CommandResult result =
      run_cli("report " + quoted(f.set) + " --mesh " + quoted(f.mesh) + " -o " + quoted(out));
  CAPTURE(result.output);
  REQUIRE(result.exit_code == 0);
  CHECK(result.output.find("read in km, the unit the set records for region 1") != std::string::npos);
  const std::string html = read_bytes(out);
  CHECK(html.find(fmt::format("{:.9g}", f.computed.mass)) != std::string::npos);
  CHECK(html.find(fmt::format("{:.9g}", f.computed.mass * 1e-9)) == std::string::npos);
  CHECK(html.find("matches region 1 of the set") != std::string::npos);

  const std::string kept = f.dir + "/kept-unit.html";
  write_text(kept, "previous page");
  const CommandResult contradiction =
      run_cli("report " + quoted(f.set) + " --mesh " + quoted(f.mesh) + " --unit m -o " + quoted(kept));
  CAPTURE(contradiction.output);
  CHECK(contradiction.exit_code == 2);
  CHECK(contradiction.output.find("region 1 of the set") != std::string::npos);
  CHECK(contradiction.output.find("in km") != std::string::npos);
  CHECK(count(contradiction.output, "\n") == 1);
  CHECK(read_bytes(kept) == "previous page");
}

TEST_CASE("report --spin-period adds the surface section; without --mesh it is refused with exit code 2",
          "[report_cli]") {
  const Files& f = files();
  const std::string out = f.dir + "/spin.html";
  const CommandResult refused = run_cli("report " + quoted(f.set) + " --spin-period 6h -o " + quoted(out));
  CAPTURE(refused.output);
  CHECK(refused.exit_code == 2);
  CHECK(refused.output.find("--spin-period needs --mesh") != std::string::npos);
  CHECK_FALSE(file_exists(out));
  const CommandResult made = run_cli("report " + quoted(f.set) + " --mesh " + quoted(f.mesh) +
                                     " --spin-period 6h -o " + quoted(out));
  CAPTURE(made.output);
  REQUIRE(made.exit_code == 0);
  CHECK(made.output.find("21600 s (given as 6 h)") != std::string::npos);
  const std::string html = read_bytes(out);
  CHECK(xml_problem(html).empty());
  CHECK(html.find("<section id=\"surface\">") != std::string::npos);
}
