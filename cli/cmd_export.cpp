// polystokes export: a coefficient set -> a plain table in the receiver's declared conventions.
#include <fmt/format.h>

#include <cstdio>
#include <memory>

#include "cli_common.h"
#include "polystokes/core/constants.h"
#include "polystokes/core/errors.h"
#include "polystokes/io/coefficient_file.h"
#include "polystokes/io/covariance_file.h"
#include "polystokes/io/output_file.h"
#include "polystokes/io/table_export.h"
#include "polystokes/sets/conventions.h"
#include "table_options.h"

namespace polystokes::cli {
namespace {

struct ExportCommandOptions {
  std::string input, output;
  std::string unit = "m";  // of every bare length given on the command line
  TableConventionOptions table;
  int max_degree = -1;
  std::string separator = "blank";
  int digits = 0;
  std::string covariance;  // empty: none
  std::string covariance_format = "text";
};

// The set's companion covariance in the table's conventions: the same steps as the table (set_for_table),
// applied to the covariance as C' = T C T^T.
CoefficientCovariance table_covariance(const CoefficientSet& set, const std::string& set_path,
                                       const TableExportOptions& table_options) {
  const auto covariance = read_companion_covariance(set, set_path);
  if (!covariance)
    throw ConventionError(set_path +
                          " records no covariance companion, so --covariance has nothing to write");
  return transform_covariance(*covariance, set, [&](const CoefficientSet& s) {
    TableExportOptions cut = table_options;
    if (cut.max_degree > s.degree) cut.max_degree = s.degree;  // a covariance below the table's degree
    return set_for_table(s, cut);
  });
}

void run_export(const ExportCommandOptions& options, const GlobalOptions& global) {
  check_input_path(options.input);
  check_output_path(options.output);
  const LengthUnit unit = parse_unit_option(options.unit);
  std::vector<std::string> echo{"unit " + to_string(unit) + " (bare lengths)"};
  TableExportOptions table_options;
  static_cast<TableConventions&>(table_options) =
      table_conventions_of(options.table, unit, parse_column_words, echo);
  table_options.max_degree = options.max_degree;
  table_options.separator = options.separator == "comma" ? ',' : ' ';
  table_options.digits = options.digits;
  if (!options.covariance.empty()) {
    check_output_path(options.covariance);
    if (same_output_file(options.covariance, options.output))
      throw ConventionError("--covariance " + options.covariance + " and -o name the same file");
  }
  const CoefficientSet set = read_coefficient_file(options.input);
  if (options.covariance.empty()) {
    write_table(options.output, set, table_options);
  } else {
    // Table and covariance both or neither.
    const CoefficientCovariance covariance = table_covariance(set, options.input, table_options);
    const OutputSection writing;
    OutputGroup group;
    group.stage(options.output, format_table(set, table_options));
    group.stage(options.covariance, format_covariance(covariance, options.covariance_format == "binary"
                                                                      ? CovarianceFormat::binary
                                                                      : CovarianceFormat::text));
    group.commit();
  }
  if (global.quiet) return;
  std::FILE* out = options.output == "-" ? stderr : stdout;
  fmt::print(out, "polystokes export: {} ({}, degree {}, {})\n", options.input, set.body, set.degree,
             describe(set.convention));
  fmt::print(out, "  declared           {}\n", fmt::join(echo, "; "));
  fmt::print(out, "  table              {}, degrees 0..{}, columns {}, {}\n",
             describe(declared_convention(table_options)),
             options.max_degree >= 0 ? options.max_degree : set.degree, to_string(table_options.columns),
             options.digits == 0 ? std::string("round-trip digits")
                                 : fmt::format("{} significant digits", options.digits));
  fmt::print(out, "  written            {}{}\n", options.output,
             options.covariance.empty()
                 ? std::string()
                 : " and the covariance in the table's conventions to " + options.covariance);
  fmt::print(out, "{}\n", operational_caution());
}

}  // namespace

void setup_export(CLI::App& app, const GlobalOptions& global) {
  auto options = std::make_shared<ExportCommandOptions>();
  auto* cmd = app.add_subcommand(
      "export",
      "Write a coefficient set as a plain table in the receiver's conventions, each declared with the same\n"
      "options as convert's table import; a declared --ref-radius or --gm other than the set's rescales the\n"
      "numbers as convert does. The '#' header states the conventions, origin, axes and frame metadata in\n"
      "words and the convert command that reads the table back.\n"
      "Example: polystokes export varnek.txt -o varnek.tab --columns n,m,C,S --normalization unnormalized\n"
      "      --no-condon-shortley --zonal-j --ref-radius 2.5 --gm 5.08e-7km3/s2 --unit km --separator comma");
  cmd->add_option("set", options->input, "Coefficient set (text or JSON; - for stdin)")->required();
  cmd->add_option("-o,--output", options->output, "Table file to write (- for stdout)")->required();
  cmd->add_option("--unit", options->unit,
                  "Unit of bare lengths given here: m or km (GM is m^3 s^-2 unless it carries a unit)")
      ->check(CLI::IsMember({"m", "km"}))
      ->capture_default_str();
  auto* table =
      cmd->add_option_group("table", "The table's conventions (all that change the numbers are required)");
  add_table_convention_options(table, options->table);
  cmd->add_option("--max-degree", options->max_degree, "Write degrees 0 to this (default: the set's degree)")
      ->check(strict_integer())
      ->check(CLI::NonNegativeNumber);
  cmd->add_option("--separator", options->separator, "Between columns: blank or comma")
      ->check(CLI::IsMember({"blank", "comma"}))
      ->capture_default_str();
  cmd->add_option("--digits", options->digits,
                  "Significant digits of C, S and sigmas, 1 to 17 (exponent form); 0: round trip (%.17g)")
      ->check(strict_integer())
      ->check(CLI::Range(0, 17))
      ->capture_default_str();
  cmd->add_option(
      "--covariance", options->covariance,
      "Also write the set's covariance companion in the table's conventions (C' = T C T^T) to this "
      "file (docs/uncertainty.md; the table's sigma columns are converted as before)");
  cmd->add_option("--covariance-format", options->covariance_format, "That file's values: text or binary")
      ->check(CLI::IsMember({"text", "binary"}))
      ->capture_default_str();
  cmd->callback([options, &global]() { run_export(*options, global); });
}

}  // namespace polystokes::cli
