#include "test_support.h"

#include <sys/wait.h>
#include <unistd.h>

#include <Eigen/Geometry>
#include <array>
#include <atomic>
#include <cmath>
#include <cstdio>
#include <filesystem>
#include <fstream>
#include <sstream>

#include "polystokes/mesh/shapes.h"
#include "polystokes/sets/conventions.h"

namespace polystokes::test {

TableConventions conventions_of(const CoefficientSet& set, const std::string& columns) {
  TableConventions conventions;
  conventions.columns = parse_column_words(columns);
  conventions.normalization = set.convention.normalization;
  conventions.condon_shortley = set.convention.condon_shortley;
  conventions.zonal_as_j = set.convention.zonal_as_j;
  conventions.reference_radius = set.reference_radius;
  conventions.gm = set.gm;
  return conventions;
}

double max_coefficient_difference(const CoefficientSet& a, const CoefficientSet& b, int max_degree) {
  double worst = 0;
  for (int n = 0; n <= max_degree; ++n)
    for (int m = 0; m <= n; ++m)
      worst = std::max({worst, std::abs(a.C(n, m) - b.C(n, m)), std::abs(a.S(n, m) - b.S(n, m))});
  return worst;
}

void require_sets_identical(const CoefficientSet& a, const CoefficientSet& b) {
  REQUIRE(a.degree == b.degree);
  CHECK(a.C == b.C);
  CHECK(a.S == b.S);
  CHECK(a.sigma_C == b.sigma_C);
  CHECK(a.sigma_S == b.sigma_S);
  CHECK(a.convention == b.convention);
  CHECK(a.gm == b.gm);
  CHECK(a.reference_radius == b.reference_radius);
}

void require_sets_close(const CoefficientSet& a, const CoefficientSet& b, int max_degree, double tolerance) {
  REQUIRE(a.degree >= max_degree);
  REQUIRE(b.degree >= max_degree);
  for (int n = 0; n <= max_degree; ++n) {
    for (int m = 0; m <= n; ++m) {
      CAPTURE(n, m, a.C(n, m), b.C(n, m), a.S(n, m), b.S(n, m));
      REQUIRE(std::abs(a.C(n, m) - b.C(n, m)) <= tolerance);
      REQUIRE(std::abs(a.S(n, m) - b.S(n, m)) <= tolerance);
    }
  }
}

std::string temp_directory() {
  static std::atomic<int> counter{0};
  auto dir = std::filesystem::temp_directory_path() /
             ("polystokes_test_" + std::to_string(::getpid()) + "_" + std::to_string(counter++));
  std::filesystem::remove_all(dir);
  std::filesystem::create_directories(dir);
  return dir.string();
}

std::string source_path(const std::string& relative) {
  return std::string(POLYSTOKES_SOURCE_DIR) + "/" + relative;
}

CommandResult run_cli(const std::string& arguments) {
  const std::string command = std::string("'") + POLYSTOKES_CLI + "' " + arguments + " 2>&1";
  FILE* pipe = ::popen(command.c_str(), "r");
  if (!pipe) return {-1, "popen failed"};
  std::string output;
  std::array<char, 4096> buffer{};
  size_t got;
  while ((got = std::fread(buffer.data(), 1, buffer.size(), pipe)) > 0) output.append(buffer.data(), got);
  const int status = ::pclose(pipe);
  return {WIFEXITED(status) ? WEXITSTATUS(status) : -1, output};
}

std::string read_bytes(const std::string& path) {
  std::ifstream in(path, std::ios::binary);
  if (!in) return {};
  std::ostringstream s;
  s << in.rdbuf();
  return s.str();
}

void write_text(const std::string& path, const std::string& text) {
  std::ofstream out(path, std::ios::binary);
  out << text;
}

bool file_exists(const std::string& path) { return std::filesystem::exists(path); }

Mesh torus_mesh(double major, double minor, int n_u, int n_v) {
  Mesh mesh;
  mesh.vertices.resize(n_u * n_v, 3);
  for (int i = 0; i < n_u; ++i)
    for (int j = 0; j < n_v; ++j) {
      const double u = 2 * M_PI * i / n_u, v = 2 * M_PI * j / n_v;
      mesh.vertices.row(i * n_v + j) << (major + minor * std::cos(v)) * std::cos(u),
          (major + minor * std::cos(v)) * std::sin(u), minor * std::sin(v);
    }
  mesh.faces.resize(2 * n_u * n_v, 3);
  for (int i = 0; i < n_u; ++i)
    for (int j = 0; j < n_v; ++j) {
      const int a = i * n_v + j, b = ((i + 1) % n_u) * n_v + j, c = ((i + 1) % n_u) * n_v + (j + 1) % n_v,
                d = i * n_v + (j + 1) % n_v;
      mesh.faces.row(2 * (i * n_v + j)) << a, b, c;
      mesh.faces.row(2 * (i * n_v + j) + 1) << a, c, d;
    }
  mesh.source = "torus";
  return mesh;
}

Mesh lumpy_test_mesh() {
  return make_deformed_sphere(3, [](const Eigen::Vector3d& u) {
    const double r = 1.0 + 0.2 * u.x() * u.y() + 0.1 * u.z() * u.z() * u.x() + 0.08 * std::sin(3 * u.y() + 1);
    return Eigen::Vector3d(1600.0 * r * u.x(), 1000.0 * r * u.y(), 750.0 * r * u.z());
  });
}

std::vector<std::string> subcommand_names() {
  std::istringstream help(run_cli("--help").output);
  std::vector<std::string> names;
  bool in_list = false;
  for (std::string line; std::getline(help, line);) {
    if (line.rfind("Subcommands:", 0) == 0) {
      in_list = true;
      continue;
    }
    if (!in_list || line.size() < 3 || line[0] != ' ' || line[2] == ' ') continue;
    names.push_back(line.substr(2, line.find(' ', 2) - 2));
  }
  return names;
}

CoefficientSet power_law_set(int degree, double k, double beta) {
  CoefficientSet set = make_empty_set(degree);
  set.body = "power-law test body";
  set.gm = 4.2e5;
  set.reference_radius = 1500;
  set.brillouin_radius = 1500;
  set.C(0, 0) = 1;
  for (int n = 2; n <= degree; ++n) {
    const double each = std::sqrt(k * std::pow(double(n), -beta) / (2 * n + 1));
    for (int m = 0; m <= n; ++m) {
      set.C(n, m) = each;
      if (m > 0) set.S(n, m) = -each;
    }
  }
  return set;
}

double volume_of(const Mesh& mesh) {
  double volume = 0;
  for (Eigen::Index f = 0; f < mesh.faces.rows(); ++f) {
    const Eigen::Vector3d a = mesh.vertices.row(mesh.faces(f, 0)), b = mesh.vertices.row(mesh.faces(f, 1)),
                          c = mesh.vertices.row(mesh.faces(f, 2));
    volume += a.dot(b.cross(c)) / 6.0;
  }
  return volume;
}

}  // namespace polystokes::test
