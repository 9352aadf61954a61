// Point lists and field tables: parsing rules, error messages with line numbers, exact round trip of doubles
// (shortest round-trip form, as std::from_chars / std::to_chars specify in C++17), atomic output.
#include "polystokes/io/point_file.h"

#include <catch2/catch.hpp>
#include <cmath>
#include <cstring>
#include <limits>
#include <random>

#include "polystokes/core/errors.h"
#include "test_support.h"

using namespace polystokes;

TEST_CASE("points parse with optional header, comments, blank lines and spaces", "[point_file]") {
  const Points p = parse_points(
      "# evaluation points\n"
      "X, Y, Z\n"
      "\n"
      "1, 2.5, -3e3   # trailing comment\n"
      "  +4,0.125,6E-2\r\n",
      "p.csv")
                       .points;
  REQUIRE(p.rows() == 2);
  CHECK(p(0, 0) == 1.0);
  CHECK(p(0, 1) == 2.5);
  CHECK(p(0, 2) == -3000.0);
  CHECK(p(1, 0) == 4.0);
  CHECK(p(1, 2) == 0.06);
  const Points bare = parse_points("1,2,3", "q.csv").points;  // no header, no final newline
  CHECK(bare.rows() == 1);
}

TEST_CASE("a field table reads back as a point list (extra header columns)", "[point_file]") {
  Points points(2, 3);
  points << 1.0, 2.0, 3.0, -4.0, 5.5, 1e-300;
  std::vector<FieldValue> values(2);
  values[1].potential = 0.1;
  values[1].gradient(1, 2) = values[1].gradient(2, 1) = -3.25e-7;
  const std::string table = format_field_table(points, values, true);
  CHECK(table.rfind("x_m,y_m,z_m,U_m2_s2,ax_m_s2,ay_m_s2,az_m_s2,Txx_per_s2,Txy_per_s2,Txz_per_s2,Tyy_per_s2,"
                    "Tyz_per_s2,Tzz_per_s2\n",
                    0) == 0);
  CHECK(table.find("\n-4,5.5,1e-300,0.1,0,0,0,0,0,0,0,-3.25e-07,0\n") != std::string::npos);
  const PointList back = parse_points(table, "t.csv", LengthUnit::kilometer);
  CHECK(back.points == points);  // the header's _m declares metres, whatever the command's unit
  CHECK(back.unit_declared);
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
  const Points back = parse_points(format_field_table(points, values, false), "r.csv").points;
  for (Eigen::Index i = 0; i < points.rows(); ++i)
    for (int k = 0; k < 3; ++k) {
      CAPTURE(i, k);
      CHECK(std::memcmp(&back(i, k), &points(i, k), sizeof(double)) == 0);
    }
}

TEST_CASE("bare coordinates follow the command's unit; a header may declare the file's unit", "[point_file]") {
  // The one unit rule of docs/units.md; km = 1000 m (BIPM 2019, SI brochure, 9th ed.).
  const PointList bare = parse_points("x,y,z\n1.5,2,-3\n", "b.csv", LengthUnit::kilometer);
  CHECK(bare.points(0, 0) == 1500.0);
  CHECK(bare.points(0, 2) == -3000.0);
  CHECK_FALSE(bare.unit_declared);
  const PointList declared = parse_points("X_KM,Y_KM,Z_KM\n1.5,2,-3\n", "d.csv", LengthUnit::meter);
  CHECK(declared.points == bare.points);
  CHECK(declared.unit == LengthUnit::kilometer);
  CHECK(declared.unit_declared);
  CHECK(parse_points("x_m,y_m,z_m\n1.5,2,-3\n", "m.csv", LengthUnit::kilometer).points(0, 0) == 1.5);
}

TEST_CASE("malformed point lists give one-line errors naming file and line", "[point_file]") {
  CHECK_THROWS_WITH(parse_points("1,2,3\n4,5\n", "a.csv"),
                    "a.csv:2: expected 3 comma-separated fields, got 2");
  CHECK_THROWS_WITH(parse_points("x,y,z\n1,2,abc\n", "b.csv"), "b.csv:2: field 3 ('abc') is not a number");
  CHECK_THROWS_WITH(parse_points("# c\nlat,lon,h\n", "c.csv"),
                    "c.csv:2: expected a header starting with x,y,z (or x_m,y_m,z_m or x_km,y_km,z_km) or three "
                    "numbers, got 'lat,lon,h'");
  CHECK_THROWS_WITH(parse_points("1,nan,3\n", "d.csv"), "d.csv:1: field 2 ('nan') is not a number");
  CHECK_THROWS_WITH(parse_points("1,2,1e999\n", "e.csv"), "e.csv:1: field 3 ('1e999') is not a number");
  CHECK_THROWS_WITH(parse_points("1,0x10,3\n", "h16.csv"), "h16.csv:1: field 2 ('0x10') is not a number");
  CHECK_THROWS_WITH(parse_points("x_km,y_m,z_m\n1,2,3\n", "mixed.csv"),
                    "mixed.csv:1: header 'x_km,y_m,z_m' gives the coordinates different units");
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
  CHECK(test::read_bytes(dir + "/out.csv") == "x_m,y_m,z_m,U_m2_s2,ax_m_s2,ay_m_s2,az_m_s2\n1,2,3,0,0,0,0\n");
  CHECK_THROWS_AS(write_field_table(dir + "/missing/out.csv", points, values, false), OutputError);
  CHECK_FALSE(test::file_exists(dir + "/missing"));
  CHECK_THROWS_AS(format_field_table(points, std::vector<FieldValue>(2), false), ConventionError);
}
