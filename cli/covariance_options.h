// The covariance companion of a written set: the options that name and shape it (uncertainty,
// uncertainty-merge, convert) and the paired writing of set and covariance (both or neither).
#pragma once

#include <optional>
#include <string>

#include "cli_common.h"
#include "polystokes/io/covariance_file.h"

namespace polystokes::cli {

/// Where and how a covariance companion is written.
struct CovarianceFileOptions {
  std::string output;           ///< empty: the companion name of -o (set.txt -> set.cov.txt)
  std::string format = "text";  ///< "text" or "binary"
};

/// Registers --covariance-output and --covariance-format.
void add_covariance_file_options(CLI::App* cmd, CovarianceFileOptions& options);

/// The companion file for the set outputs: --covariance-output, else the companion name of -o; empty when -o
/// is standard output and no --covariance-output is given (no file name to derive). Checked writable.
std::string covariance_output_path(const CovarianceFileOptions& options, const SetOutputOptions& files);

/// "degrees 0..N, P parameters, X MB" and, with samples, "; from K samples its rank is at most K".
std::string describe_covariance_size(int degree, long samples);

/// Writes the set files, and with a covariance and a companion path also the covariance, as one group (both
/// or neither; the set records the companion's name and SHA-256 and takes its sigmas from the diagonal). A
/// covariance without a path is not written and a notice says so; the set then records no companion.
void write_set_and_covariance(CoefficientSet set, const SetOutputOptions& files,
                              const std::optional<CoefficientCovariance>& covariance,
                              const std::string& covariance_path, const CovarianceFileOptions& options,
                              const GlobalOptions& global);

}  // namespace polystokes::cli
