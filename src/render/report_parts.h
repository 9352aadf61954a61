// Pieces the sections of the HTML report share: number spellings and the sections kept in files of their own.
#pragma once

#include <fmt/format.h>

#include <string>

#include "polystokes/render/report.h"

namespace polystokes::report_parts {

/// Shortest round-trip form.
inline std::string exact(double v) { return fmt::format("{}", v); }
/// Ten significant digits in exponent form, "0" for zero.
inline std::string sci(double v) { return v == 0 ? "0" : fmt::format("{:.9e}", v); }
/// Six significant digits.
inline std::string short_number(double v) { return fmt::format("{:.6g}", v); }
/// A number set in the page's number style.
inline std::string num(const std::string& text) { return "<span class=\"num\">" + text + "</span>"; }

/// Lengths in figures: kilometres for bodies from a kilometre up, else metres.
struct LengthDisplay {
  double metres = 1;
  std::string name = "m";
};
inline LengthDisplay display_unit(double size) {
  if (size >= 1000) return {1000, "km"};
  return {1, "m"};
}

/// The surface section (input.surface and input.mesh present): slope and dynamic-height maps, the slope
/// histogram and the equilibrium points.
std::string surface_section(const ReportInput& input);

/// The comparison section (input.other present): per-degree differences plotted, verdict, diagnosis,
/// largest differences and the comparison text.
std::string comparison_section(const ReportInput& input);

}  // namespace polystokes::report_parts
