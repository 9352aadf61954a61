// Numeric command-line options under the one unit rule (docs/units.md): checked while the options are parsed,
// so a malformed value is a usage error, then interpreted once the command's --unit is known.
#pragma once

#include <CLI/CLI.hpp>
#include <string>
#include <vector>

#include "polystokes/core/quantity.h"

namespace polystokes::cli {

/// CLI11 check of a dimensionless number: the strict number rule of parse_strict_number (no blanks, nan,
/// inf or hexadecimal), so a command-line number reads as it would in a file.
CLI::Validator strict_number();

/// CLI11 check of a whole number: optional sign and decimal digits only (CLI11 alone would read "0x10" as 16
/// and "010" as 8).
CLI::Validator strict_integer();

/// CLI11 check of a quantity of `kind` (a comma-separated list of them when `list`).
CLI::Validator quantity_syntax(QuantityKind kind, bool list = false);

/// Registers an option whose text is a quantity of `kind`, with `help` followed by the bare unit's rule.
CLI::Option* add_quantity_option(CLI::App* cmd, const std::string& name, std::string& text, QuantityKind kind,
                                 const std::string& help);

/// What a quantity option must satisfy beyond its syntax.
enum class Bound { any, positive, non_negative };

/// The option's text interpreted (a bare length in `unit`); throws ConventionError "OPTION: ..." when it
/// breaks `bound`.
Quantity option_quantity(const std::string& text, QuantityKind kind, LengthUnit unit,
                         const std::string& option, Bound bound = Bound::any);

/// A comma-separated vector of three lengths ("x,y,z", in `unit` unless each carries a suffix), in metres.
Eigen::Vector3d option_point(const std::string& text, LengthUnit unit, const std::string& option);

}  // namespace polystokes::cli
