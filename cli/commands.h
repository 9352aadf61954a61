// Subcommands of the polystokes executable: each cli/cmd_<name>.cpp parses its own options and calls the
// library. main.cpp only wires them up and maps error families to exit codes.
#pragma once

#include <CLI/CLI.hpp>
#include <string>

namespace polystokes::cli {

/// Options every command shares.
struct GlobalOptions {
  bool quiet = false;  ///< -q: only errors
  int verbose = 0;     ///< -v: more detail (repeatable)
};

/// Exit codes, documented in README.md.
enum ExitCode { exit_ok = 0, exit_usage = 1, exit_bad_input = 2, exit_internal = 3 };

void setup_inspect(CLI::App& app, const GlobalOptions& global);
void setup_compute(CLI::App& app, const GlobalOptions& global);
void setup_convert(CLI::App& app, const GlobalOptions& global);
void setup_export(CLI::App& app, const GlobalOptions& global);
void setup_compare(CLI::App& app, const GlobalOptions& global);
void setup_report(CLI::App& app, const GlobalOptions& global);
void setup_uncertainty(CLI::App& app, const GlobalOptions& global);
void setup_field(CLI::App& app, const GlobalOptions& global);
void setup_validate(CLI::App& app, const GlobalOptions& global);
void setup_surface(CLI::App& app, const GlobalOptions& global);

}  // namespace polystokes::cli
