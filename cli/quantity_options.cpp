#include "quantity_options.h"

#include <fmt/format.h>

#include "polystokes/core/errors.h"

namespace polystokes::cli {

CLI::Validator strict_number() {
  return CLI::Validator(
      [](std::string& text) {
        return parse_strict_number(text) ? std::string()
                                         : "'" + text +
                                               "' is not a number (decimal digits with an optional "
                                               "sign, point and exponent)";
      },
      "NUMBER", "strict number");
}

CLI::Validator strict_integer() {
  return CLI::Validator(
      [](std::string& text) {
        size_t i = !text.empty() && (text[0] == '+' || text[0] == '-') ? 1 : 0;
        const bool digits = i < text.size() && text.find_first_not_of("0123456789", i) == std::string::npos;
        return digits ? std::string() : "'" + text + "' is not a whole number (decimal digits)";
      },
      "INT", "strict integer");
}

CLI::Validator quantity_syntax(QuantityKind kind, bool list) {
  return CLI::Validator([kind, list](std::string& text) { return quantity_syntax_error(text, kind, list); },
                        "", "quantity of " + to_string(kind));
}

CLI::Option* add_quantity_option(CLI::App* cmd, const std::string& name, std::string& text, QuantityKind kind,
                                 const std::string& help) {
  const std::string rule = kind == QuantityKind::length
                               ? "bare: --unit; or with m, km"
                               : fmt::format("bare: {}; or with a unit, see docs/units.md", base_unit(kind));
  return cmd->add_option(name, text, help + " (" + rule + ")")->check(quantity_syntax(kind));
}

Quantity option_quantity(const std::string& text, QuantityKind kind, LengthUnit unit,
                         const std::string& option, Bound bound) {
  Quantity quantity = parse_quantity(text, kind, unit, option);
  if (bound == Bound::positive && !(quantity.value > 0))
    throw ConventionError(fmt::format("{}: '{}' must be positive", option, text));
  if (bound == Bound::non_negative && quantity.value < 0)
    throw ConventionError(fmt::format("{}: '{}' must not be negative", option, text));
  return quantity;
}

Eigen::Vector3d option_point(const std::string& text, LengthUnit unit, const std::string& option) {
  const auto items = parse_quantity_list(text, QuantityKind::length, unit, option, 3);
  return {items[0].value, items[1].value, items[2].value};
}

}  // namespace polystokes::cli
