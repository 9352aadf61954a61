// Normalization, Condon-Shortley phase and J_n conventions of Stokes coefficients, and exact conversion
// between them (coefficients and sigmas alike). Formulas and sources: docs/conventions.md.
#pragma once

#include <string>
#include <vector>

namespace polystokes {

struct CoefficientSet;

/// Normalization of the associated Legendre functions the coefficients refer to.
///  - fully:        4pi geodesy normalization, mean square of Pnm cos(m lon) over the sphere = 1
///                  (IERS Conventions 2010, ch. 6)
///  - unnormalized: plain Ferrers functions Pnm
///  - schmidt:      Schmidt semi-normalized, mean square = 1/(2n+1)
///  - orthonormal:  integral of Ynm^2 over the sphere = 1 (4pi fully normalized / sqrt(4pi))
/// A new normalization is one enumerator here, one row in normalization_names() and its factor in
/// legendre_normalization (conventions.cpp); parsing, printing, the file formats and the CLI follow the
/// table.
enum class Normalization { fully, unnormalized, schmidt, orthonormal };

/// One row of the normalization name table: the enumerator, its option and file word, its description
/// in prose, and a hint shown beside the word in option help (empty for none).
struct NormalizationName {
  Normalization value;
  const char* word;         ///< e.g. "schmidt"
  const char* description;  ///< e.g. "Schmidt semi-normalized"
  const char* hint;         ///< e.g. "4pi" for fully
};

/// The table, in the order the words are listed everywhere (fully first).
const std::vector<NormalizationName>& normalization_names();

/// Option word of a normalization: "fully", "unnormalized", "schmidt", "orthonormal".
std::string to_string(Normalization normalization);
/// Parses the option word; throws ConventionError naming the known words on anything else.
Normalization parse_normalization(const std::string& text);
/// Every option word, in table order (for option validators).
std::vector<std::string> normalization_words();
/// The words joined as prose, each with its hint in parentheses when `with_hints`, e.g.
/// "fully (4pi), unnormalized, schmidt or orthonormal".
std::string normalization_choices(bool with_hints);
/// Prose name of the normalization alone, e.g. "fully normalized (4pi)".
std::string describe(Normalization normalization);

/// Everything needed to interpret C and S numerically.
struct Convention {
  Normalization normalization = Normalization::fully;
  bool condon_shortley = false;  ///< true: Legendre functions carry the (-1)^m phase
  bool zonal_as_j = false;       ///< true: column m = 0 of C holds J_n = -C_n0
};

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
