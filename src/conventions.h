// Normalization, Condon-Shortley phase and J_n conventions of Stokes coefficients, and exact conversion
// between them (coefficients and sigmas alike). Formulas and sources: docs/conventions.md.
#pragma once

#include "coefficient_set.h"

namespace polystokes {

/// Factor N such that P_X(n,m) = N * P_unnormalized(n,m) for normalization X (no phase).
///   fully: sqrt((2 - d_m0)(2n+1)(n-m)!/(n+m)!)   schmidt: sqrt((2 - d_m0)(n-m)!/(n+m)!)
///   orthonormal: fully / sqrt(4 pi)               unnormalized: 1
/// Computed as a running product (no factorial overflow); underflows to 0 only for n + m beyond ~340
/// in the unnormalized direction.
double legendre_normalization(Normalization normalization, int n, int m);

/// Ratio by which a coefficient in convention `from` is multiplied to express it in convention `to`
/// (normalization and phase only; the J_n sign is handled by convert_convention).
double coefficient_factor(const Convention& from, const Convention& to, int n, int m);

/// The same field expressed in `target`: C, S and sigmas converted exactly, history line added.
/// Sigmas are magnitudes, so they are scaled by |factor|.
CoefficientSet convert_convention(const CoefficientSet& set, const Convention& target);

/// Human-readable description, e.g. "fully normalized (4pi), no Condon-Shortley phase, zonal as C_n0".
std::string describe(const Convention& convention);

}  // namespace polystokes
