#include "polystokes/core/mesh.h"

#include "polystokes/core/errors.h"

namespace polystokes {

std::string to_string(LengthUnit unit) { return unit == LengthUnit::kilometer ? "km" : "m"; }

LengthUnit parse_length_unit(const std::string& text) {
  if (text == "m") return LengthUnit::meter;
  if (text == "km") return LengthUnit::kilometer;
  throw ConventionError("unknown length unit '" + text + "' (expected m or km)");
}

double meters_per(LengthUnit unit) { return unit == LengthUnit::kilometer ? 1000.0 : 1.0; }

}  // namespace polystokes
