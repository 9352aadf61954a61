// Shared helpers for the module tests: coefficient-set comparison, temporary files, running the CLI.
// Test-only; never linked into the library.
#pragma once

#include <catch2/catch.hpp>
#include <string>
#include <vector>

#include "polystokes/core/coefficient_set.h"
#include "polystokes/core/mesh.h"
#include "polystokes/io/table_conventions.h"

namespace polystokes::test {

/// Checks |a(n,m) - b(n,m)| <= tolerance for C and S at every n <= max_degree, CAPTUREs n, m on failure.
void require_sets_close(const CoefficientSet& a, const CoefficientSet& b, int max_degree, double tolerance);

/// Checks that a and b hold the same numbers bit for bit: degree, GM, reference radius, convention, C, S and
/// both sigmas.
void require_sets_identical(const CoefficientSet& a, const CoefficientSet& b);

/// A plain table's declarations that describe `set` as it stands: `columns` (column words), its convention,
/// reference radius and GM.
TableConventions conventions_of(const CoefficientSet& set, const std::string& columns);

/// Largest |a - b| over C and S up to max_degree.
double max_coefficient_difference(const CoefficientSet& a, const CoefficientSet& b, int max_degree);

/// A fresh empty directory under the system temp directory, unique per call.
/// Signed volume of a closed mesh as the sum of origin tetrahedra (divergence theorem; common practice),
/// written here independently of the library's own volume code so that reader tests check against it. m^3.
double volume_of(const Mesh& mesh);

std::string temp_directory();

/// Path of a file in the source tree (e.g. "shapes-demo/unit_cube.obj").
std::string source_path(const std::string& relative);

struct CommandResult {
  int exit_code;
  std::string output;  ///< stdout and stderr together
};
/// Runs the built polystokes executable with the given argument string (shell-quoted by the caller).
CommandResult run_cli(const std::string& arguments);

/// A lumpy body with no symmetry (every order present, distinct principal moments), about 3.2 x 2 x 1.5 km,
/// 1280 faces, about the mesh origin.
Mesh lumpy_test_mesh();

/// A torus of radii (major, minor) metres about the z axis, n_u x n_v quads split into outward triangles: a
/// body that is not star-shaped about any point.
Mesh torus_mesh(double major, double minor, int n_u, int n_v);

/// Fully normalized set of the given degree whose degree variances are exactly K n^-beta (n >= 2): the
/// variance of degree n is spread evenly over its 2n + 1 coefficients (n + 1 cosine terms, n sine terms);
/// C00 = 1, degree 1 zero, GM 4.2e5 m^3 s^-2, reference and Brillouin radius 1500 m.
CoefficientSet power_law_set(int degree, double k, double beta);

/// Subcommand names listed by `polystokes --help` (the indented names under "Subcommands:"), in order.
std::vector<std::string> subcommand_names();

/// Whole file as bytes; empty string if missing.
std::string read_bytes(const std::string& path);
/// Writes text to a file (overwrites).
void write_text(const std::string& path, const std::string& text);
bool file_exists(const std::string& path);

}  // namespace polystokes::test
