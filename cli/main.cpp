// polystokes: shape mesh -> exact constant-density Stokes coefficients, conversion, comparison, validation.
#include <cstdio>
#include <exception>

#include "commands.h"
#include "errors.h"

int main(int argc, char** argv) {
  using namespace polystokes;
  CLI::App app{"polystokes: gravity fields (Stokes coefficients) of small bodies from shape meshes.\n"
               "Exit codes: 0 ok, 1 usage error, 2 bad input, 3 internal error."};
  app.require_subcommand(1);
  app.fallthrough();  // -q and -v may follow the subcommand name
  cli::GlobalOptions global;
  app.add_flag("-q,--quiet", global.quiet, "Print errors only");
  app.add_flag("-v,--verbose", global.verbose, "Print more detail (repeat for more)");
  cli::setup_inspect(app, global);
  cli::setup_compute(app, global);
  cli::setup_convert(app, global);
  cli::setup_compare(app, global);
  cli::setup_report(app, global);
  cli::setup_uncertainty(app, global);
  cli::setup_field(app, global);
  cli::setup_validate(app, global);
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
  } catch (const std::exception& e) {
    std::fprintf(stderr, "polystokes: internal error: %s\n", e.what());
    return cli::exit_internal;
  }
  return cli::exit_ok;
}
