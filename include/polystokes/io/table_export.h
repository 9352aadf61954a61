// Writing a coefficient set as a plain table in a receiver's conventions: the inverse of table import,
// declared in the same vocabulary (table_conventions.h), with a header that states the conventions in words.
#pragma once

#include <string>

#include "polystokes/core/coefficient_set.h"
#include "polystokes/io/table_conventions.h"

namespace polystokes {

/// What the receiver's table looks like: its conventions (TableConventions: columns any non-empty subset and
/// order of n, m, C, S, sigma_C, sigma_S, without skip; normalization, phase, radius and GM required; unit:
/// the unit lengths are shown in beside metres) and the layout.
struct TableExportOptions : TableConventions {
  int max_degree = -1;   ///< cut the set at this degree (0..set.degree); -1: the set's degree
  char separator = ' ';  ///< ' ' (one blank) or ','
  /// Significant digits of C, S and sigmas: 0 = round trip (printf %.17g, reads back to the same double);
  /// 1..17 = that many, in exponent form (d.ddde-05).
  int digits = 0;
};

/// The set in the declared conventions, as convert makes it: cut at max_degree (truncate_degree), rescaled
/// to the declared reference radius and GM (rescale_reference_radius, rescale_gm:
/// C'_nm = C_nm (GM/GM') (R/R')^n), then expressed in the declared normalization, phase and zonal form
/// (convert_convention). Each step only when it changes something, so the set's own conventions leave every
/// number bit for bit. Throws ConventionError for a missing declaration or a bad option (check as
/// format_table).
CoefficientSet set_for_table(const CoefficientSet& set, const TableExportOptions& options);

/// The table text: '#' header lines (the conventions in words, GM and reference radius with units, origin,
/// axes and frame metadata, the `polystokes convert` declarations that read the table back, the operational
/// caution), then one row per (n, m), n = 0..N, m = 0..n, in the declared columns. Throws ConventionError for
/// a missing declaration (naming its option), no column, a skip column, a max_degree outside 0..set.degree,
/// a separator other than blank or comma, or digits outside 0..17. O(degree^2).
std::string format_table(const CoefficientSet& set, const TableExportOptions& options);

/// format_table written whole or not at all (write_file_atomically; "-" = standard output).
void write_table(const std::string& path, const CoefficientSet& set, const TableExportOptions& options);

}  // namespace polystokes
