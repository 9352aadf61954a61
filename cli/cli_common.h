// Helpers shared by the subcommands: loading and checking meshes, printing notices and summaries.
// Everything here is presentation; the work itself is done by the library.
#pragma once

#include <chrono>
#include <string>
#include <vector>

#include "commands.h"
#include "frame_options.h"
#include "polystokes/core/coefficient_set.h"
#include "polystokes/core/mesh.h"
#include "polystokes/field/surface_environment.h"
#include "polystokes/harmonics/compute.h"
#include "polystokes/io/mesh_io.h"
#include "polystokes/mesh/mass_properties.h"
#include "quantity_options.h"

namespace polystokes::cli {

// Option groups several commands share: each add_*_options registers its options with one help text, so a
// shared option reads the same in every command. Options are listed in --help in registration order.

/// Shape meshes given on the command line, one density each, and how their files are read.
struct MeshInputOptions {
  std::vector<std::string> meshes;
  std::vector<std::string> densities;  ///< density quantities as given, in mesh order
  std::string unit = "m";              ///< "m" or "km"
  std::string merge_tolerance = "0";   ///< length quantity as given
  std::string format;                  ///< --format: a mesh format name; empty = by extension
};

/// The mesh unit and merge tolerance of `input` interpreted.
MeshReadOptions mesh_read_options(const MeshInputOptions& input);

/// The densities of `input` interpreted: one per mesh, finite and non-zero, the first (outer) one positive;
/// throws ConventionError otherwise.
std::vector<Quantity> mesh_densities(const MeshInputOptions& input);

/// Pairs each mesh with its density, in order, and checks that the regions fit together (check_regions: a
/// void lies inside the first mesh). The one place meshes and densities become regions.
std::vector<DensityRegion> make_regions(std::vector<Mesh> meshes, const std::vector<double>& densities);

/// Reads and checks every mesh of `input` (load_checked_mesh) and pairs it with its density (make_regions).
std::vector<DensityRegion> load_regions(const MeshInputOptions& input, const GlobalOptions& global);

/// The options just registered, for a command's own requirements (required(), check()).
struct MeshListOptions {
  CLI::Option* meshes;
  CLI::Option* densities;
};

/// Registers the positional mesh files "meshes" (required) and --density (a list, one per mesh).
MeshListOptions add_mesh_list_options(CLI::App* cmd, MeshInputOptions& input);

/// Registers --format (the mesh format by name, for files whose extension does not tell it).
void add_mesh_format_option(CLI::App* cmd, std::string& format);

/// Registers --unit (m or km, default m) with `unit_help`, then --merge-tolerance and --format.
void add_mesh_file_options(CLI::App* cmd, std::string& unit, std::string& merge_tolerance,
                           std::string& format,
                           const std::string& unit_help =
                               "Length unit of the mesh files and of every bare "
                               "length given here: m or km");

/// Registers --merge-tolerance alone (for a command whose --unit means something else).
void add_merge_tolerance_option(CLI::App* cmd, std::string& merge_tolerance);

/// One line of a summary table: a quantity, its value with unit, and an optional remark.
struct SummaryRow {
  std::string label;
  std::string value;
  std::string remark;
};

/// How an expansion is made from meshes: compute and uncertainty.
struct ExpansionOptions {
  int degree = 8;
  std::string reference_radius;  ///< length quantity as given; empty = Brillouin radius about the origin
  std::string origin = "com";    ///< "com", "mesh" or a point x,y,z (lengths)
  std::string frame = "mesh";    ///< "mesh" or "principal"
  std::string normalization = "fully";
  bool condon_shortley = false;
  bool zonal_as_j = false;
  std::string body;  ///< empty = the first mesh's file name
  FrameMetadataOptions frame_metadata;
};

/// Registers --degree (the maximum degree of a computed set).
void add_degree_option(CLI::App* cmd, int& degree);

/// Registers --ref-radius, --origin, --frame, --normalization, --condon-shortley, --zonal-j, --body and the
/// frame metadata options.
void add_expansion_options(CLI::App* cmd, ExpansionOptions& expansion);

/// The library's options for `expansion` (lengths given in `unit`; body defaults to `first_mesh`), with the
/// default execution settings. The lengths and frame metadata given are appended to `echo` as interpreted.
ComputeOptions compute_options(const ExpansionOptions& expansion, LengthUnit unit,
                               const std::string& first_mesh, std::vector<SummaryRow>& echo);

/// A coefficient set to write: -o in the form its name asks for (coefficient_form_for: a .json name is JSON,
/// any other name our text format), optionally a second copy as JSON with --json.
struct SetOutputOptions {
  std::string output;
  std::string json;  ///< empty = none
};

/// Registers -o,--output (required) with `output_help`, then --json, whose name must end in .json (or be
/// "-"): a mismatch is a usage error rather than a file whose name says another form.
void add_set_output_options(CLI::App* cmd, SetOutputOptions& files,
                            const std::string& output_help =
                                "Coefficient file to write: JSON if the name ends in .json, otherwise our "
                                "text format (- for stdout)");

/// Refuses, before any work, set outputs that cannot be written (check_output_path) or that name one file
/// twice (ConventionError).
void check_set_output_paths(const SetOutputOptions& files);

/// Writes the set to files.output and, if given, as JSON to files.json: both or neither (one OutputGroup,
/// inside an OutputSection, so an interrupt cannot leave one replaced and the other not).
void write_set_files(const CoefficientSet& set, const SetOutputOptions& files);

/// Registers --threads (0 = all cores, the default); `remark` is appended to the help text.
void add_threads_option(CLI::App* cmd, int& threads, const std::string& remark = "");

/// Reads a mesh (unit, merge tolerance in the file's unit), runs every mesh check (throws MeshError on the
/// first failure) and prints the import/check notices on stderr unless quiet.
Mesh load_checked_mesh(const std::string& path, const MeshReadOptions& read, const GlobalOptions& global);

/// Prints "polystokes: note: TEXT" on stderr unless quiet.
void print_notice(const GlobalOptions& global, const std::string& text);

/// Prints "polystokes: warning: TEXT" on stderr, even when quiet: a warning is never silent.
void print_warning(const std::string& text);

/// Whether a running command shows progress: not when quiet, nor when stderr is not a terminal.
bool progress_wanted(const GlobalOptions& global);

/// Rewrites the progress line on stderr ("\rpolystokes: TEXT"), ending it with a newline when `done`.
void print_progress(const std::string& text, bool done);

/// Records each warning in the set's notes ("Warning: TEXT") and prints it (print_warning).
void record_warnings(CoefficientSet& set, const std::vector<std::string>& warnings);

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

/// Prints "polystokes: TEXT" on stderr when -v was given at least `level` times (and not -q).
void print_verbose(const GlobalOptions& global, int level, const std::string& text);

/// The rows as a table: two-space indent, then label, value and remark columns, each as wide as its widest
/// entry (rows with an empty label continue the row above).
std::string format_summary(const std::vector<SummaryRow>& rows);

/// A uniform rotation as given on the command line (surface, report).
struct SpinOptions {
  std::string period;  ///< time quantity as given; empty = not given
  std::string axis;    ///< "x,y,z" as given; empty = the mesh z axis
};

/// Registers --spin-period (required when `required`) and --spin-axis.
void add_spin_options(CLI::App* cmd, SpinOptions& spin, bool required);

/// A rotation as interpreted, with the period echoed as describe_quantity writes it.
struct GivenSpin {
  Spin spin;
  std::string period_echo;  ///< e.g. "18720 s (given as 5.2 h)"
};

/// The rotation `spin` asks for (period positive, axis a non-zero vector, normalized); throws
/// ConventionError naming the option otherwise. The axis passes through spin.center, left at the origin for
/// the caller to set.
GivenSpin spin_from_options(const SpinOptions& spin, LengthUnit unit);

/// Seconds of wall-clock time since `start`, for a summary's "time" line.
double elapsed_since(std::chrono::steady_clock::time_point start);

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
