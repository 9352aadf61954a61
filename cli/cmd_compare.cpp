// polystokes compare: two coefficient sets -> per-degree agreement, verdict and diagnosis of the mismatch.
#include <fmt/format.h>

#include <cstdio>
#include <memory>

#include "cli_common.h"
#include "polystokes/io/coefficient_file.h"
#include "polystokes/io/covariance_file.h"
#include "polystokes/io/output_file.h"
#include "polystokes/render/comparison.h"
#include "polystokes/sets/compare.h"
#include "polystokes/sets/conventions.h"

namespace polystokes::cli {
namespace {

struct CompareCommandOptions {
  std::string a, b, json;
  double tolerance = 1e-6;
  bool align_frames = false;
  int max_degree = -1;
  int largest = 10;
  bool no_diagnosis = false;
};

std::string describe_set(const std::string& path, const CoefficientSet& set) {
  return fmt::format("{} ({}, degree {}, {}, R = {:.9g} m, GM = {:.9g} m^3 s^-2, origin {}, axes {}{})", path,
                     set.body, set.degree, short_name(set.convention), set.reference_radius, set.gm,
                     to_string(set.origin), frame_label(set),
                     set.frame_metadata.empty() ? "" : "; frame " + describe(set.frame_metadata));
}

void run_compare(const CompareCommandOptions& options, const GlobalOptions& global) {
  check_input_path(options.a);
  check_input_path(options.b);
  const CoefficientSet a = read_coefficient_file(options.a);
  const CoefficientSet b = read_coefficient_file(options.b);
  const auto covariance_a = read_companion_covariance(a, options.a);
  const auto covariance_b = read_companion_covariance(b, options.b);
  CompareOptions compare;
  compare.tolerance = options.tolerance;
  compare.align_frame = options.align_frames;
  compare.max_degree = options.max_degree;
  compare.largest_count = options.largest;
  compare.diagnose = !options.no_diagnosis;
  const Comparison result = compare_sets(a, b, compare, covariance_a ? &*covariance_a : nullptr,
                                         covariance_b ? &*covariance_b : nullptr);
  if (!options.json.empty()) write_file_atomically(options.json, comparison_json(result));
  if (global.quiet) return;
  std::FILE* out = options.json == "-" ? stderr : stdout;
  fmt::print(out, "polystokes compare\n  A  {}\n  B  {}\n", describe_set(options.a, a),
             describe_set(options.b, b));
  fmt::print(out, "{}", comparison_text(result));
}

}  // namespace

void setup_compare(CLI::App& app, const GlobalOptions& global) {
  auto options = std::make_shared<CompareCommandOptions>();
  auto* cmd = app.add_subcommand(
      "compare",
      "Compare two coefficient sets degree by degree and name the likely mismatch.\n"
      "B is brought to A's normalization, phase, zonal form, reference radius and GM (and, with\n"
      "--align-frames, to A's origin and axes); per degree the RMS of A, B and A-B, their relative\n"
      "difference and correlation are listed. When they differ, the usual exchange mistakes are tested\n"
      "on B (normalization or phase other than declared, J_n sign, reference radius or GM factor,\n"
      "reversed longitudes, turn about z, swapped C/S, other origin) and ranked by the misfit left.\n"
      "Exit code 0 whether or not they agree; the verdict line starts with AGREE or DIFFER.\n"
      "Example: polystokes compare varnek.txt team_varnek.txt --tolerance 1e-8 --json comparison.json");
  cmd->add_option("a", options->a, "Reference set A (our text or JSON format)")->required();
  cmd->add_option("b", options->b, "Set B, compared with A")->required();
  cmd->add_option("--tolerance", options->tolerance,
                  "Relative RMS difference per degree counted as agreement")
      ->check(strict_number())
      ->check(CLI::NonNegativeNumber)
      ->capture_default_str();
  cmd->add_flag("--align-frames", options->align_frames,
                "Also bring B to A's origin and axes (both recorded against the same mesh)");
  cmd->add_option("--max-degree", options->max_degree,
                  "Highest degree compared (default: the smaller degree)")
      ->check(strict_integer())
      ->check(CLI::NonNegativeNumber);
  cmd->add_option("--largest", options->largest, "How many largest single differences to list")
      ->check(strict_integer())
      ->check(CLI::NonNegativeNumber)
      ->capture_default_str();
  cmd->add_flag("--no-diagnosis", options->no_diagnosis, "Do not test explanations of a difference");
  cmd->add_option("--json", options->json, "Also write the comparison as JSON to this file (- for stdout)");
  cmd->callback([options, &global]() { run_compare(*options, global); });
}

}  // namespace polystokes::cli
