// Comparing two coefficient sets made under different conventions, degree by degree, and diagnosing the
// usual exchange mistakes (normalization, phase, J_n sign, radius, GM, longitude, C/S swap, origin).
#pragma once

#include <optional>
#include <string>
#include <utility>
#include <vector>

#include "polystokes/core/coefficient_set.h"
#include "polystokes/sets/covariance.h"

namespace polystokes {

struct CompareOptions {
  /// A degree agrees when its RMS difference is at most tolerance * (RMS of A at that degree, see below).
  double tolerance = 1e-6;
  /// RMS differences up to this (fully normalized, dimensionless) always agree: rounding of zero terms.
  double absolute_floor = 1e-15;
  /// A degree's difference is taken relative to max(RMS A_n, relative_floor * E_n), E_n the largest RMS of A
  /// over degrees k >= max(n, 1) (|C00| if there is none): terms that should vanish (degree 1 about the
  /// centre of mass, odd degrees of a symmetric body) are judged against the body's following terms, not
  /// against their own rounding.
  double relative_floor = 1e-3;
  /// Also bring B to A's origin and axes, using both sets' origin_in_mesh and axes_in_mesh (which assumes the
  /// two sets refer to the same mesh frame). What a set does not know is not aligned (see compare_sets).
  bool align_frame = false;
  /// Highest degree compared; -1 = the smaller of the two degrees.
  int max_degree = -1;
  /// Number of largest single differences listed.
  int largest_count = 10;
  /// Test the usual mismatches when the sets disagree.
  bool diagnose = true;
};

/// Statistics of one degree n, in fully normalized terms after B is brought to A's conventions.
/// RMS values are per coefficient: sqrt(sum_m (C^2 + S^2) / (2n+1)) (degree variance / (2n+1), square root).
struct DegreeComparison {
  int degree = 0;
  double rms_a = 0, rms_b = 0;  ///< spectra of A and B
  double rms_difference = 0;    ///< of A - B
  double scale = 0;             ///< what the difference is measured against: max(rms_a, floor)
  double relative = 0;          ///< rms_difference / scale; 0 within the absolute floor
  double correlation = 0;       ///< sum(Ca Cb + Sa Sb) / sqrt(sum(Ca^2+Sa^2) sum(Cb^2+Sb^2)); NaN if one is 0
  bool agrees = false;
};

/// One coefficient of A and of B (in A's convention, after B is brought to it).
struct CoefficientDifference {
  int n = 0, m = 0;
  bool sine = false;  ///< S (true) or C (false)
  double a = 0, b = 0;
};

/// A usual exchange mistake that a hypothesis names.
enum class MistakeKind {
  normalization,   ///< another normalization than declared
  phase,           ///< the Condon-Shortley phase the other way
  j_sign,          ///< J_n where C_n0 is declared, or the reverse
  radius,          ///< a reference radius off by a fitted factor
  gm,              ///< a GM off by a fitted factor
  longitude_sign,  ///< longitudes reversed (S -> -S)
  z_rotation,      ///< axes turned about z by a fitted angle
  swapped_cs,      ///< C and S exchanged
  origin           ///< expanded about another point
};

/// The name table of MistakeKind: enumerator and its word in reports, in declaration order.
const std::vector<std::pair<MistakeKind, const char*>>& mistake_kind_names();
/// Word of a mistake, e.g. "j_sign".
std::string to_string(MistakeKind kind);
/// The mistake a word names; throws ConventionError for any other word.
MistakeKind parse_mistake_kind(const std::string& word);

/// One tested explanation of a disagreement: B corrected as the hypothesis says, then compared again.
struct Hypothesis {
  /// The mistake, or a pair of them: a label mistake (normalization, phase, j_sign, longitude_sign,
  /// swapped_cs) with a fitted radius or gm factor, or radius with gm.
  std::vector<MistakeKind> mistakes;
  /// The words of `mistakes` joined by '+', e.g. "radius" or "normalization+radius".
  std::string kind() const;
  std::string description;      ///< what the hypothesis says, with the fitted parameter if any
  double parameter = 0;         ///< radius or GM factor, angle (degrees), shift length (m); 0 if none
  double second_parameter = 0;  ///< the GM factor of radius+gm (parameter is its radius factor); else 0
  double misfit = 0;        ///< misfit after the correction
  int agree_degree = -1;    ///< degree up to which the corrected B agrees with A
  bool explains = false;    ///< the corrected B agrees with A at every degree
};

/// How B's origin or axes stand to A's: the same, different (not aligned), aligned (B brought to A's), or
/// unknown (a set does not know its origin or axes in the mesh frame: not aligned, B taken as if in A's).
enum class FrameAgreement { same, different, aligned, unknown };

/// Word of a FrameAgreement in reports: "same", "different", "aligned", "unknown".
std::string to_string(FrameAgreement agreement);

/// One degree of A - B in units of the combined uncertainty of A and B (fully normalized numbers).
struct DegreeUncertainty {
  int degree = 0;
  /// Degrees of freedom of the test: the rank of the combined covariance block (parameters without any
  /// uncertainty, like C00 of mass-normalized sets, and directions a rank-deficient covariance does not span
  /// are left out). 0: nothing to test at this degree.
  int parameters = 0;
  /// sqrt(mean of (a - b)^2 / (sigma_a^2 + sigma_b^2)) over the parameters with a non-zero combined sigma.
  double rms_sigmas = 0;
  /// d^T M^+ d with d = A - B and M the sum of both sets' covariance blocks of the degree (a set without a
  /// covariance there adds its sigmas squared on the diagonal); M^+ the pseudo-inverse (eigenvalues below
  /// 1e-12 of the largest are dropped).
  double chi_square = 0;
  double quantile = 0;           ///< 99% quantile of chi-square with `parameters` degrees of freedom
  bool consistent = true;        ///< chi_square <= quantile
  bool from_covariance = false;  ///< at least one set's covariance block entered M
};

/// The comparison in units of the sets' uncertainty, when either set has sigmas or a covariance.
struct UncertaintyComparison {
  std::vector<DegreeUncertainty> degrees;                  ///< 0..Comparison::degree
  bool consistent = true;                                  ///< at every degree with parameters > 0
  int covariance_degree_a = -1, covariance_degree_b = -1;  ///< degrees covered by a covariance (-1: none)
};

/// Approximate 99% quantile of the chi-square distribution with k >= 1 degrees of freedom by the
/// Wilson-Hilferty cube-root normal approximation (Wilson & Hilferty 1931, Proc. Natl. Acad. Sci. 17, 684):
/// k (1 - 2/(9k) + z sqrt(2/(9k)))^3 with z = 2.3263478740408408 the 99% normal quantile. Relative error
/// below 0.75% at k = 1, 0.22% from k = 2 on, 0.07% from k = 20 on (against Boost.Math's exact quantile, in
/// compare_test). Throws ConventionError for k < 1.
double chi_square_quantile_99(int k);

struct Comparison {
  int degree = 0;  ///< highest degree compared
  int degree_a = 0, degree_b = 0;
  std::vector<std::string> alignment;  ///< what was done to B to bring it to A, and what was not
  /// How B's origin and axes stand to A's.
  FrameAgreement origin_relation = FrameAgreement::unknown, axes_relation = FrameAgreement::unknown;
  /// A's and B's frame metadata in words (describe(FrameMetadata)); empty when the set has none.
  std::string frame_a, frame_b;
  std::vector<DegreeComparison> degrees;       ///< 0..degree
  std::vector<CoefficientDifference> largest;  ///< largest |a - b| first
  int agree_degree = -1;                       ///< A and B agree at every degree 0..agree_degree
  bool agree = false;                          ///< at every compared degree
  double misfit = 0;                           ///< sqrt(mean over degrees of relative^2)
  double tolerance = 0;
  std::vector<Hypothesis> hypotheses;  ///< tested explanations, smallest misfit first
  std::string verdict;                 ///< one line
  /// Present when either set has non-zero sigmas or a covariance within the compared degrees.
  std::optional<UncertaintyComparison> uncertainty;
};

/// Brings B to A's normalization, phase, zonal form, reference radius and GM (and, with align_frame, origin
/// and axes), then compares per degree; when they disagree and diagnose is set, tests each usual mismatch
/// on B as read (other normalization or phase or J_n form than declared; reference radius off by a factor
/// 1e-4..1e4 fitted from the degree dependence of the spectra ratio, a factor near 1000 named as a likely
/// m/km mix-up; GM off by a factor; longitudes reversed (S -> -S); rotated about z by a fitted angle; C and S
/// swapped; expansion origin off by the vector implied by the degree-1 terms) and ranks them by the misfit
/// left. When none explains every degree, pairs are tried too (a label mistake with a fitted radius or GM
/// factor, radius and GM together) and the best three kept; the verdict says when the best explanation is
/// only partial. Radius and GM factors are applied in logarithms, so no degree overflows.
/// Origins: two sets about the centre of mass share their origin; a set whose origin or axes are unknown
/// (origin_known, axes_known) is neither aligned nor reported as differing, and `alignment` says so.
/// Uncertainty: when either set has sigmas or a covariance (covariance_a, covariance_b: the sets' own, in
/// their conventions, or null), A - B is also measured in units of the combined uncertainty per degree and
/// tested with chi-square (see DegreeUncertainty); B's covariance is brought to A as B is
/// (transform_covariance) and the verdict says whether the sets agree within their uncertainty at the 99%
/// level at every degree. Throws ConventionError if a set lacks GM or radius. O(degree^2) per tested
/// hypothesis (O(degree^3) with align_frame); a covariance of P parameters adds the cost of
/// transform_covariance.
Comparison compare_sets(const CoefficientSet& a, const CoefficientSet& b, const CompareOptions& options = {},
                        const CoefficientCovariance* covariance_a = nullptr,
                        const CoefficientCovariance* covariance_b = nullptr);

}  // namespace polystokes
