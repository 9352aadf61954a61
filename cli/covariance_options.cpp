#include "covariance_options.h"

#include <fmt/format.h>

#include "polystokes/core/errors.h"
#include "polystokes/io/output_file.h"

namespace polystokes::cli {

void add_covariance_file_options(CLI::App* cmd, CovarianceFileOptions& options) {
  cmd->add_option("--covariance-output", options.output,
                  "Covariance companion file (default: the -o name with .cov.txt or .cov.bin)");
  cmd->add_option("--covariance-format", options.format,
                  "Covariance values as text (round-trip decimals) or binary (little-endian doubles)")
      ->check(CLI::IsMember({"text", "binary"}))
      ->capture_default_str();
}

std::string covariance_output_path(const CovarianceFileOptions& options, const SetOutputOptions& files) {
  const CovarianceFormat format =
      options.format == "binary" ? CovarianceFormat::binary : CovarianceFormat::text;
  const std::string path = !options.output.empty() ? options.output
                           : files.output == "-"   ? std::string()
                                                   : companion_covariance_path(files.output, format);
  if (path.empty()) return path;
  check_output_path(path);
  for (const std::string& other : {files.output, files.json})
    if (!other.empty() && same_output_file(path, other))
      throw ConventionError("the covariance file " + path + " and the set output " + other + " are one file");
  return path;
}

std::string describe_covariance_size(int degree, long samples) {
  return fmt::format("degrees 0..{}, {} parameters, {:.3g} MB{}", degree, covariance_parameter_count(degree),
                     covariance_bytes(degree) / 1e6,
                     samples > 0 ? fmt::format("; from {} samples its rank is at most {}", samples, samples)
                                 : std::string());
}

void write_set_and_covariance(CoefficientSet set, const SetOutputOptions& files,
                              const std::optional<CoefficientCovariance>& covariance,
                              const std::string& covariance_path, const CovarianceFileOptions& options,
                              const GlobalOptions& global) {
  drop_covariance_link(set);
  if (covariance && covariance_path.empty())
    print_notice(global,
                 "the set goes to standard output, so its covariance is not written (give "
                 "--covariance-output FILE to keep it)");
  if (!covariance || covariance_path.empty()) {
    if (covariance) apply_covariance_sigmas(set, *covariance);
    write_set_files(set, files);
    return;
  }
  std::vector<CoefficientOutput> outputs{{files.output, coefficient_form_for(files.output)}};
  if (!files.json.empty()) outputs.push_back({files.json, CoefficientForm::json});
  const OutputSection writing;
  write_set_with_covariance(
      set, outputs, *covariance,
      {covariance_path, options.format == "binary" ? CovarianceFormat::binary : CovarianceFormat::text});
}

}  // namespace polystokes::cli
