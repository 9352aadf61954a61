// polystokes: shape mesh -> exact constant-density Stokes coefficients, conversion, comparison, validation.
#include <cstdio>
#include <exception>
#include <new>

#include "cli_common.h"
#include "commands.h"
#include "polystokes/core/errors.h"

int main(int argc, char** argv) {
  using namespace polystokes;
  CLI::App app{
      "polystokes: gravity fields (Stokes coefficients) of small bodies from shape meshes.\n"
      "Run `polystokes COMMAND --help` for a command's options and a worked example."};
  app.footer(
      "Exit codes: 0 ok; 1 usage error (unknown option, missing or malformed argument); 2 bad input (a "
      "mesh,\n"
      "file, convention or parameter that cannot be used, or a request that would exceed memory); 3 "
      "internal\n"
      "error. Output files are written whole or not at all: a failed or interrupted run leaves the previous\n"
      "file as it was. \"-\" as an output file means standard output; as an input, standard input where the\n"
      "command's help says so.\n\n"
      "Caution: a constant-density, shape-derived gravity field is a model. Validate it against tracking "
      "data\n"
      "and review it under the mission's own procedures before any operational use.");
  app.require_subcommand(1);
  app.fallthrough();  // -q and -v may follow the subcommand name
  cli::GlobalOptions global;
  app.add_flag("-q,--quiet", global.quiet, "Print errors only");
  app.add_flag("-v,--verbose", global.verbose, "Print more detail (repeat for more)");
  // The same version every written set records in its provenance ("created").
  app.set_version_flag("--version", std::string("polystokes ") + POLYSTOKES_VERSION);
  cli::setup_inspect(app, global);
  cli::setup_compute(app, global);
  cli::setup_convert(app, global);
  cli::setup_export(app, global);
  cli::setup_compare(app, global);
  cli::setup_report(app, global);
  cli::setup_uncertainty(app, global);
  cli::setup_field(app, global);
  cli::setup_validate(app, global);
  cli::setup_surface(app, global);
  cli::install_signal_handlers();
  try {
    app.parse(argc, argv);
  } catch (const CLI::ParseError& e) {
    const int code = app.exit(e);
    return code == 0 ? cli::exit_ok : cli::exit_usage;
  } catch (const ResourceError& e) {
    std::fprintf(stderr, "polystokes: error: %s\n", e.what());
    return cli::exit_bad_input;
  } catch (const Error& e) {
    std::fprintf(stderr, "polystokes: error: %s\n", e.what());
    return cli::exit_bad_input;
  } catch (const std::bad_alloc&) {
    // Estimates refuse most oversized requests up front; this is the last line for the rest.
    std::fprintf(
        stderr, "polystokes: error: out of memory (the input or the degree is too large for this machine)\n");
    return cli::exit_bad_input;
  } catch (const std::exception& e) {
    std::fprintf(stderr, "polystokes: internal error: %s\n", e.what());
    return cli::exit_internal;
  }
  return cli::exit_ok;
}
