// The comparison of two sets within their uncertainty: A - B per degree in units of the combined sigmas and
// a chi-square against the summed covariances. Internal to compare_sets.
#pragma once

#include <optional>
#include <string>

#include "polystokes/sets/compare.h"
#include "polystokes/sets/covariance.h"

namespace polystokes {

/// Whether `set` has a non-zero sigma up to `degree`.
bool has_sigmas(const CoefficientSet& set, int degree);

/// A - B per degree in units of the combined uncertainty, with the chi-square of each degree against the
/// summed covariance blocks (or the sigmas where a set has no covariance that far) and its 99 % quantile.
/// All numbers fully normalized, B in A's radius, GM and frame, the covariances likewise.
UncertaintyComparison compare_uncertainty(const CoefficientSet& fa, const CoefficientSet& fb,
                                          const std::optional<CoefficientCovariance>& ca,
                                          const std::optional<CoefficientCovariance>& cb, int degree);

/// The sentence the verdict gains: consistent or not within the uncertainty, and at which degrees.
std::string uncertainty_verdict(const UncertaintyComparison& u);

}  // namespace polystokes
