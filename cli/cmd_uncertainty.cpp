// polystokes uncertainty / uncertainty-merge: Monte Carlo sigmas and notes for a coefficient set, in one run
// or in shards that a batch scheduler runs anywhere and a merge step combines bit-identically.
#include <fmt/format.h>

#include <chrono>
#include <cstdio>
#include <memory>

#include "cli_common.h"
#include "covariance_options.h"
#include "polystokes/core/constants.h"
#include "polystokes/core/errors.h"
#include "polystokes/io/coefficient_file.h"
#include "polystokes/io/output_file.h"
#include "polystokes/io/shard_file.h"
#include "polystokes/sets/conventions.h"
#include "polystokes/uncertainty/uncertainty.h"

namespace polystokes::cli {
namespace {

// Quantities as given; empty = not given.
struct InclusionOptions {
  std::string radius;    // length
  std::string contrast;  // density
  std::string center;    // "x,y,z" lengths
  std::string offset;    // length
};

// The covariance a run writes: up to --covariance-degree (0: none), beside -o.
struct CovarianceRequest {
  int degree = 30;
  CovarianceFileOptions files;
};

struct UncertaintyCommandOptions {
  MeshInputOptions input;
  ExpansionOptions expansion;
  long samples = 100;
  std::uint64_t seed = 1;
  std::string shape_sigma = "0";         // length
  std::string correlation_length = "0";  // length
  double density_sigma = 0;
  InclusionOptions core, cavity;
  double lateral_sigma = 0;
  int lateral_sectors = 42;
  bool preserve_mass = false;
  std::string shard;
  SetOutputOptions files;
  CovarianceRequest covariance;
  int threads = 0;
};

struct MergeCommandOptions {
  std::vector<std::string> shards;
  SetOutputOptions files;
  CovarianceRequest covariance;
};

void add_covariance_request(CLI::App* cmd, CovarianceRequest& request) {
  cmd->add_option(
         "--covariance-degree", request.degree,
         "Write the full covariance of the parameters of degrees 0..N (capped at --degree; 0 = none; "
         "memory (N+1)^4 doubles, at most 1 GiB; a shard keeps every sample, so give it to the merge)")
      ->check(strict_integer())
      ->check(CLI::NonNegativeNumber)
      ->capture_default_str();
  add_covariance_file_options(cmd, request.files);
}

// The covariance degree of a set of degree `set_degree` (-1: none), refused before any work above the memory
// limit, with its size announced.
int planned_covariance_degree(const CovarianceRequest& request, int set_degree, long samples,
                              const GlobalOptions& global) {
  if (request.degree == 0) return -1;
  const int degree = std::min(request.degree, set_degree);
  try {
    check_covariance_degree(degree);
  } catch (const ResourceError& e) {
    throw ResourceError(std::string(e.what()) + ": give a lower --covariance-degree (0 = none)");
  }
  print_notice(global, "covariance: " + describe_covariance_size(degree, samples));
  return degree;
}

void print_covariance_row(std::FILE* out, const std::optional<CoefficientCovariance>& covariance,
                          const std::string& path) {
  if (covariance && !path.empty())
    fmt::print(out, "  covariance         {}: {}\n", path,
               describe_covariance_size(covariance->degree, covariance->samples));
}

std::function<void(long, long)> progress_printer(const GlobalOptions& global) {
  if (!progress_wanted(global)) return {};
  return [](long done, long total) {
    print_progress(fmt::format("sample {} of {}", done, total), done == total);
  };
}

std::optional<Inclusion> make_inclusion(const InclusionOptions& given, bool empty, LengthUnit unit) {
  const std::string name = empty ? "void" : "core";
  if (given.radius.empty()) {
    if (!given.center.empty() || !given.offset.empty() || !given.contrast.empty())
      throw ConventionError(fmt::format("--{0}-center/--{0}-offset{1} need --{0}-radius", name,
                                        empty ? "" : "/--core-contrast"));
    return std::nullopt;
  }
  Inclusion inclusion;
  inclusion.empty = empty;
  inclusion.radius =
      option_quantity(given.radius, QuantityKind::length, unit, "--" + name + "-radius", Bound::positive)
          .value;
  if (!empty) {
    const double contrast =
        given.contrast.empty()
            ? 0
            : option_quantity(given.contrast, QuantityKind::density, unit, "--core-contrast").value;
    if (contrast == 0) throw ConventionError("--core-radius needs --core-contrast (kg/m^3, non-zero)");
    inclusion.contrast = contrast;
  }
  if (!given.center.empty()) inclusion.center = option_point(given.center, unit, "--" + name + "-center");
  if (!given.offset.empty())
    inclusion.offset = option_quantity(given.offset, QuantityKind::length, unit, "--" + name + "-offset",
                                       Bound::non_negative)
                           .value;
  return inclusion;
}

void print_settings(std::FILE* out, const UncertaintySettings& s, const std::string& body, int degree) {
  fmt::print(out, "polystokes uncertainty: {}\n", body);
  fmt::print(out,
             "  samples            {}, seed {} (sample i draws from (seed, i): reproducible, splittable)\n",
             s.samples, s.seed);
  fmt::print(out, "  degree             {}\n", degree);
  if (s.shape.sigma > 0)
    fmt::print(out, "  shape noise        sigma {} m along vertex normals, {}\n", s.shape.sigma,
               s.shape.correlation_length > 0
                   ? fmt::format("correlation length {} m", s.shape.correlation_length)
                   : std::string("independent per vertex"));
  if (s.density_sigma > 0) fmt::print(out, "  density scale      relative sigma {}\n", s.density_sigma);
  for (const auto& inclusion : s.inclusions) {
    const Eigen::Vector3d c = *inclusion.center;
    fmt::print(out, "  {:<18} radius {} m, {}, centre ({:.9g}, {:.9g}, {:.9g}) m{}\n",
               inclusion.empty ? "void" : "core", inclusion.radius,
               inclusion.empty ? std::string("empty") : fmt::format("contrast {} kg/m^3", inclusion.contrast),
               c.x(), c.y(), c.z(),
               inclusion.offset > 0 ? fmt::format(", anywhere within {} m", inclusion.offset) : "");
  }
  if (s.lateral.sigma > 0)
    fmt::print(out, "  lateral density    {} cones, relative sigma {}\n", s.lateral.sectors, s.lateral.sigma);
  if (s.preserve_mass)
    fmt::print(out, "  mass               preserved (density outside inclusions rescaled)\n");
}

void print_summary(std::FILE* out, const UncertaintyResult& result) {
  const UncertaintySummary& s = result.summary;
  fmt::print(out, "  GM                 {:.12g} m^3 s^-2, sigma {:.6g} ({:.3g} relative)\n", s.gm, s.gm_sigma,
             s.gm_sigma / s.gm);
  fmt::print(out, "  centre of mass     RMS scatter {:.6g}, {:.6g}, {:.6g} m along the set's axes\n",
             s.com_sigma.x(), s.com_sigma.y(), s.com_sigma.z());
  fmt::print(out, "  Brillouin radius   {:.9g} m nominal, sampled shapes reach {:.9g} m\n",
             result.set.brillouin_radius, s.max_brillouin_radius);
  std::string ratios;
  for (Eigen::Index n = 2; n < s.degree_ratio.size(); ++n)
    ratios += fmt::format(" {}:{:.2g}", n, s.degree_ratio(n));
  if (!ratios.empty()) fmt::print(out, "  sigma / signal     by degree (RMS over orders){}\n", ratios);
  std::string isolated;
  for (const int n : s.isolated) isolated += fmt::format(" {}", n);
  fmt::print(out, "  dominated by noise {}{}\n",
             s.dominated_from >= 0 ? fmt::format("degrees {} to {} (sigma > 10% of the coefficients at each)",
                                                 s.dominated_from, s.degree_ratio.size() - 1)
                                   : std::string("no range up to the maximum degree"),
             isolated.empty() ? std::string() : "; also degree(s)" + isolated + " (small coefficients)");
}

void run_uncertainty_command(const UncertaintyCommandOptions& options, const GlobalOptions& global) {
  const auto start = std::chrono::steady_clock::now();
  const MeshInputOptions& input = options.input;
  const SetOutputOptions& files = options.files;
  for (const auto& path : input.meshes) check_input_path(path);
  if (options.shard.empty()) {
    check_set_output_paths(files);
  } else {
    check_output_path(files.output);
    if (coefficient_form_for(files.output) == CoefficientForm::json)
      throw ConventionError("--shard writes a shard file in our text form, but -o " + files.output +
                            " asks for JSON: give the shard another name (the merged set may be .json)");
  }
  const LengthUnit unit = parse_unit_option(input.unit);
  // Every option is interpreted before the first mesh is read, so a slip costs no reading time.
  std::vector<SummaryRow> echo;
  ComputeOptions compute = compute_options(options.expansion, unit, input.meshes.front(), echo);
  compute.execution.threads = options.threads;
  UncertaintySettings settings;
  settings.samples = options.samples;
  settings.seed = options.seed;
  settings.shape.sigma =
      option_quantity(options.shape_sigma, QuantityKind::length, unit, "--shape-sigma", Bound::non_negative)
          .value;
  settings.shape.correlation_length = option_quantity(options.correlation_length, QuantityKind::length, unit,
                                                      "--correlation-length", Bound::non_negative)
                                          .value;
  settings.density_sigma = options.density_sigma;
  if (auto core = make_inclusion(options.core, false, unit)) settings.inclusions.push_back(*core);
  if (auto cavity = make_inclusion(options.cavity, true, unit)) settings.inclusions.push_back(*cavity);
  const std::vector<DensityRegion> regions = load_regions(input, global);
  settings.lateral.sigma = options.lateral_sigma;
  settings.lateral.sectors = options.lateral_sectors;
  settings.preserve_mass = options.preserve_mass;
  std::optional<Shard> shard;
  if (!options.shard.empty()) {
    shard = parse_shard(options.shard);
    if (!files.json.empty())
      throw ConventionError("--json needs the merged set: give it to uncertainty-merge");
  }

  const std::string covariance_path = shard || options.covariance.degree == 0
                                          ? std::string()
                                          : covariance_output_path(options.covariance.files, files);
  const int covariance_degree =
      shard ? -1 : planned_covariance_degree(options.covariance, compute.degree, settings.samples, global);
  const UncertaintyPlan plan = plan_uncertainty(regions, compute, settings);
  SampleOptions execution;
  execution.threads = options.threads;
  execution.progress = progress_printer(global);
  std::FILE* out = files.output == "-" ? stderr : stdout;

  if (shard) {
    const UncertaintyShard part = run_shard(plan, *shard, execution);
    write_file_atomically(files.output, format_shard_text(part));
    if (global.quiet) return;
    print_settings(out, plan.settings, plan.nominal.body, plan.nominal.degree);
    for (const SummaryRow& row : echo) fmt::print(out, "  {:<18} {}\n", row.label, row.value);
    fmt::print(out, "  shard              {}/{}: {} of the {} samples\n", shard->index, shard->count,
               part.samples.size(), settings.samples);
    fmt::print(out, "  written            {} (combine all {} shards with polystokes uncertainty-merge)\n",
               files.output, shard->count);
  } else {
    const UncertaintyResult result = run_uncertainty(plan, execution, covariance_degree);
    write_set_and_covariance(result.set, files, result.covariance, covariance_path, options.covariance.files,
                             global);
    if (global.quiet) return;
    print_settings(out, plan.settings, plan.nominal.body, plan.nominal.degree);
    for (const SummaryRow& row : echo) fmt::print(out, "  {:<18} {}\n", row.label, row.value);
    print_summary(out, result);
    print_covariance_row(out, result.covariance, covariance_path);
    fmt::print(out, "  written            {}{}\n", files.output,
               files.json.empty() ? "" : " and " + files.json);
  }
  const double seconds = std::chrono::duration<double>(std::chrono::steady_clock::now() - start).count();
  fmt::print(out, "  time               {:.3f} s\n", seconds);
  fmt::print(out, "{}\n", operational_caution());
}

void run_merge_command(const MergeCommandOptions& options, const GlobalOptions& global) {
  for (const auto& path : options.shards) check_input_path(path);
  check_set_output_paths(options.files);
  const SetOutputOptions& files = options.files;
  const std::string covariance_path = options.covariance.degree == 0
                                          ? std::string()
                                          : covariance_output_path(options.covariance.files, files);
  std::vector<UncertaintyShard> shards;
  for (const auto& path : options.shards) shards.push_back(parse_shard_text(read_file(path), path));
  const UncertaintyShard& first = shards.front();
  const int covariance_degree =
      planned_covariance_degree(options.covariance, first.nominal.degree, first.settings.samples, global);
  const UncertaintyResult result = merge_shards(shards, options.shards, covariance_degree);
  write_set_and_covariance(result.set, files, result.covariance, covariance_path, options.covariance.files,
                           global);
  if (global.quiet) return;
  std::FILE* out = files.output == "-" ? stderr : stdout;
  print_settings(out, shards.front().settings, result.set.body, result.set.degree);
  fmt::print(out, "  merged             {} shard file(s)\n", shards.size());
  print_summary(out, result);
  print_covariance_row(out, result.covariance, covariance_path);
  fmt::print(out, "  written            {}{}\n", files.output,
             files.json.empty() ? "" : " and " + files.json);
  fmt::print(out, "{}\n", operational_caution());
}

void add_inclusion_options(CLI::App* cmd, InclusionOptions& inclusion, bool empty) {
  const std::string name = empty ? "void" : "core";
  add_quantity_option(cmd, "--" + name + "-radius", inclusion.radius, QuantityKind::length,
                      "Radius of a " + std::string(empty ? "spherical void (empty)" : "spherical core"));
  if (!empty)
    add_quantity_option(cmd, "--core-contrast", inclusion.contrast, QuantityKind::density,
                        "Density added inside the core (negative: a lighter core)");
  cmd->add_option("--" + name + "-center", inclusion.center,
                  "Centre x,y,z in the mesh frame (bare: --unit; or each with m, km; default: the centre of "
                  "mass)")
      ->check(quantity_syntax(QuantityKind::length, true));
  add_quantity_option(cmd, "--" + name + "-offset", inclusion.offset, QuantityKind::length,
                      "Draw the centre anywhere within this distance of --" + name +
                          "-center in each sample (always inside the body)");
}

}  // namespace

void setup_uncertainty(CLI::App& app, const GlobalOptions& global) {
  auto options = std::make_shared<UncertaintyCommandOptions>();
  auto* cmd = app.add_subcommand(
      "uncertainty",
      "Monte Carlo sigma_C, sigma_S and uncertainty notes for the coefficients of a shape mesh.\n"
      "Varies the shape (vertex noise), the density scale, and interior scenarios (core, void, lateral).\n"
      "Lengths are in the mesh unit (--unit). With --shard i/k only samples i-1, i-1+k, ... are run and a\n"
      "shard file is written; uncertainty-merge combines all k into the same set as one run.\n"
      "Example: polystokes uncertainty body.obj --unit km --density 1900 --degree 12 --samples 200 --seed 7\n"
      "         --shape-sigma 0.02 --correlation-length 0.3 -o body_sigma.txt");
  // There is no --gm/--mass alternative here: every mesh needs its density.
  add_mesh_list_options(cmd, options->input).densities->required();
  add_degree_option(cmd, options->expansion.degree);
  add_mesh_file_options(cmd, options->input.unit, options->input.merge_tolerance, options->input.format,
                        "Length unit of the mesh files and of every length option: m or km");
  add_expansion_options(cmd, options->expansion);
  cmd->add_option("--samples", options->samples, "Number of Monte Carlo samples (>= 2)")
      ->check(strict_integer())
      ->check(CLI::Range(2L, 100000000L))
      ->capture_default_str();
  cmd->add_option("--seed", options->seed, "Random seed (recorded in the set)")
      ->check(strict_integer())
      ->capture_default_str();
  add_quantity_option(cmd, "--shape-sigma", options->shape_sigma, QuantityKind::length,
                      "Standard deviation of each vertex's displacement along its normal")
      ->capture_default_str();
  add_quantity_option(cmd, "--correlation-length", options->correlation_length, QuantityKind::length,
                      "Correlation length L of the shape noise, covariance sigma^2 exp(-d^2/(2L^2)); 0 = "
                      "independent vertices")
      ->capture_default_str();
  cmd->add_option("--density-sigma", options->density_sigma,
                  "Relative standard deviation of the density scale, hence of GM (< 0.25)")
      ->check(strict_number())
      ->check(CLI::NonNegativeNumber);
  add_inclusion_options(cmd, options->core, false);
  add_inclusion_options(cmd, options->cavity, true);
  cmd->add_option("--lateral-sigma", options->lateral_sigma,
                  "Relative density sigma of each cone from the origin (random lateral variation, < 0.25)")
      ->check(strict_number())
      ->check(CLI::NonNegativeNumber);
  cmd->add_option("--lateral-sectors", options->lateral_sectors, "Number of cones: 12, 42, 162, 642 or 2562")
      ->check(CLI::IsMember({12, 42, 162, 642, 2562}))
      ->capture_default_str();
  cmd->add_flag("--preserve-mass", options->preserve_mass,
                "Keep each sample's mass: the density outside cores and voids is rescaled (GM known)");
  cmd->add_option("--shard", options->shard, "Run only shard i of k (i = 1..k) and write a shard file to -o");
  add_set_output_options(cmd, options->files, "Coefficient file (or shard file with --shard) to write");
  add_covariance_request(cmd, options->covariance);
  add_threads_option(cmd, options->threads, "; results do not depend on it");
  cmd->callback([options, &global]() { run_uncertainty_command(*options, global); });

  auto merge_options = std::make_shared<MergeCommandOptions>();
  auto* merge = app.add_subcommand(
      "uncertainty-merge",
      "Combine the shard files of one `uncertainty --shard i/k` run into the coefficient set with sigmas.\n"
      "All shards must come from the same mesh and settings and together hold every sample exactly once;\n"
      "the result is bit-identical to a single run with the same seed and sample count.\n"
      "Example: polystokes uncertainty-merge part1.shard part2.shard part3.shard -o body_sigma.txt");
  merge->add_option("shards", merge_options->shards, "Shard files, in any order")->required();
  add_set_output_options(merge, merge_options->files);
  add_covariance_request(merge, merge_options->covariance);
  merge->callback([merge_options, &global]() { run_merge_command(*merge_options, global); });
}

}  // namespace polystokes::cli
