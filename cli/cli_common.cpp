#include "cli_common.h"

#include <fmt/format.h>
#include <fmt/ranges.h>
#include <unistd.h>

#include <algorithm>
#include <atomic>
#include <cerrno>
#include <csignal>
#include <cstdio>
#include <cstring>
#include <filesystem>
#include <sstream>

#include "polystokes/core/constants.h"
#include "polystokes/core/errors.h"
#include "polystokes/harmonics/compute.h"
#include "polystokes/io/coefficient_file.h"
#include "polystokes/io/mesh_io.h"
#include "polystokes/io/output_file.h"
#include "polystokes/mesh/mesh_check.h"

namespace polystokes::cli {

void print_notice(const GlobalOptions& global, const std::string& text) {
  if (!global.quiet) std::fprintf(stderr, "polystokes: note: %s\n", text.c_str());
}

void print_warning(const std::string& text) {
  std::fprintf(stderr, "polystokes: warning: %s\n", text.c_str());
}

bool progress_wanted(const GlobalOptions& global) { return !global.quiet && ::isatty(STDERR_FILENO); }

void print_progress(const std::string& text, bool done) {
  std::fprintf(stderr, "\rpolystokes: %s", text.c_str());
  if (done) std::fprintf(stderr, "\n");
}

void record_warnings(CoefficientSet& set, const std::vector<std::string>& warnings) {
  for (const std::string& warning : warnings) {
    set.notes.push_back("Warning: " + warning);
    print_warning(warning);
  }
}

Mesh load_checked_mesh(const std::string& path, const MeshReadOptions& read, const GlobalOptions& global) {
  Mesh mesh = read_mesh(path, read);
  validate_mesh(mesh);
  for (const auto& notice : mesh.notices) print_notice(global, path + ": " + notice);
  return mesh;
}

void check_input_path(const std::string& path) {
  if (path == "-") return;
  std::error_code error;
  const auto status = std::filesystem::status(path, error);
  if (!std::filesystem::exists(status))
    throw format_error(path, 0, std::string("cannot read: ") + std::strerror(ENOENT));
  if (std::filesystem::is_directory(status)) throw format_error(path, 0, "cannot read: is a directory");
}

void check_output_path(const std::string& path) {
  if (path == "-") return;
  if (path.empty()) throw OutputError("output path is empty");
  const std::filesystem::path target(path);
  const std::filesystem::path directory = target.has_parent_path() ? target.parent_path() : ".";
  std::error_code error;
  if (std::filesystem::is_directory(target, error))
    throw OutputError(path + ": cannot write: is a directory");
  if (!std::filesystem::is_directory(directory, error))
    throw OutputError(path + ": cannot write: directory '" + directory.string() + "' does not exist");
  if (::access(directory.c_str(), W_OK | X_OK) != 0)
    throw OutputError(path + ": cannot write in directory '" + directory.string() +
                      "': " + std::strerror(errno));
}

LengthUnit parse_unit_option(const std::string& text) { return parse_length_unit(text); }

MeshReadOptions mesh_read_options(const MeshInputOptions& input) {
  MeshReadOptions read;
  read.format = input.format;
  read.unit = parse_unit_option(input.unit);
  read.merge_tolerance = option_quantity(input.merge_tolerance, QuantityKind::length, read.unit,
                                         "--merge-tolerance", Bound::non_negative)
                             .value /
                         meters_per(read.unit);
  return read;
}

std::vector<Quantity> mesh_densities(const MeshInputOptions& input) {
  if (input.densities.size() != input.meshes.size())
    throw ConventionError(fmt::format("{} meshes but {} densities: give one --density per mesh, in order",
                                      input.meshes.size(), input.densities.size()));
  std::vector<Quantity> densities;
  for (size_t i = 0; i < input.densities.size(); ++i) {
    const Quantity density =
        option_quantity(input.densities[i], QuantityKind::density, LengthUnit::meter, "--density");
    if (density.value == 0)
      throw ConventionError(
          fmt::format("--density: density 0 for {} is not allowed (a region needs a "
                      "non-zero density or contrast)",
                      input.meshes[i]));
    if (i == 0 && density.value < 0)
      throw ConventionError(
          fmt::format("--density: the first (outer) mesh {} needs a positive density, got {}",
                      input.meshes[i], describe_quantity(density, QuantityKind::density)));
    densities.push_back(density);
  }
  return densities;
}

std::vector<DensityRegion> make_regions(std::vector<Mesh> meshes, const std::vector<double>& densities) {
  std::vector<DensityRegion> regions;
  for (size_t i = 0; i < meshes.size(); ++i) regions.push_back({std::move(meshes[i]), densities.at(i)});
  check_regions(regions);
  return regions;
}

std::vector<DensityRegion> load_regions(const MeshInputOptions& input, const GlobalOptions& global) {
  const std::vector<Quantity> quantities = mesh_densities(input);
  const MeshReadOptions read = mesh_read_options(input);
  std::vector<Mesh> meshes;
  std::vector<double> densities;
  for (size_t i = 0; i < input.meshes.size(); ++i) {
    meshes.push_back(load_checked_mesh(input.meshes[i], read, global));
    densities.push_back(quantities[i].value);
  }
  return make_regions(std::move(meshes), densities);
}

MeshListOptions add_mesh_list_options(CLI::App* cmd, MeshInputOptions& input) {
  MeshListOptions added;
  added.meshes = cmd->add_option("meshes", input.meshes,
                                 "Shape mesh(es): .obj, .off, .ply, .stl, or another format with --format")
                     ->required();
  added.densities = cmd->add_option("--density", input.densities,
                                    "Density per mesh (repeat or list, in mesh order; bare: kg/m^3, or with "
                                    "kg/m3, g/cm3)")
                        ->check(quantity_syntax(QuantityKind::density))
                        ->expected(1, -1);
  return added;
}

void add_mesh_format_option(CLI::App* cmd, std::string& format) {
  cmd->add_option("--format", format,
                  "Mesh file format: " + fmt::format("{}", fmt::join(mesh_format_names(), ", ")) +
                      " (default: by extension, .obj .off .ply .stl)")
      ->check(CLI::IsMember(mesh_format_names()));
}

void add_mesh_file_options(CLI::App* cmd, std::string& unit, std::string& merge_tolerance,
                           std::string& format, const std::string& unit_help) {
  cmd->add_option("--unit", unit, unit_help)->check(CLI::IsMember({"m", "km"}))->capture_default_str();
  add_merge_tolerance_option(cmd, merge_tolerance);
  add_mesh_format_option(cmd, format);
}

void add_merge_tolerance_option(CLI::App* cmd, std::string& merge_tolerance) {
  add_quantity_option(cmd, "--merge-tolerance", merge_tolerance, QuantityKind::length,
                      "Merge vertices closer than this; exact duplicates are always merged")
      ->capture_default_str();
}

void add_degree_option(CLI::App* cmd, int& degree) {
  cmd->add_option("--degree", degree, "Maximum degree")
      ->check(strict_integer())
      ->check(CLI::NonNegativeNumber)
      ->capture_default_str();
}

namespace {

// --origin words: the centre of mass or the mesh origin (anything else is a point).
bool is_origin_word(const std::string& text) {
  return text == to_string(OriginKind::center_of_mass) || text == to_string(OriginKind::mesh);
}

}  // namespace

void add_expansion_options(CLI::App* cmd, ExpansionOptions& expansion) {
  add_quantity_option(cmd, "--ref-radius", expansion.reference_radius, QuantityKind::length,
                      "Reference radius (default: Brillouin radius about the origin)");
  cmd->add_option("--origin", expansion.origin,
                  "Expansion origin: com (centre of mass), mesh (mesh origin) or a point x,y,z in the mesh "
                  "frame (bare: --unit; or each with m, km)")
      ->check(CLI::Validator(
          [](std::string& text) {
            return is_origin_word(text) ? std::string()
                                        : quantity_syntax_error(text, QuantityKind::length, true);
          },
          "com|mesh|X,Y,Z", "origin"))
      ->capture_default_str();
  cmd->add_option("--frame", expansion.frame, "Axes: mesh or principal (principal axes of inertia)")
      ->check(CLI::IsMember({to_string(FrameKind::mesh), to_string(FrameKind::principal)}))
      ->capture_default_str();
  cmd->add_option("--normalization", expansion.normalization, normalization_choices(true))
      ->check(CLI::IsMember(normalization_words()))
      ->capture_default_str();
  cmd->add_flag("--condon-shortley", expansion.condon_shortley, "Include the (-1)^m Condon-Shortley phase");
  cmd->add_flag("--zonal-j", expansion.zonal_as_j, "Write zonal terms as J_n = -C_n0");
  cmd->add_option("--body", expansion.body,
                  "Body label written into the set (default: first mesh file name)");
  add_frame_metadata_options(cmd, expansion.frame_metadata);
}

ComputeOptions compute_options(const ExpansionOptions& expansion, LengthUnit unit,
                               const std::string& first_mesh, std::vector<SummaryRow>& echo) {
  ComputeOptions compute;
  compute.degree = expansion.degree;
  if (!expansion.reference_radius.empty()) {
    const Quantity radius = option_quantity(expansion.reference_radius, QuantityKind::length, unit,
                                            "--ref-radius", Bound::positive);
    compute.reference_radius = radius.value;
    echo.push_back({"reference radius", describe_quantity(radius, QuantityKind::length), ""});
  }
  if (is_origin_word(expansion.origin)) {
    compute.origin = parse_origin_kind(expansion.origin);
  } else {
    compute.origin = OriginKind::point;
    compute.origin_point = option_point(expansion.origin, unit, "--origin");
    const Eigen::Vector3d& p = compute.origin_point;
    echo.push_back({"origin point", fmt::format("({}, {}, {}) m", p.x(), p.y(), p.z()),
                    "given as " + expansion.origin + (unit == LengthUnit::meter ? "" : " (bare: km)")});
  }
  compute.frame = parse_frame_kind(expansion.frame);
  compute.convention.normalization = parse_normalization(expansion.normalization);
  compute.convention.condon_shortley = expansion.condon_shortley;
  compute.convention.zonal_as_j = expansion.zonal_as_j;
  compute.body = expansion.body.empty() ? first_mesh : expansion.body;
  compute.frame_metadata = frame_metadata_of(expansion.frame_metadata);
  check_frame_metadata(compute.frame_metadata);
  if (!compute.frame_metadata.empty())
    echo.push_back({"frame metadata", describe(compute.frame_metadata), ""});
  return compute;
}

void add_set_output_options(CLI::App* cmd, SetOutputOptions& files, const std::string& output_help) {
  cmd->add_option("-o,--output", files.output, output_help)->required();
  const CLI::Validator json_name(
      [](const std::string& path) -> std::string {
        if (path == "-" || coefficient_form_for(path) == CoefficientForm::json) return {};
        return "'" + path +
               "' does not end in .json: --json writes a JSON copy (-o writes the form its own " +
               "name asks for: .json for JSON, any other name our text format)";
      },
      "FILE.json");
  cmd->add_option("--json", files.json,
                  "Also write the set as JSON to this file (a .json name, or - for stdout)")
      ->check(json_name);
}

void check_set_output_paths(const SetOutputOptions& files) {
  check_output_path(files.output);
  if (files.json.empty()) return;
  check_output_path(files.json);
  if (same_output_file(files.output, files.json))
    throw ConventionError("-o " + files.output + " and --json " + files.json + " name the same file");
}

void write_set_files(const CoefficientSet& set, const SetOutputOptions& files) {
  std::vector<CoefficientOutput> outputs{{files.output, coefficient_form_for(files.output)}};
  if (!files.json.empty()) outputs.push_back({files.json, CoefficientForm::json});
  const OutputSection writing;
  write_coefficient_files(set, outputs);
}

void add_threads_option(CLI::App* cmd, int& threads, const std::string& remark) {
  cmd->add_option("--threads", threads, "Worker threads (0 = all cores)" + remark)
      ->check(strict_integer())
      ->check(CLI::NonNegativeNumber)
      ->capture_default_str();
}

void print_verbose(const GlobalOptions& global, int level, const std::string& text) {
  if (!global.quiet && global.verbose >= level) std::fprintf(stderr, "polystokes: %s\n", text.c_str());
}

std::string format_summary(const std::vector<SummaryRow>& rows) {
  // Remarks line up after the values that are short enough to share a column; a long value (a vector, a
  // file list) keeps its remark two spaces behind it rather than pushing every remark to the right.
  constexpr size_t long_value = 40;
  size_t label_width = 0, value_width = 0;
  for (const auto& row : rows) {
    label_width = std::max(label_width, row.label.size());
    if (!row.remark.empty() && row.value.size() <= long_value)
      value_width = std::max(value_width, row.value.size());
  }
  std::string out;
  for (const auto& row : rows) {
    std::string line = fmt::format("  {:<{}}  {}", row.label, label_width, row.value);
    if (!row.remark.empty())
      line += std::string(row.value.size() < value_width ? value_width - row.value.size() + 2 : 2, ' ') +
              row.remark;
    while (!line.empty() && line.back() == ' ') line.pop_back();
    out += line + "\n";
  }
  return out;
}

std::vector<SummaryRow> mass_property_rows(const MassProperties& props, LengthUnit unit) {
  const double u = meters_per(unit);
  const std::string name = to_string(unit);
  std::vector<SummaryRow> rows;
  rows.push_back(
      {"volume", fmt::format("{:.9g} m^3", props.volume),
       unit == LengthUnit::meter ? "" : fmt::format("{:.9g} {}^3", props.volume / (u * u * u), name)});
  rows.push_back({"mass", fmt::format("{:.9g} kg", props.mass), ""});
  rows.push_back({"GM", fmt::format("{:.9g} m^3 s^-2", gravitational_constant * props.mass),
                  fmt::format("G = {} m^3 kg^-1 s^-2 (CODATA 2018)", gravitational_constant)});
  const Eigen::Vector3d& c = props.center_of_mass;
  rows.push_back(
      {"centre of mass", fmt::format("({:.9g}, {:.9g}, {:.9g}) m", c.x(), c.y(), c.z()), "mesh axes"});
  for (int i = 0; i < 3; ++i)
    rows.push_back({i == 0 ? "inertia about COM" : "",
                    fmt::format("[{:>16.9g} {:>16.9g} {:>16.9g} ]{}", props.inertia(i, 0),
                                props.inertia(i, 1), props.inertia(i, 2), i == 2 ? " kg m^2" : ""),
                    i == 0 ? "mesh axes" : ""});
  rows.push_back({"principal moments",
                  fmt::format("{:.9g}, {:.9g}, {:.9g} kg m^2", props.principal_moments[0],
                              props.principal_moments[1], props.principal_moments[2]),
                  ""});
  for (int k = 0; k < 3; ++k)
    rows.push_back({fmt::format("principal axis {}", k + 1),
                    fmt::format("({:+.9f}, {:+.9f}, {:+.9f})", props.principal_axes(0, k),
                                props.principal_axes(1, k), props.principal_axes(2, k)),
                    ""});
  return rows;
}

std::string format_mass_properties(const MassProperties& props, LengthUnit unit) {
  return format_summary(mass_property_rows(props, unit));
}

namespace {

// Only lock-free atomics may be touched from a signal handler (C++17 [support.signal]).
std::atomic<int> open_output_sections{0};
std::atomic<int> deferred_signal{0};
static_assert(std::atomic<int>::is_always_lock_free, "signal handler state must be lock-free");

constexpr int terminating_signals[] = {SIGINT, SIGTERM, SIGHUP};

/// Ends the process by `signal` with the default action, so the parent sees the usual status (e.g. 130).
void die_by(int signal) {
  std::signal(signal, SIG_DFL);
  std::raise(signal);
}

extern "C" void on_terminating_signal(int signal) {
  if (open_output_sections.load() > 0) {
    deferred_signal.store(signal);
    return;
  }
  die_by(signal);
}

}  // namespace

void install_signal_handlers() {
  struct sigaction action {};
  action.sa_handler = on_terminating_signal;
  sigemptyset(&action.sa_mask);
  action.sa_flags = SA_RESTART;  // writes interrupted while deferring resume instead of failing with EINTR
  for (int signal : terminating_signals) {
    struct sigaction previous {};
    // A signal ignored by the parent (nohup, background jobs) stays ignored.
    if (::sigaction(signal, nullptr, &previous) == 0 && previous.sa_handler == SIG_IGN) continue;
    ::sigaction(signal, &action, nullptr);
  }
}

OutputSection::OutputSection() { open_output_sections.fetch_add(1); }

OutputSection::~OutputSection() {
  if (open_output_sections.fetch_sub(1) == 1) {
    const int signal = deferred_signal.exchange(0);
    if (signal != 0) {
      std::fflush(nullptr);  // what was printed so far still reaches the terminal or pipe
      die_by(signal);
    }
  }
}

double elapsed_since(std::chrono::steady_clock::time_point start) {
  return std::chrono::duration<double>(std::chrono::steady_clock::now() - start).count();
}

void add_spin_options(CLI::App* cmd, SpinOptions& spin, bool required) {
  auto* period =
      add_quantity_option(cmd, "--spin-period", spin.period, QuantityKind::time,
                          "Rotation period (uniform rotation about the axis through the centre of mass)");
  if (required) period->required();
  cmd->add_option("--spin-axis", spin.axis,
                  "Rotation axis x,y,z in the mesh frame, right-handed (default 0,0,1: the mesh z axis)");
}

GivenSpin spin_from_options(const SpinOptions& options, LengthUnit unit) {
  GivenSpin given;
  Spin& spin = given.spin;
  const Quantity period =
      option_quantity(options.period, QuantityKind::time, unit, "--spin-period", Bound::positive);
  spin.period = period.value;
  given.period_echo = describe_quantity(period, QuantityKind::time);
  if (!options.axis.empty()) {
    const auto fail = [&] {
      return ConventionError(
          fmt::format("--spin-axis '{}': expected three numbers x,y,z, not all zero", options.axis));
    };
    double values[3];
    size_t start = 0, count = 0;
    while (start <= options.axis.size()) {
      const size_t comma = std::min(options.axis.find(',', start), options.axis.size());
      const auto value = parse_strict_number(std::string_view(options.axis).substr(start, comma - start));
      if (!value || count == 3) throw fail();
      values[count++] = *value;
      start = comma + 1;
    }
    const Eigen::Vector3d axis(values[0], values[1], values[2]);
    if (count != 3 || !(axis.norm() > 0)) throw fail();
    spin.axis = axis.normalized();
  }
  return given;
}

}  // namespace polystokes::cli
