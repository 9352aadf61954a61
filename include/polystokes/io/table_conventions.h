// The vocabulary plain coefficient tables are declared in, shared by table import and table export: the
// column names and the conventions a plain table does not state itself (normalization, phase, J_n form,
// reference radius, GM, unit).
#pragma once

#include <optional>
#include <string>
#include <vector>

#include "polystokes/core/mesh.h"
#include "polystokes/sets/conventions.h"

namespace polystokes {

/// One declared column of a table (skip: a column import ignores; export writes none).
enum class TableColumn { n, m, C, S, sigma_C, sigma_S, skip };

/// Word of a column: "n", "m", "C", "S", "sigma_C", "sigma_S", "skip".
std::string to_string(TableColumn column);

/// Parses a comma-separated list of column words (case-sensitive as shown). Throws ConventionError
/// "--columns 'TEXT': ..." on an unknown word or a column other than skip given twice. O(length).
std::vector<TableColumn> parse_column_words(const std::string& text);

/// parse_column_words for import: n, m and C must each be given. Throws ConventionError as it, or naming the
/// missing column.
std::vector<TableColumn> parse_table_columns(const std::string& text);

/// Comma-separated list of the column words, the inverse of parse_column_words.
std::string to_string(const std::vector<TableColumn>& columns);

/// What a plain table's reader and writer declare: the options of the same names in `polystokes convert`
/// (import) and `polystokes export`. Everything that changes the numbers has no default.
struct TableConventions {
  std::vector<TableColumn> columns;            ///< --columns
  std::optional<Normalization> normalization;  ///< --normalization
  std::optional<bool> condon_shortley;         ///< --condon-shortley / --no-condon-shortley
  bool zonal_as_j = false;                     ///< --zonal-j: the m = 0 values are J_n = -C_n0 (n >= 1)
  std::optional<double> reference_radius;      ///< --ref-radius, m
  std::optional<double> gm;                    ///< --gm, m^3 s^-2
  LengthUnit unit = LengthUnit::meter;         ///< --unit: the unit bare lengths were given in (echoed)
};

/// Throws ConventionError naming every missing declaration by its option ("--normalization, --gm are
/// required for a table ..."), or a reference radius or GM that is not positive and finite. Columns are not
/// checked here (import and export want different ones). O(1).
void check_table_conventions(const TableConventions& conventions);

/// The declared convention; requires the declarations (check_table_conventions).
Convention declared_convention(const TableConventions& conventions);

}  // namespace polystokes
