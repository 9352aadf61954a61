// Helpers shared by the subcommands: loading and checking meshes, printing notices and summaries.
// Everything here is presentation; the work itself is done by the library.
#pragma once

#include <string>
#include <vector>

#include "commands.h"
#include "mass_properties.h"
#include "mesh.h"

namespace polystokes::cli {

/// Reads a mesh (unit, merge tolerance in the file's unit), runs every mesh check (throws MeshError on the
/// first failure) and prints the import/check notices on stderr unless quiet.
Mesh load_checked_mesh(const std::string& path, LengthUnit unit, double merge_tolerance, const GlobalOptions& global);

/// Prints "polystokes: note: TEXT" on stderr unless quiet.
void print_notice(const GlobalOptions& global, const std::string& text);

/// CLI11 validator/transformer for "m" / "km".
LengthUnit parse_unit_option(const std::string& text);

/// "a,b,c" -> vector; throws ConventionError naming `what` on a malformed list.
Eigen::Vector3d parse_vector3(const std::string& text, const std::string& what);

/// Mass-properties block for summaries: volume, mass, GM, COM, inertia, principal moments and axes.
std::string format_mass_properties(const MassProperties& props, LengthUnit unit);

}  // namespace polystokes::cli
