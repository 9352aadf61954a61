// Point lists and field tables: parsing rules, error messages with line numbers, exact round trip of doubles
// (shortest round-trip form, as std::from_chars / std::to_chars specify in C++17), atomic output.
#include "point_file.h"

#include <catch2/catch.hpp>
#include <cmath>
#include <cstring>
#include <limits>
#include <random>

#include "errors.h"
#include "test_support.h"

using namespace polystokes;

TEST_CASE("points parse with optional header, comments, blank lines and spaces", "[point_file]") {
  const Points p = parse_points(
      "# evaluation points\n"
      "X, Y, Z\n"
      "\n"
      "1, 2.5, -3e3   # trailing comment\n"
      "  +4,0.125,6E-2\r\n",
      "p.csv");
  REQUIRE(p.rows() == 2);
  CHECK(p(0, 0) == 1.0);
  CHECK(p(0, 1) == 2.5);
  CHECK(p(0, 2) == -3000.0);
  CHECK(p(1, 0) == 4.0);
  CHECK(p(1, 2) == 0.06);
  const Points bare = parse_points("1,2,3", "q.csv");  // no header, no final newline
  CHECK(bare.rows() == 1);
}

TEST_CASE("a field table reads back as a point list (extra header columns)", "[point_file]") {
  Points points(2, 3);
  points << 1.0, 2.0, 3.0, -4.0, 5.5, 1e-300;
  std::vector<FieldValue> values(2);
  values[1].potential = 0.1;
  values[1].gradient(1, 2) = values[1].gradient(2, 1) = -3.25e-7;
  const std::string table = format_field_table(points, values, true);
  CHECK(table.rfind("x,y,z,U,ax,ay,az,Txx,Txy,Txz,Tyy,Tyz,Tzz\n", 0) == 0);
  CHECK(table.find("\n-4,5.5,1e-300,0.1,0,0,0,0,0,0,0,-3.25e-07,0\n") != std::string::npos);
  const Points back = parse_points(table, "t.csv");
  CHECK(back == points);
}

TEST_CASE("every double survives format -> parse exactly (shortest round-trip form)", "[point_file]") {
  std::mt19937_64 rng(42);
  Points points(200, 3);
  for (Eigen::Index i = 0; i < points.rows(); ++i)
    for (int k = 0; k < 3; ++k) {
      // Random bit patterns of finite doubles across all exponents.
      double v;
      do {
        const uint64_t bits = rng();
        std::memcpy(&v, &bits, sizeof v);
      } while (!std::isfinite(v));
      points(i, k) = v;
    }
  points(0, 0) = std::numeric_limits<double>::denorm_min();
  points(0, 1) = std::numeric_limits<double>::max();
  points(0, 2) = -0.0;
  const std::vector<FieldValue> values(size_t(points.rows()));
  const Points back = parse_points(format_field_table(points, values, false), "r.csv");
  for (Eigen::Index i = 0; i < points.rows(); ++i)
    for (int k = 0; k < 3; ++k) {
      CAPTURE(i, k);
      CHECK(std::memcmp(&back(i, k), &points(i, k), sizeof(double)) == 0);
    }
}

TEST_CASE("malformed point lists give one-line errors naming file and line", "[point_file]") {
  CHECK_THROWS_WITH(parse_points("1,2,3\n4,5\n", "a.csv"),
                    "a.csv:2: expected 3 comma-separated fields, got 2");
  CHECK_THROWS_WITH(parse_points("x,y,z\n1,2,abc\n", "b.csv"), "b.csv:2: field 3 ('abc') is not a number");
  CHECK_THROWS_WITH(parse_points("# c\nlat,lon,h\n", "c.csv"),
                    "c.csv:2: expected a header starting with x,y,z or three numbers, got 'lat,lon,h'");
  CHECK_THROWS_WITH(parse_points("1,nan,3\n", "d.csv"), "d.csv:1: field 2 ('nan') is not finite");
  CHECK_THROWS_WITH(parse_points("1,2,1e999\n", "e.csv"),
                    "e.csv:1: field 3 ('1e999') is out of the range of double");
  CHECK_THROWS_WITH(parse_points("# only comments\n\n", "f.csv"), "f.csv: no points");
  CHECK_THROWS_WITH(parse_points("x,y,z,U\n1,2,3\n", "g.csv"),
                    "g.csv:2: expected 4 comma-separated fields, got 3");
  CHECK_THROWS_WITH(parse_points("1,2,3\nx,y,z\n", "h.csv"), "h.csv:2: field 1 ('x') is not a number");
  CHECK_THROWS_WITH(parse_points("1,,3\n", "i.csv"), "i.csv:1: field 2 ('') is empty");
  CHECK_THROWS_AS(read_points("/nonexistent/dir/p.csv"), FormatError);
}

TEST_CASE("field tables are written atomically: a failed write leaves no file", "[point_file]") {
  const std::string dir = test::temp_directory();
  Points points(1, 3);
  points << 1, 2, 3;
  const std::vector<FieldValue> values(1);
  write_field_table(dir + "/out.csv", points, values, false);
  CHECK(test::read_bytes(dir + "/out.csv") == "x,y,z,U,ax,ay,az\n1,2,3,0,0,0,0\n");
  CHECK_THROWS_AS(write_field_table(dir + "/missing/out.csv", points, values, false), OutputError);
  CHECK_FALSE(test::file_exists(dir + "/missing"));
  CHECK_THROWS_AS(format_field_table(points, std::vector<FieldValue>(2), false), ConventionError);
}
