#include "polystokes/io/table_conventions.h"

#include <fmt/format.h>

#include <algorithm>
#include <cmath>

#include "io/table_common.h"
#include "polystokes/core/errors.h"

namespace polystokes {

namespace {

constexpr TableColumn kColumns[] = {TableColumn::n,   TableColumn::m,       TableColumn::C,
                                    TableColumn::S,   TableColumn::sigma_C, TableColumn::sigma_S,
                                    TableColumn::skip};

}  // namespace

std::string to_string(TableColumn column) {
  switch (column) {
    case TableColumn::n:
      return "n";
    case TableColumn::m:
      return "m";
    case TableColumn::C:
      return "C";
    case TableColumn::S:
      return "S";
    case TableColumn::sigma_C:
      return "sigma_C";
    case TableColumn::sigma_S:
      return "sigma_S";
    case TableColumn::skip:
      return "skip";
  }
  return "skip";
}

std::vector<TableColumn> parse_column_words(const std::string& text) {
  std::vector<TableColumn> columns;
  size_t start = 0;
  while (true) {
    const size_t comma = text.find(',', start);
    const std::string name =
        table_io::trim(text.substr(start, comma == std::string::npos ? std::string::npos : comma - start));
    const auto* found = std::find_if(std::begin(kColumns), std::end(kColumns),
                                     [&](TableColumn column) { return name == to_string(column); });
    if (found == std::end(kColumns))
      throw ConventionError(
          fmt::format("--columns '{}': unknown column '{}' (expected n, m, C, S, sigma_C, "
                      "sigma_S or skip)",
                      text, name));
    if (*found != TableColumn::skip && std::count(columns.begin(), columns.end(), *found))
      throw ConventionError(fmt::format("--columns '{}': column {} given twice", text, name));
    columns.push_back(*found);
    if (comma == std::string::npos) break;
    start = comma + 1;
  }
  return columns;
}

std::vector<TableColumn> parse_table_columns(const std::string& text) {
  std::vector<TableColumn> columns = parse_column_words(text);
  for (TableColumn needed : {TableColumn::n, TableColumn::m, TableColumn::C})
    if (!std::count(columns.begin(), columns.end(), needed))
      throw ConventionError(fmt::format("--columns '{}': column {} is required", text, to_string(needed)));
  return columns;
}

std::string to_string(const std::vector<TableColumn>& columns) {
  std::string text;
  for (size_t i = 0; i < columns.size(); ++i) text += (i ? "," : "") + to_string(columns[i]);
  return text;
}

void check_table_conventions(const TableConventions& conventions) {
  std::vector<std::string> missing;
  if (conventions.columns.empty()) missing.push_back("--columns");
  if (!conventions.normalization) missing.push_back("--normalization");
  if (!conventions.condon_shortley) missing.push_back("--condon-shortley or --no-condon-shortley");
  if (!conventions.reference_radius) missing.push_back("--ref-radius");
  if (!conventions.gm) missing.push_back("--gm");
  if (!missing.empty()) {
    std::string list;
    for (size_t i = 0; i < missing.size(); ++i) list += (i ? ", " : "") + missing[i];
    throw ConventionError(fmt::format("{} {} required for a table (a plain table does not say {})", list,
                                      missing.size() == 1 ? "is" : "are",
                                      missing.size() == 1 ? "it" : "them"));
  }
  if (!(*conventions.reference_radius > 0) || !std::isfinite(*conventions.reference_radius))
    throw ConventionError(
        fmt::format("--ref-radius must be positive, got {}", *conventions.reference_radius));
  if (!(*conventions.gm > 0) || !std::isfinite(*conventions.gm))
    throw ConventionError(fmt::format("--gm must be positive, got {}", *conventions.gm));
}

Convention declared_convention(const TableConventions& conventions) {
  check_table_conventions(conventions);
  return Convention{*conventions.normalization, *conventions.condon_shortley, conventions.zonal_as_j};
}

}  // namespace polystokes
