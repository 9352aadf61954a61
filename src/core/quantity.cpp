#include "polystokes/core/quantity.h"

#include <fmt/format.h>

#include <charconv>
#include <cmath>

#include "polystokes/core/errors.h"

namespace polystokes {

namespace {

struct UnitSuffix {
  QuantityKind kind;
  const char* suffix;
  double factor;  ///< base units per unit
};

// The one table of accepted suffixes; the first suffix of each kind is the base unit's.
constexpr double degrees_per_radian = 57.295779513082320876798154814105;
constexpr UnitSuffix unit_suffixes[] = {
    {QuantityKind::length, "m", 1.0},
    {QuantityKind::length, "km", 1e3},
    {QuantityKind::gm, "m3/s2", 1.0},
    {QuantityKind::gm, "km3/s2", 1e9},
    {QuantityKind::gm, "m^3/s^2", 1.0},
    {QuantityKind::gm, "km^3/s^2", 1e9},
    {QuantityKind::mass, "kg", 1.0},
    {QuantityKind::density, "kg/m3", 1.0},
    {QuantityKind::density, "g/cm3", 1e3},
    {QuantityKind::density, "kg/m^3", 1.0},
    {QuantityKind::density, "g/cm^3", 1e3},
    {QuantityKind::time, "s", 1.0},
    {QuantityKind::time, "min", 60.0},
    {QuantityKind::time, "h", 3600.0},
    {QuantityKind::time, "d", 86400.0},
    {QuantityKind::angle, "deg", 1.0},
    {QuantityKind::angle, "rad", degrees_per_radian},
};

std::string accepted_suffixes(QuantityKind kind) {
  std::string list;
  for (const auto& entry : unit_suffixes)
    if (entry.kind == kind) list += (list.empty() ? "" : ", ") + std::string(entry.suffix);
  return list;
}

bool is_digit(char c) { return c >= '0' && c <= '9'; }

// Length of the longest prefix of `text` that has the shape of a strict number (0 if none).
size_t number_prefix(std::string_view text) {
  size_t i = 0;
  if (i < text.size() && (text[i] == '+' || text[i] == '-')) ++i;
  size_t digits = 0;
  while (i < text.size() && is_digit(text[i])) ++i, ++digits;
  if (i < text.size() && text[i] == '.') {
    ++i;
    while (i < text.size() && is_digit(text[i])) ++i, ++digits;
  }
  if (digits == 0) return 0;
  if (i < text.size() && (text[i] == 'e' || text[i] == 'E')) {
    size_t j = i + 1;
    if (j < text.size() && (text[j] == '+' || text[j] == '-')) ++j;
    const size_t exponent_start = j;
    while (j < text.size() && is_digit(text[j])) ++j;
    if (j > exponent_start) i = j;
  }
  return i;
}

const char* number_rule = "decimal digits with an optional sign, point and exponent";

}  // namespace

std::string to_string(QuantityKind kind) {
  switch (kind) {
    case QuantityKind::length:
      return "length";
    case QuantityKind::gm:
      return "GM";
    case QuantityKind::mass:
      return "mass";
    case QuantityKind::density:
      return "density";
    case QuantityKind::time:
      return "time";
    case QuantityKind::angle:
      return "angle";
  }
  return "quantity";
}

std::string base_unit(QuantityKind kind) {
  switch (kind) {
    case QuantityKind::length:
      return "m";
    case QuantityKind::gm:
      return "m^3 s^-2";
    case QuantityKind::mass:
      return "kg";
    case QuantityKind::density:
      return "kg m^-3";
    case QuantityKind::time:
      return "s";
    case QuantityKind::angle:
      return "deg";
  }
  return "";
}

NumberStatus read_strict_number(std::string_view text, double& value) {
  if (!text.empty() && text.front() == '+') text.remove_prefix(1);  // std::from_chars takes '-' only
  if (text.empty() || number_prefix(text) != text.size()) {
    // Spellings of infinity and NaN are refused with that reason.
    double special = 0;
    const auto [end, ec] = std::from_chars(text.data(), text.data() + text.size(), special);
    const bool spelled = ec == std::errc() && end == text.data() + text.size() && !std::isfinite(special);
    return spelled ? NumberStatus::not_finite : NumberStatus::malformed;
  }
  const auto result = std::from_chars(text.data(), text.data() + text.size(), value);
  if (result.ec == std::errc::result_out_of_range || (result.ec == std::errc() && !std::isfinite(value)))
    return NumberStatus::out_of_range;
  if (result.ec != std::errc() || result.ptr != text.data() + text.size()) return NumberStatus::malformed;
  return NumberStatus::ok;
}

std::optional<double> parse_strict_number(std::string_view text) {
  double value = 0;
  if (read_strict_number(text, value) != NumberStatus::ok) return std::nullopt;
  return value;
}

Quantity parse_quantity(std::string_view text, QuantityKind kind, LengthUnit bare_length_unit,
                        const std::string& what) {
  const size_t split = number_prefix(text);
  const std::string_view digits = text.substr(0, split);
  const std::string_view suffix = text.substr(split);
  const std::optional<double> number = split > 0 ? parse_strict_number(digits) : std::nullopt;
  if (!number) {
    if (split > 0) throw ConventionError(fmt::format("{}: '{}' is out of the range of double", what, text));
    throw ConventionError(fmt::format("{}: '{}' is not a {} ({}, then optionally a unit: {})", what, text,
                                      to_string(kind), number_rule, accepted_suffixes(kind)));
  }
  Quantity quantity;
  quantity.text = std::string(text);
  if (suffix.empty()) {
    const bool km = kind == QuantityKind::length && bare_length_unit == LengthUnit::kilometer;
    quantity.value = km ? *number * 1e3 : *number;
    quantity.unit = kind == QuantityKind::length ? to_string(bare_length_unit) : base_unit(kind);
    return quantity;
  }
  for (const auto& entry : unit_suffixes) {
    if (entry.kind != kind || suffix != entry.suffix) continue;
    quantity.value = *number * entry.factor;
    quantity.has_unit = true;
    quantity.unit = entry.suffix;
    if (!std::isfinite(quantity.value))
      throw ConventionError(fmt::format("{}: '{}' is out of the range of double", what, text));
    return quantity;
  }
  throw ConventionError(fmt::format("{}: '{}': unit '{}' is not a unit of {}; use one of {} (or none: {})",
                                    what, text, suffix, to_string(kind), accepted_suffixes(kind),
                                    kind == QuantityKind::length ? "the command's --unit" : base_unit(kind)));
}

std::vector<Quantity> parse_quantity_list(std::string_view text, QuantityKind kind,
                                          LengthUnit bare_length_unit, const std::string& what,
                                          size_t count) {
  std::vector<Quantity> items;
  size_t start = 0;
  for (;;) {
    const size_t comma = text.find(',', start);
    items.push_back(
        parse_quantity(text.substr(start, comma == std::string_view::npos ? comma : comma - start), kind,
                       bare_length_unit, what));
    if (comma == std::string_view::npos) break;
    start = comma + 1;
  }
  if (count > 0 && items.size() != count)
    throw ConventionError(
        fmt::format("{}: '{}' is not {} comma-separated {} values", what, text, count, to_string(kind)));
  size_t with_unit = 0;
  for (const auto& item : items) with_unit += item.has_unit;
  if (with_unit != 0 && with_unit != items.size())
    throw ConventionError(
        fmt::format("{}: '{}' gives a unit on some values only: give it on every value or none", what, text));
  return items;
}

std::string quantity_syntax_error(std::string_view text, QuantityKind kind, bool list) {
  try {
    if (list)
      parse_quantity_list(text, kind, LengthUnit::meter, "value");
    else
      parse_quantity(text, kind, LengthUnit::meter, "value");
  } catch (const ConventionError& error) {
    // The caller names the option; keep what follows "value: ".
    const std::string message = error.what();
    return message.substr(message.find(": ") + 2);
  }
  return {};
}

std::string describe_quantity(const Quantity& quantity, QuantityKind kind) {
  std::string out = fmt::format("{} {}", quantity.value, base_unit(kind));
  double factor = 1;
  for (const auto& entry : unit_suffixes)
    if (entry.kind == kind && quantity.unit == entry.suffix) factor = entry.factor;
  if (factor != 1) {
    // The number as written, without the suffix it may carry.
    const std::string number = quantity.has_unit
                                   ? quantity.text.substr(0, quantity.text.size() - quantity.unit.size())
                                   : quantity.text;
    out += fmt::format(" (given as {} {})", number, quantity.unit);
  }
  return out;
}

}  // namespace polystokes
