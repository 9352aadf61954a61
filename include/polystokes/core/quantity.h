// Numbers and physical quantities given by people: the one strict number rule and the unit grammar that every
// command option and every input-file header follows (docs/units.md).
#pragma once

#include <optional>
#include <string>
#include <string_view>
#include <vector>

#include "polystokes/core/mesh.h"

namespace polystokes {

/// What a value measures. Each kind has a bare unit (the unit of a value written without a suffix) and a
/// base unit (the unit of the parsed value):
///  - length:  bare = the command's --unit (m or km), base m; suffixes m, km
///  - gm:      bare = base = m^3 s^-2; suffixes m3/s2, km3/s2 (also written m^3/s^2, km^3/s^2)
///  - mass:    bare = base = kg; suffix kg
///  - density: bare = base = kg m^-3; suffixes kg/m3, g/cm3 (also kg/m^3, g/cm^3)
///  - time:    bare = base = s; suffixes s, min, h, d
///  - angle:   bare = base = degree; suffixes deg, rad
enum class QuantityKind { length, gm, mass, density, time, angle };

/// Name of a kind as used in messages: "length", "GM", "mass", "density", "time", "angle".
std::string to_string(QuantityKind kind);

/// The base unit of a kind as printed: "m", "m^3 s^-2", "kg", "kg m^-3", "s", "deg".
std::string base_unit(QuantityKind kind);

/// The one strict number rule: optional sign, decimal digits with an optional point, optional exponent
/// (e or E, optional sign, digits); nothing else (no blanks, nan, inf, hexadecimal, Fortran D). Converted
/// with correct rounding (std::from_chars). Returns nullopt when `text` is not such a number or overflows
/// double. O(length).
std::optional<double> parse_strict_number(std::string_view text);

/// Outcome of read_strict_number.
enum class NumberStatus { ok, malformed, not_finite, out_of_range };

/// The strict number rule of parse_strict_number with the reason of a refusal: malformed (not of the
/// rule's shape), not_finite (a spelling of infinity or NaN, as strtod reads them) or out_of_range (of the
/// rule's shape, but beyond the range of double). `value` is set on ok only.
/// The one implementation of the rule: parse_strict_number and the text scanner (src/io/text_scanner.h) use
/// it.
NumberStatus read_strict_number(std::string_view text, double& value);

/// A value as parsed: in the kind's base unit, with what was written.
struct Quantity {
  double value = 0;       ///< base unit of the kind (lengths in m)
  bool has_unit = false;  ///< a suffix was written (false: the bare unit applied)
  std::string unit;       ///< the unit it was read in: the suffix, or the bare unit that applied
  std::string text;       ///< as given
};

/// Parses "NUMBER[SUFFIX]" of `kind` (no blank between number and suffix). A bare length is in
/// `bare_length_unit`. Throws ConventionError "WHAT: 'TEXT' ..." naming the accepted suffixes when the number
/// or the suffix is not valid. O(length).
Quantity parse_quantity(std::string_view text, QuantityKind kind, LengthUnit bare_length_unit,
                        const std::string& what);

/// Parses `count` comma-separated quantities (count 0: any number, at least one). Either every item carries a
/// unit or none does: "1km,2,3" is refused, since a reader cannot tell whether the suffix was meant for all.
/// Throws ConventionError as parse_quantity, or naming the expected count.
std::vector<Quantity> parse_quantity_list(std::string_view text, QuantityKind kind,
                                          LengthUnit bare_length_unit, const std::string& what,
                                          size_t count = 0);

/// Empty when `text` is a valid quantity (or list, when `list` is set) of `kind` for either length unit, else
/// the one-line reason: for checking an option's text while options are parsed, before --unit is known.
std::string quantity_syntax_error(std::string_view text, QuantityKind kind, bool list);

/// "VALUE BASEUNIT" with round-trip digits, followed by " (given as TEXT UNIT)" when it was read in another
/// unit than the base unit: how an interpreted value is echoed in summaries and histories.
std::string describe_quantity(const Quantity& quantity, QuantityKind kind);

}  // namespace polystokes
