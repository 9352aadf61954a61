// The validation of a series against exact polyhedron gravity (validate_series) as a plain-text report and as
// JSON: the presentation of field/validation's result.
#pragma once

#include <string>

#include "polystokes/field/validation.h"

namespace polystokes {

/// Plain-text report: header, error table (degrees x shells), per-shell recommendation, warnings.
std::string format_validation_text(const ValidationReport& report);

/// The same content as JSON (2-space indent, doubles in round-trip form).
std::string format_validation_json(const ValidationReport& report);

}  // namespace polystokes
