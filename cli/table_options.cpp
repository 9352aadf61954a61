#include "table_options.h"

#include "quantity_options.h"

namespace polystokes::cli {

bool TableConventionOptions::given() const {
  return !columns.empty() || !normalization.empty() || (phase && phase->count() > 0) || !ref_radius.empty() ||
         !gm.empty() || zonal_j;
}

void add_table_convention_options(CLI::App* group, TableConventionOptions& table) {
  group->add_option("--columns", table.columns,
                    "Column order, e.g. n,m,C,S,sigma_C,sigma_S (skip for others)");
  group->add_option("--normalization", table.normalization, "The table's normalization")
      ->check(CLI::IsMember(normalization_words()));
  table.phase =
      group->add_flag("--condon-shortley,!--no-condon-shortley", table.condon_shortley,
                      "Whether the table's functions carry the Condon-Shortley phase (one is required)");
  group->add_flag("--zonal-j", table.zonal_j, "The table's m = 0 values are J_n = -C_n0");
  add_quantity_option(group, "--ref-radius", table.ref_radius, QuantityKind::length,
                      "The table's reference radius");
  add_quantity_option(group, "--gm", table.gm, QuantityKind::gm, "The table's GM");
}

TableConventions table_conventions_of(const TableConventionOptions& table, LengthUnit unit,
                                      std::vector<TableColumn> (*parse_columns)(const std::string&),
                                      std::vector<std::string>& echo) {
  TableConventions out;
  if (!table.columns.empty()) out.columns = parse_columns(table.columns);
  if (!table.normalization.empty()) out.normalization = parse_normalization(table.normalization);
  if (table.phase && table.phase->count() > 0) out.condon_shortley = table.condon_shortley;
  out.zonal_as_j = table.zonal_j;
  if (!table.ref_radius.empty()) {
    const Quantity radius =
        option_quantity(table.ref_radius, QuantityKind::length, unit, "--ref-radius", Bound::positive);
    echo.push_back("--ref-radius " + describe_quantity(radius, QuantityKind::length));
    out.reference_radius = radius.value;
  }
  if (!table.gm.empty()) {
    const Quantity gm = option_quantity(table.gm, QuantityKind::gm, unit, "--gm", Bound::positive);
    echo.push_back("--gm " + describe_quantity(gm, QuantityKind::gm));
    out.gm = gm.value;
  }
  out.unit = unit;
  return out;
}

}  // namespace polystokes::cli
