// Plain coefficient tables: a set written as a table in several layouts reads back bit for bit; declarations
// that are missing, and every kind of bad row, give a one-line error naming the option or file:line.
#include "polystokes/io/table_import.h"

#include <fmt/format.h>

#include <catch2/catch.hpp>
#include <cmath>

#include "polystokes/io/coefficient_file.h"
#include "polystokes/sets/conventions.h"
#include "polystokes/core/errors.h"
#include "polystokes/harmonics/compute.h"
#include "polystokes/mesh/shapes.h"
#include "test_support.h"
#include "polystokes/sets/transforms.h"

using namespace polystokes;
using namespace polystokes::test;

namespace {

const CoefficientSet& body_set() {
  static const CoefficientSet set = [] {
    ComputeOptions options;
    options.degree = 8;
    CoefficientSet s =
        compute_coefficients({DensityRegion{make_ellipsoid(2, 900, 600, 450), 1500.0}}, options);
    for (int n = 0; n <= s.degree; ++n)
      for (int m = 0; m <= n; ++m) {
        s.sigma_C(n, m) = 1e-3 * std::abs(s.C(n, m));
        s.sigma_S(n, m) = m ? 2e-3 * std::abs(s.S(n, m)) : 0.0;
      }
    return s;
  }();
  return set;
}

TableImportOptions declared(const CoefficientSet& set, const std::string& columns) {
  TableImportOptions options;
  static_cast<TableConventions&>(options) = conventions_of(set, columns);
  return options;
}

// A table of `set` with a two-line header, a comment line and a trailing comment, rows "label n m C S sC sS".
// Numbers in the shortest round-trip form (fmt "{}").
std::string table_text(const CoefficientSet& set, const std::string& separator, int first_degree = 0) {
  std::string text = "Invented team table, body Quillop\nrow n m C S sigmaC sigmaS\n# coefficients follow\n";
  for (int n = first_degree; n <= set.degree; ++n)
    for (int m = 0; m <= n; ++m)
      text += fmt::format("coef{0}{1}{0}{2}{0}{3}{0}{4}{0}{5}{0}{6}   # row\n", separator, n, m, set.C(n, m),
                          set.S(n, m), set.sigma_C(n, m), set.sigma_S(n, m));
  return text;
}


}  // namespace

TEST_CASE("a table read back reproduces the set exactly, whitespace or comma separated, any convention",
          "[table_import]") {
  for (const Convention& c : {Convention{}, Convention{Normalization::unnormalized, true, true},
                              Convention{Normalization::schmidt, false, true}}) {
    const CoefficientSet set = convert_convention(body_set(), c);
    for (const std::string separator : {" ", "\t", ",", ", "}) {
      CAPTURE(describe(c), separator);
      TableImportOptions options = declared(set, "skip,n,m,C,S,sigma_C,sigma_S");
      options.skip_lines = 2;
      const CoefficientSet read = parse_table(table_text(set, separator), "team.tab", options);
      require_sets_identical(read, set);
      CHECK(read.body == "team.tab");
      CHECK(read.history.front().find("imported from table team.tab") != std::string::npos);
      // Regression (issue 10, defect 4): a table that does not say where its origin and axes are was
      // recorded as "com" at (0,0,0) in the mesh axes; both are unknown.
      CHECK(to_string(read.origin) == kUnknownLabel);
      CHECK(frame_label(read) == kUnknownLabel);
      CHECK(!read.origin_known);
      CHECK(!read.axes_known);
    }
  }
}

TEST_CASE("columns may come in any order; absent S and sigma columns are zeros; extra columns are ignored",
          "[table_import]") {
  const CoefficientSet& set = body_set();
  std::string text;
  for (int n = 0; n <= 2; ++n)
    for (int m = 0; m <= n; ++m) text += fmt::format("{} {} {} 99 extra\n", set.C(n, m), m, n);
  const CoefficientSet read = parse_table(text, "t", declared(set, "C,m,n"));
  CHECK(read.degree == 2);
  CHECK(read.C(2, 2) == set.C(2, 2));
  CHECK(read.S.isZero());
  CHECK(read.sigma_C.isZero());
}

TEST_CASE("Fortran D exponents and a leading + are read", "[table_import]") {
  const CoefficientSet& set = body_set();
  TableImportOptions options = declared(set, "n,m,C,S");
  const CoefficientSet read = parse_table(
      "0 0 1.0D+00 0\n1 0 0 0\n1 1 0 0\n2 0 -4.5d-02 0\n2 1 +1E-9 0\n2 2 3.25D-3 -1D-4\n", "t", options);
  CHECK(read.C(2, 0) == -4.5e-2);
  CHECK(read.C(2, 1) == 1e-9);
  CHECK(read.S(2, 2) == -1e-4);
}

TEST_CASE("a table starting at degree 2 gets C00 = 1 and zero degree-1 terms, recorded", "[table_import]") {
  const CoefficientSet& set = body_set();
  TableImportOptions options = declared(set, "skip,n,m,C,S,sigma_C,sigma_S");
  options.skip_lines = 2;
  const CoefficientSet read = parse_table(table_text(set, " ", 2), "t2", options);
  CHECK(read.C(0, 0) == 1.0);
  CHECK(read.C(1, 0) == 0.0);
  CHECK(read.C(2, 0) == set.C(2, 0));
  CHECK(read.history.size() == 4);  // import, C00, degree 1, origin and axes
  options.zonal_as_j = true;
  // Degree 0 is C00 = +1 in J form too (issue 10, defect 14: it was stored as -1).
  CHECK(parse_table(table_text(set, " ", 2), "t2", options).C(0, 0) == 1.0);
}

TEST_CASE("reference radius and GM are taken in SI; the unit bare lengths were given in is recorded",
          "[table_import]") {
  // The CLI interprets --ref-radius and --gm under the one unit rule (units_cli_test); the library takes SI.
  const CoefficientSet& set = body_set();
  TableImportOptions options = declared(set, "skip,n,m,C,S,sigma_C,sigma_S");
  options.skip_lines = 2;
  options.unit = LengthUnit::kilometer;
  options.reference_radius = 950.0;
  options.gm = 2.5e4;
  const CoefficientSet read = parse_table(table_text(set, " "), "t", options);
  CHECK(read.reference_radius == 950.0);
  CHECK(read.gm == 2.5e4);
  CHECK(to_string(read.length_unit) == "km");
}

TEST_CASE("missing declarations are named in one error", "[table_import]") {
  TableImportOptions options;
  options.columns = parse_table_columns("n,m,C,S");
  options.normalization = Normalization::fully;
  options.condon_shortley = false;
  options.reference_radius = 1000;
  CHECK_THROWS_WITH(parse_table("0 0 1 0\n", "t", options),
                    "--gm is required for a table (a plain table does not say it)");
  options.gm = 1;
  options.normalization.reset();
  options.condon_shortley.reset();
  CHECK_THROWS_WITH(
      parse_table("0 0 1 0\n", "t", options),
      Catch::StartsWith("--normalization, --condon-shortley or --no-condon-shortley are required"));
  options = TableImportOptions{};
  CHECK_THROWS_WITH(parse_table("0 0 1 0\n", "t", options), Catch::Contains("--columns"));
  CHECK_THROWS_AS(parse_table("0 0 1 0\n", "t", options), ConventionError);
}

TEST_CASE("bad column lists are refused", "[table_import]") {
  CHECK_THROWS_WITH(parse_table_columns("n,m,C,Q"), Catch::Contains("unknown column 'Q'"));
  CHECK_THROWS_WITH(parse_table_columns("n,m,S"), Catch::Contains("column C is required"));
  CHECK_THROWS_WITH(parse_table_columns("n,m,C,C"), Catch::Contains("column C given twice"));
  CHECK(to_string(parse_table_columns("skip,n,m,C,skip,S")) == "skip,n,m,C,skip,S");
}

TEST_CASE("bad rows give file:line errors", "[table_import]") {
  const CoefficientSet& set = body_set();
  const TableImportOptions options = declared(set, "n,m,C,S");
  const std::string good = "0 0 1 0\n1 0 0 0\n1 1 0 0\n";
  struct Bad {
    std::string text, message;
  };
  const std::vector<Bad> cases{
      {good + "2 0 1e-3 0\n2 1 0 0\n2 1 0 0\n2 2 0 0\n", "t.tab:6: row n = 2, m = 1 repeats line 5"},
      {good + "2 0 1e-3 0\n2 2 0 0\n", "t.tab: no row for n = 2, m = 1"},
      {good + "2 3 1e-3 0\n", "t.tab:4: order m = 3 exceeds degree n = 2"},
      {good + "2 0 abc 0\n", "t.tab:4: C 'abc' is not a number"},
      {good + "2 0 1e-3\n", "t.tab:4: 3 field(s), but --columns n,m,C,S declares 4"},
      {good + "2.5 0 1e-3 0\n", "t.tab:4: n '2.5' is not an integer"},
      {good + "2 0 1e-3 5e-4\n", "t.tab:4: S or sigma_S is not 0 for m = 0"},
      {good + "2,,0,1e-3,0\n", "t.tab:4: empty field"},
      {good + "2 0 nan 0\n", "t.tab:4: C 'nan' is not finite"},
      {good + "-1 0 0 0\n", "t.tab:4: negative degree or order"},
      {"# only a comment\n\n", "t.tab: no coefficient rows"},
      {"3 0 1 0\n3 1 0 0\n3 2 0 0\n3 3 0 0\n", "t.tab: no rows below degree 3"},
      {"0 0 -1 0\n", "t.tab:1: C00 = -1 is not positive"},
  };
  for (const Bad& bad : cases) {
    CAPTURE(bad.text);
    CHECK_THROWS_AS(parse_table(bad.text, "t.tab", options), FormatError);
    CHECK_THROWS_WITH(parse_table(bad.text, "t.tab", options), Catch::StartsWith(bad.message));
  }
  TableImportOptions with_sigma = declared(set, "n,m,C,S,sigma_C");
  CHECK_THROWS_WITH(parse_table("0 0 1 0 -1\n", "t.tab", with_sigma),
                    Catch::StartsWith("t.tab:1: negative sigma"));
}

TEST_CASE("read_table names a missing file", "[table_import]") {
  const CoefficientSet& set = body_set();
  CHECK_THROWS_WITH(read_table("/nonexistent/team.tab", declared(set, "n,m,C,S")),
                    Catch::Contains("/nonexistent/team.tab"));
}

// ---- polystokes convert of a plain table, end to end ----

TEST_CASE("convert CLI reads a declared table into our format; a missing declaration is named",
          "[table_import][cli]") {
  const std::string dir = temp_directory();
  const CoefficientSet set =
      convert_convention(body_set(), Convention{Normalization::unnormalized, false, true});
  write_text(dir + "/team.tab", table_text(set, ", "));
  const std::string declarations = fmt::format(
      " --columns skip,n,m,C,S,sigma_C,sigma_S --skip-lines 2 --normalization unnormalized "
      "--no-condon-shortley "
      "--zonal-j --ref-radius {} --gm {} --unit km",
      set.reference_radius / 1000.0, set.gm / 1e9);
  const CommandResult result = run_cli("convert '" + dir + "/team.tab' -o '" + dir + "/team.txt'" +
                                       declarations + " --to-normalization fully --to-zonal c");
  CAPTURE(result.output);
  REQUIRE(result.exit_code == 0);
  const CoefficientSet read = read_coefficient_file(dir + "/team.txt");
  CHECK(read.convention == Convention{});
  CHECK(read.reference_radius == Approx(set.reference_radius).epsilon(1e-15));
  require_sets_close(read, body_set(), body_set().degree, 1e-15);
  CHECK(read.history.front().find("imported from table") != std::string::npos);

  const CommandResult missing = run_cli("convert '" + dir + "/team.tab' -o '" + dir +
                                        "/x.txt' --columns n,m,C,S "
                                        "--normalization fully --no-condon-shortley --ref-radius 1");
  CHECK(missing.exit_code == 2);
  CHECK(missing.output.find("--gm is required for a table") != std::string::npos);
  CHECK(!file_exists(dir + "/x.txt"));
  write_text(dir + "/dup.tab", "0 0 1 0\n1 0 0 0\n1 0 0 0\n");
  const CommandResult duplicate = run_cli("convert '" + dir + "/dup.tab' -o '" + dir +
                                          "/x.txt' --columns n,m,C,S "
                                          "--normalization fully --condon-shortley --ref-radius 1 --gm 1");
  CHECK(duplicate.exit_code == 2);
  CHECK(duplicate.output.find("dup.tab:3: row n = 1, m = 0 repeats line 2") != std::string::npos);
}

TEST_CASE("a J-form table with the usual degree-0 row 0 0 1 is read as C00 = 1; a -1 there as J_0 = -C00",
          "[table_import]") {
  // Issue 10, defect 14: "C00 = -1 is not positive". Tables in J form write degree 0 as 1 (common practice:
  // J_n = -C_n0 is defined for n >= 1, IERS Conventions 2010, eq. 6.2).
  const CoefficientSet set =
      convert_convention(body_set(), Convention{Normalization::unnormalized, false, true});
  REQUIRE(set.C(0, 0) == 1.0);
  TableImportOptions options = declared(set, "skip,n,m,C,S,sigma_C,sigma_S");
  options.skip_lines = 2;
  const std::string text = table_text(set, " ");
  REQUIRE(text.find("coef 0 0 1 0") != std::string::npos);
  const CoefficientSet read = parse_table(text, "j.tab", options);
  require_sets_identical(read, set);
  std::string minus = text;
  minus.replace(minus.find("coef 0 0 1 0"), 12, "coef 0 0 -1 0");
  const CoefficientSet from_minus = parse_table(minus, "j.tab", options);
  CHECK(from_minus.C(0, 0) == 1.0);
  bool recorded = false;
  for (const auto& line : from_minus.history)
    recorded = recorded || line.find("read as J_0 = -C00") != std::string::npos;
  CHECK(recorded);
  // Without --zonal-j a negative C00 is still refused.
  options.zonal_as_j = false;
  options.normalization = Normalization::unnormalized;
  CHECK_THROWS_WITH(parse_table(minus, "c.tab", options), Catch::Contains("C00 = -1 is not positive"));
}

TEST_CASE("declared origin and axes are recorded: the centre of mass, a point, the mesh axes, a label",
          "[table_import]") {
  // Issue 10, defect 4: the table's own declarations, echoed into the set (nothing to compute: what was
  // declared is what is recorded).
  const CoefficientSet& set = body_set();
  TableImportOptions options = declared(set, "skip,n,m,C,S,sigma_C,sigma_S");
  options.skip_lines = 2;
  options.origin = OriginKind::center_of_mass;
  options.axes = "mesh";
  CoefficientSet read = parse_table(table_text(set, " "), "t", options);
  CHECK(to_string(read.origin) == "com");
  CHECK(!read.origin_known);
  CHECK(frame_label(read) == "mesh");
  CHECK(read.axes_known);
  CHECK(read.axes_in_mesh == Eigen::Matrix3d::Identity());
  options.origin = OriginKind::point;
  options.origin_point = Eigen::Vector3d(120, -35, 8);
  options.axes = "principal";
  read = parse_table(table_text(set, " "), "t", options);
  CHECK(to_string(read.origin) == "com");  // the degree-1 terms vanish: the point is the centre of mass
  CHECK(read.origin_known);
  CHECK(read.origin_in_mesh == Eigen::Vector3d(120, -35, 8));
  CHECK(frame_label(read) == "principal");
  CHECK(!read.axes_known);
  CHECK(read.history.back().find("(120, -35, 8) m in the mesh frame (declared)") != std::string::npos);
  // Declared about the centre of mass while the degree-1 terms put it 50 m away: a caution, not silence.
  const CoefficientSet off = shift_origin(set, Eigen::Vector3d(50, 0, 0));
  options = declared(off, "skip,n,m,C,S,sigma_C,sigma_S");
  options.skip_lines = 2;
  options.origin = OriginKind::center_of_mass;
  read = parse_table(table_text(off, " "), "off.tab", options);
  REQUIRE(!read.notes.empty());
  CHECK(read.notes.front().find("CAUTION: off.tab was declared to be about the centre of mass") != std::string::npos);
}
