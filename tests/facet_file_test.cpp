// Per-facet files: the binary PLY decoded by hand by the PLY layout (P. Bourke, "PLY - Polygon File Format",
// 1994), CSV and JSON numbers read back bit for bit, bad tables refused.
#include "polystokes/io/facet_file.h"

#include <catch2/catch.hpp>
#include <charconv>
#include <cstring>
#include <nlohmann/json.hpp>
#include <sstream>

#include "polystokes/core/errors.h"
#include "polystokes/io/mesh_io.h"
#include "polystokes/mesh/shapes.h"
#include "test_support.h"

using namespace polystokes;

namespace {

FacetTable sample_table(const Mesh& mesh) {
  FacetTable table;
  table.title = "test table";
  table.comments = {"values: 1/3 + facet / 7"};
  table.names = {"value_m", "square_m2"};
  Eigen::VectorXd value(mesh.faces.rows()), square(mesh.faces.rows());
  for (Eigen::Index f = 0; f < mesh.faces.rows(); ++f) {
    value[f] = 1.0 / 3.0 + double(f) / 7.0;
    square[f] = value[f] * value[f];
  }
  table.columns = {value, square};
  return table;
}

}  // namespace

TEST_CASE("per-facet PLY: binary little-endian doubles after the header, decoded by the PLY layout by hand",
          "[facet_file]") {
  const Mesh mesh = make_box(2, 3, 4);
  const FacetTable table = sample_table(mesh);
  const std::string ply = facet_ply(mesh, table);
  const size_t body = ply.find("end_header\n") + 11;
  REQUIRE(ply.find("property double value_m\nproperty double square_m2\n") != std::string::npos);
  size_t at = body + size_t(mesh.vertices.rows()) * 3 * sizeof(double);
  for (Eigen::Index f = 0; f < mesh.faces.rows(); ++f) {
    CHECK(static_cast<unsigned char>(ply[at]) == 3);
    int corners[3];
    std::memcpy(corners, ply.data() + at + 1, sizeof corners);
    for (int k = 0; k < 3; ++k) CHECK(corners[k] == mesh.faces(f, k));
    double values[2];
    std::memcpy(values, ply.data() + at + 1 + sizeof corners, sizeof values);
    CHECK(values[0] == table.columns[0][f]);
    CHECK(values[1] == table.columns[1][f]);
    at += 1 + sizeof corners + sizeof values;
  }
  CHECK(at == ply.size());
  // Our own reader takes the file as a mesh, reading past the extra face properties.
  const std::string path = test::temp_directory() + "/box.ply";
  test::write_text(path, ply);
  const Mesh back = read_mesh(path, MeshReadOptions{});
  CHECK(back.faces.rows() == mesh.faces.rows());
  CHECK(back.vertices == mesh.vertices);
}

TEST_CASE("per-facet CSV and JSON: numbers read back bit for bit; comments and header as documented",
          "[facet_file]") {
  const Mesh mesh = make_icosphere(1);
  const FacetTable table = sample_table(mesh);
  std::istringstream csv(facet_csv(table));
  std::string line;
  std::getline(csv, line);
  CHECK(line == "# test table");
  std::getline(csv, line);
  CHECK(line == "# values: 1/3 + facet / 7");
  std::getline(csv, line);
  CHECK(line == "facet,value_m,square_m2");
  for (Eigen::Index f = 0; f < mesh.faces.rows(); ++f) {
    REQUIRE(std::getline(csv, line));
    const size_t first = line.find(','), second = line.find(',', first + 1);
    double value = 0, square = 0;
    std::from_chars(line.data() + first + 1, line.data() + second, value);
    std::from_chars(line.data() + second + 1, line.data() + line.size(), square);
    CHECK(value == table.columns[0][f]);
    CHECK(square == table.columns[1][f]);
  }
  const nlohmann::json doc = nlohmann::json::parse(facet_json(table, R"({"answer": 42})"));
  CHECK(doc["format"] == "test table");
  CHECK(doc["answer"] == 42);
  for (Eigen::Index f = 0; f < mesh.faces.rows(); ++f)
    CHECK(doc["facets"]["square_m2"][size_t(f)].get<double>() == table.columns[1][f]);
}

TEST_CASE(
    "per-facet files: a column of the wrong length, an unknown extension or a path given twice is "
    "refused and nothing is written",
    "[facet_file]") {
  const Mesh mesh = make_box(1, 1, 1);
  FacetTable table = sample_table(mesh);
  const std::string dir = test::temp_directory();
  CHECK_THROWS_AS(write_facet_files({dir + "/a.csv", dir + "/a.txt"}, mesh, table), ConventionError);
  CHECK_THROWS_AS(write_facet_files({dir + "/a.csv", dir + "/a.csv"}, mesh, table), ConventionError);
  table.columns[1].conservativeResize(3);
  CHECK_THROWS_AS(write_facet_files({dir + "/a.csv"}, mesh, table), ConventionError);
  CHECK_FALSE(test::file_exists(dir + "/a.csv"));
}
