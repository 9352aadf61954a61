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

/// Refuses, before any work, an input path that cannot be read: FormatError "PATH: cannot read: ..." when
/// it is missing or a directory ("-", standard input, passes). Called from a command's run, after parsing,
/// so that a mistyped option is still reported as a usage error first.
void check_input_path(const std::string& path);

/// Refuses, before any work, an output path that cannot be written: OutputError "PATH: cannot write: ..."
/// when its directory is missing or not writable or the path is a directory. "-" (standard output) passes.
/// The write itself stays all-or-nothing (write_file_atomically); this only saves a long run that could
/// not have been saved.
void check_output_path(const std::string& path);

/// CLI11 validator/transformer for "m" / "km".
LengthUnit parse_unit_option(const std::string& text);

/// "a,b,c" -> vector; throws ConventionError naming `what` on a malformed list.
Eigen::Vector3d parse_vector3(const std::string& text, const std::string& what);

/// Prints "polystokes: TEXT" on stderr when -v was given at least `level` times (and not -q).
void print_verbose(const GlobalOptions& global, int level, const std::string& text);

/// One line of a summary table: a quantity, its value with unit, and an optional remark.
struct SummaryRow {
  std::string label;
  std::string value;
  std::string remark;
};

/// The rows as a table: two-space indent, then label, value and remark columns, each as wide as its widest
/// entry (rows with an empty label continue the row above).
std::string format_summary(const std::vector<SummaryRow>& rows);

/// Summary rows of mass properties: volume, mass, GM; COM, inertia about it and principal axes (unit
/// vectors, moments ascending), all in the mesh frame.
std::vector<SummaryRow> mass_property_rows(const MassProperties& props, LengthUnit unit);

/// format_summary(mass_property_rows(props, unit)).
std::string format_mass_properties(const MassProperties& props, LengthUnit unit);

/// Makes SIGINT, SIGTERM and SIGHUP end the process as usual, except while an OutputSection is open: then
/// the signal waits until the section closes, so a file being written is completed (or, on failure, its
/// temporary removed) before the process ends. Call once at start-up.
void install_signal_handlers();

/// Scope around writing output files (write_file_atomically and the writers built on it). Sections nest; a
/// terminating signal that arrived inside is re-raised when the outermost section closes.
class OutputSection {
 public:
  OutputSection();
  ~OutputSection();
  OutputSection(const OutputSection&) = delete;
  OutputSection& operator=(const OutputSection&) = delete;
};

}  // namespace polystokes::cli
