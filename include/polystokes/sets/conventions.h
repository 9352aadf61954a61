// Normalization, Condon-Shortley phase and J_n conventions of Stokes coefficients, and exact conversion
// between them (coefficients and sigmas alike). Formulas and sources: docs/conventions.md.
#pragma once

#include <string>
#include <vector>

#include "polystokes/core/coefficient_set.h"

namespace polystokes {

/// Factor N such that P_X(n,m) = N * P_unnormalized(n,m) for normalization X (no phase).
///   fully: sqrt((2 - d_m0)(2n+1)(n-m)!/(n+m)!)   schmidt: sqrt((2 - d_m0)(n-m)!/(n+m)!)
///   orthonormal: fully / sqrt(4 pi)               unnormalized: 1
/// Computed as a running product (no factorial overflow); underflows to 0 only for n + m beyond ~340
/// in the unnormalized direction. Throws ConventionError unless 0 <= m <= n.
double legendre_normalization(Normalization normalization, int n, int m);

/// Ratio by which a coefficient in convention `from` is multiplied to express it in convention `to`
/// (normalization and phase only; the J_n sign is handled by convert_convention). Between two normalized
/// conventions the ratio is formed directly (sqrt(2n+1), sqrt(4 pi)), so no factorial product is rounded.
double coefficient_factor(const Convention& from, const Convention& to, int n, int m);

/// Sign that turns the stored C(n, m) into C_nm: -1 for the J_n = -C_n0 column (m = 0, n >= 1) of a J-form
/// convention, else +1. Degree 0 is +1 in every form: C00 is the positive total-mass term, as common
/// practice writes it (a J_0 is not used).
double zonal_sign(const Convention& convention, int n, int m);

/// The same field with its numbers expressed in `target` (C, S, sigmas), nothing else changed, no history.
/// Used where a computation needs one working convention and converts back afterwards.
CoefficientSet expressed_in(const CoefficientSet& set, const Convention& target);

/// expressed_in plus a history line saying what was converted. Sigmas are magnitudes, scaled by |factor|.
/// O(degree^2).
CoefficientSet convert_convention(const CoefficientSet& set, const Convention& target);

/// Human-readable description, e.g. "fully normalized (4pi), no Condon-Shortley phase, zonal as C_n0".
std::string describe(const Convention& convention);

/// Short form for tables and option echoes, e.g. "fully", "schmidt+cs", "unnormalized+J".
std::string short_name(const Convention& convention);

/// All 16 conventions (4 normalizations x phase x zonal form), fully / no phase / C_n0 first.
std::vector<Convention> all_conventions();

bool operator==(const Convention& a, const Convention& b);
bool operator!=(const Convention& a, const Convention& b);

}  // namespace polystokes
