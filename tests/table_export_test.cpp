// Plain table export: the receiver's conventions declared in import's vocabulary; what import reads back with
// the same declarations is the set, bit for bit in the set's own convention; converted numbers agree with an
// independent conversion written here.
#include "polystokes/io/table_export.h"

#include <fmt/format.h>

#include <catch2/catch.hpp>
#include <cmath>
#include <regex>
#include <sstream>

#include "polystokes/core/errors.h"
#include "polystokes/harmonics/compute.h"
#include "polystokes/io/table_import.h"
#include "polystokes/mesh/shapes.h"
#include "polystokes/sets/conventions.h"
#include "test_support.h"

using namespace polystokes;
using namespace polystokes::test;

namespace {

// A computed set with sigmas, about the centre of mass in the mesh axes.
const CoefficientSet& computed_set() {
  static const CoefficientSet set = [] {
    ComputeOptions options;
    options.degree = 8;
    CoefficientSet s = compute_coefficients({DensityRegion{lumpy_test_mesh(), 1900.0}}, options);
    for (int n = 0; n <= s.degree; ++n)
      for (int m = 0; m <= n; ++m) {
        s.sigma_C(n, m) = 1e-3 * std::abs(s.C(n, m)) + 1e-12;
        s.sigma_S(n, m) = m ? 2e-3 * std::abs(s.S(n, m)) + 1e-12 : 0.0;
      }
    return s;
  }();
  return set;
}

TableExportOptions in_own_convention(const CoefficientSet& set, const std::string& columns) {
  TableExportOptions options;
  static_cast<TableConventions&>(options) = conventions_of(set, columns);
  return options;
}

// Data rows of a table (lines not starting with '#'), split at `separator`.
std::vector<std::vector<std::string>> rows_of(const std::string& text, char separator) {
  std::vector<std::vector<std::string>> rows;
  std::istringstream in(text);
  for (std::string line; std::getline(in, line);) {
    if (line.empty() || line[0] == '#') continue;
    std::vector<std::string> fields;
    std::istringstream fields_in(line);
    for (std::string field; std::getline(fields_in, field, separator);) fields.push_back(field);
    rows.push_back(fields);
  }
  return rows;
}

// Unnormalized P_nm from fully normalized: the factor sqrt((2 - delta_m0)(2n+1)(n-m)!/(n+m)!) (Heiskanen &
// Moritz 1967, Physical Geodesy, eq. 1-73), the factorial ratio as a long double product.
long double full_normalization(int n, int m) {
  long double ratio = 1;
  for (int k = n - m + 1; k <= n + m; ++k) ratio /= k;
  return std::sqrt((m == 0 ? 1.0L : 2.0L) * (2 * n + 1) * ratio);
}

}  // namespace

TEST_CASE("a table exported in the set's own convention reads back bit for bit with the same declarations",
          "[table_export]") {
  const CoefficientSet& set = computed_set();
  for (const char separator : {' ', ','}) {
    CAPTURE(separator);
    TableExportOptions options = in_own_convention(set, "n,m,C,S,sigma_C,sigma_S");
    options.separator = separator;
    const std::string text = format_table(set, options);
    // Import with the very declarations export used, and the origin and axes the header names.
    TableImportOptions import;
    static_cast<TableConventions&>(import) = options;
    import.origin = OriginKind::point;
    import.origin_point = set.origin_in_mesh;
    import.axes = "mesh";
    const CoefficientSet read = parse_table(text, "exported.tab", import);
    require_sets_identical(read, set);
    CHECK(read.origin == OriginKind::center_of_mass);  // the degree-1 terms vanish at the declared point
    CHECK(read.origin_in_mesh == set.origin_in_mesh);
    CHECK(read.frame == FrameKind::mesh);
    CHECK(read.axes_known);
    CHECK(read.axes_in_mesh == set.axes_in_mesh);
    // The header says so in the words import takes.
    CHECK(text.find("--table-axes mesh") != std::string::npos);
    CHECK(text.find(fmt::format("--table-origin {}m,", set.origin_in_mesh.x())) != std::string::npos);
    CHECK(text.find("CAUTION") != std::string::npos);
  }
}

TEST_CASE(
    "exported numbers in another normalization, phase, J form, radius and GM match an independent "
    "conversion within a few ulp",
    "[table_export]") {
  // Four steps (degree cut, radius, GM, convention) each round once or twice: within 8 ulp.
  // C'_nm = C_nm N_nm (-1)^m (GM/GM') (R/R')^n with N_nm of Heiskanen & Moritz 1967, eq. 1-73; J_n = -C'_n0
  // and the Condon-Shortley phase (-1)^m as common practice writes them.
  const CoefficientSet& set = computed_set();  // fully normalized, no phase, C form
  TableExportOptions options = in_own_convention(set, "n,m,C,S,sigma_C,sigma_S");
  options.normalization = Normalization::unnormalized;
  options.condon_shortley = true;
  options.zonal_as_j = true;
  options.reference_radius = set.reference_radius * 1.3;
  options.gm = set.gm * 0.9;
  const auto rows = rows_of(format_table(set, options), ' ');
  REQUIRE(rows.size() == size_t((set.degree + 1) * (set.degree + 2) / 2));
  for (const auto& row : rows) {
    const int n = std::stoi(row[0]), m = std::stoi(row[1]);
    CAPTURE(n, m, row);
    const long double scale =
        full_normalization(n, m) * (m % 2 ? -1.0L : 1.0L) * (static_cast<long double>(set.gm) / *options.gm) *
        std::pow(static_cast<long double>(set.reference_radius) / *options.reference_radius, n);
    const double zonal = (m == 0 && n >= 1) ? -1.0 : 1.0;
    const double c = static_cast<double>(zonal * scale * set.C(n, m));
    const double s = static_cast<double>(scale * set.S(n, m));
    CHECK_THAT(std::strtod(row[2].c_str(), nullptr), Catch::Matchers::WithinULP(c, 8));
    CHECK_THAT(std::strtod(row[3].c_str(), nullptr), Catch::Matchers::WithinULP(s, 8));
    CHECK_THAT(std::strtod(row[4].c_str(), nullptr),
               Catch::Matchers::WithinULP(static_cast<double>(std::abs(scale) * set.sigma_C(n, m)), 8));
  }
}

TEST_CASE("digits, separator, column subset and maximum degree shape the table", "[table_export]") {
  const CoefficientSet& set = computed_set();
  TableExportOptions options = in_own_convention(set, "C,n,m");
  options.digits = 8;
  options.separator = ',';
  options.max_degree = 3;
  const auto rows = rows_of(format_table(set, options), ',');
  REQUIRE(rows.size() == 10);  // degrees 0..3: 1 + 2 + 3 + 4 rows
  // 8 significant digits: d.ddddddde+XX, the value rounded to 8 digits (printf %.7e, C99 7.19.6.1).
  const std::regex eight_digits("-?[0-9]\\.[0-9]{7}e[-+][0-9]{2,3}");
  for (const auto& row : rows) {
    REQUIRE(row.size() == 3);
    const int n = std::stoi(row[1]), m = std::stoi(row[2]);
    CAPTURE(row);
    CHECK(std::regex_match(row[0], eight_digits));
    CHECK_THAT(std::strtod(row[0].c_str(), nullptr), Catch::Matchers::WithinRel(set.C(n, m), 5e-8));
  }
  CHECK(rows.back()[1] == "3");
}

TEST_CASE("export refuses a missing declaration, a skip column, a degree the set lacks, bad digits",
          "[table_export]") {
  const CoefficientSet& set = computed_set();
  TableExportOptions missing = in_own_convention(set, "n,m,C");
  missing.gm.reset();
  CHECK_THROWS_WITH(format_table(set, missing), Catch::Contains("--gm is required for a table"));
  CHECK_THROWS_WITH(format_table(set, in_own_convention(set, "n,m,skip,C")),
                    Catch::Contains("an exported table has no skip column"));
  CHECK_THROWS_WITH(parse_column_words("n,m,Q"), Catch::Contains("unknown column 'Q'"));
  TableExportOptions too_high = in_own_convention(set, "n,m,C");
  too_high.max_degree = 9;
  CHECK_THROWS_WITH(format_table(set, too_high), Catch::Contains("--max-degree 9: the set has degree 8"));
  TableExportOptions digits = in_own_convention(set, "n,m,C");
  digits.digits = 18;
  CHECK_THROWS_AS(format_table(set, digits), ConventionError);
}
