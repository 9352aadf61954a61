// The options that declare a plain table's conventions, with the same names and meanings wherever a table is
// read (convert) or written (export): --columns, --normalization, --condon-shortley / --no-condon-shortley,
// --zonal-j, --ref-radius, --gm.
#pragma once

#include <CLI/CLI.hpp>
#include <string>
#include <vector>

#include "polystokes/io/table_conventions.h"

namespace polystokes::cli {

/// The declarations as given; empty = not given.
struct TableConventionOptions {
  std::string columns, normalization, ref_radius, gm;
  bool condon_shortley = false;
  bool zonal_j = false;
  CLI::Option* phase = nullptr;  ///< the phase flag, to tell "not given" from --no-condon-shortley

  /// Whether any of the declarations was given.
  bool given() const;
};

/// Registers the declarations in `group`.
void add_table_convention_options(CLI::App* group, TableConventionOptions& table);

/// The declarations interpreted (bare lengths in `unit`, recorded as the table's unit), the quantities echoed
/// into `echo` as read; the columns by `parse_columns` (import and export want different ones). Missing
/// declarations are left empty for the library to name (check_table_conventions).
TableConventions table_conventions_of(const TableConventionOptions& table, LengthUnit unit,
                                      std::vector<TableColumn> (*parse_columns)(const std::string&),
                                      std::vector<std::string>& echo);

}  // namespace polystokes::cli
