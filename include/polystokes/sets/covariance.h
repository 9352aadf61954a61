// The full covariance of a coefficient set's parameters: its parameter order, its linear propagation through
// the set's transforms (C' = T C T^T) and the sigmas taken from its diagonal. See docs/uncertainty.md.
#pragma once

#include <Eigen/Core>
#include <cstddef>
#include <functional>
#include <string>
#include <vector>

#include "polystokes/core/coefficient_set.h"
#include "polystokes/sets/conventions.h"

namespace polystokes {

/// One parameter of a covariance: C(n, m) or, for m > 0, S(n, m).
struct CoefficientParameter {
  int n = 0, m = 0;
  bool sine = false;  ///< S (true) or C (false)
};

/// The parameter order of every covariance: degree n = 0, 1, ...; within a degree m = 0..n, C(n, m) then
/// S(n, m), with S(n, 0) omitted (it vanishes). Degree n occupies the indices n^2 .. (n+1)^2 - 1, so the
/// covariance of degrees 0..N has (N+1)^2 parameters and each degree is one diagonal block.
std::vector<CoefficientParameter> covariance_parameters(int degree);

/// Index of C(n, m) (sine false) or S(n, m) (sine true, m > 0) in that order: n^2 for C(n, 0), else
/// n^2 + 2m - 1 for C and n^2 + 2m for S. Requires 0 <= m <= n.
inline Eigen::Index covariance_index(int n, int m, bool sine) {
  return Eigen::Index(n) * n + (m == 0 ? 0 : 2 * m - 1) + (sine ? 1 : 0);
}

/// (degree + 1)^2.
inline Eigen::Index covariance_parameter_count(int degree) {
  return Eigen::Index(degree + 1) * Eigen::Index(degree + 1);
}

/// Bytes of the values of a covariance of degrees 0..degree: (degree + 1)^4 doubles
/// (degree 30: 961 parameters, 7.4 MB).
double covariance_bytes(int degree);

/// Largest covariance held in memory: 1 GiB of values (degree 106 has 11449 parameters, 1.05e9 bytes, and is
/// the last degree below it). Larger requests are refused before any work (ResourceError).
inline constexpr double kCovarianceByteLimit = 1024.0 * 1024.0 * 1024.0;

/// Throws ResourceError naming the degree, the parameter count, the memory and the limit when a covariance of
/// degrees 0..degree would exceed kCovarianceByteLimit, or ConventionError for a negative degree.
void check_covariance_degree(int degree);

/// The covariance of the parameters of degrees 0..degree of a coefficient set, in the set's convention,
/// reference radius and GM (a covariance refers to the numbers of one set; a transform of the set transforms
/// it, see transform_covariance). Units: those of the coefficients, squared (dimensionless).
struct CoefficientCovariance {
  int degree = 0;               ///< parameters of degrees 0..degree, in the covariance_parameters order
  std::string body;             ///< body label of the set
  Convention convention;        ///< of the set's numbers
  double reference_radius = 0;  ///< m, of the set
  double gm = 0;                ///< m^3 s^-2, of the set
  /// Monte Carlo samples it was estimated from (0: not from samples). With K samples the matrix is a sum of K
  /// outer products, so its rank is at most K.
  long samples = 0;
  /// (degree + 1)^2 square, symmetric (the writers write the lower triangle and the readers mirror it).
  Eigen::MatrixXd values;
};

/// Throws ConventionError (naming `what`, e.g. the companion file) unless the covariance belongs with the
/// set: same convention, reference radius and GM, a degree no higher than the set's, and values of the stated
/// size.
void check_covariance_matches(const CoefficientSet& set, const CoefficientCovariance& covariance,
                              const std::string& what);

/// The set's sigma_C and sigma_S of degrees 0..covariance.degree set to the square roots of the diagonal, so
/// sigma^2 equals the variance bit for bit (sigma_S(n, 0) stays 0). Degrees above keep their sigmas.
/// Throws as check_covariance_matches.
void apply_covariance_sigmas(CoefficientSet& set, const CoefficientCovariance& covariance);

/// A linear map of a set's coefficients, as the transforms apply it (a function from set to set whose C and S
/// depend linearly on the input's C and S; the other fields follow the input's metadata).
using CoefficientMap = std::function<CoefficientSet(const CoefficientSet&)>;

/// The covariance after `map`: C' = T C T^T, where column j of T is the map applied to the unit set e_j (a
/// copy of `set`'s metadata cut at covariance.degree, C and S zero but for parameter j). The map must be
/// linear and must not derive its parameters from the coefficients it is given (a rotation to the principal
/// axes passes the fixed rotation of the nominal set, for example): the uncertainty of such parameters is not
/// propagated. Degrees the map cuts are dropped. The result's convention, radius and GM are those of the
/// mapped unit sets. Cost: P applications of the map (P = (degree + 1)^2; O(degree^6) for an origin shift,
/// whose single application is O(degree^4)) and two P x P products, O(P^3).
/// Throws ConventionError if the map changes the degree above the covariance's or is not linear (a non-zero
/// image of the zero set), and what the map throws.
CoefficientCovariance transform_covariance(const CoefficientCovariance& covariance, const CoefficientSet& set,
                                           const CoefficientMap& map);

}  // namespace polystokes
