// The comparison of two coefficient sets (compare_sets) as a plain-text table and as a JSON report: the
// presentation of sets/compare's result, which itself formats nothing but its one-line verdict.
#pragma once

#include <string>

#include "polystokes/sets/compare.h"

namespace polystokes {

/// Plain-text report: alignment, per-degree table, largest differences, diagnosis, verdict.
std::string comparison_text(const Comparison& comparison);

/// The same content as JSON (2-space indent); NaN correlations are null.
std::string comparison_json(const Comparison& comparison);

}  // namespace polystokes
