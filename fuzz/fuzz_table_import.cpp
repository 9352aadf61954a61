// libFuzzer target: arbitrary bytes as a foreign coefficient table. The first two bytes choose the declared
// columns and conventions (so the fuzzer explores the declarations too), the rest is the table. A parsed set
// goes on to the text writer as `convert` does; every refusal must be a polystokes::Error.
#include <cstdint>
#include <string>
#include <vector>

#include "polystokes/io/coefficient_file.h"
#include "polystokes/core/errors.h"
#include "polystokes/io/table_import.h"

namespace {

using polystokes::TableColumn;

const std::vector<std::vector<TableColumn>> layouts = {
    {TableColumn::n, TableColumn::m, TableColumn::C, TableColumn::S},
    {TableColumn::n, TableColumn::m, TableColumn::C, TableColumn::S, TableColumn::sigma_C, TableColumn::sigma_S},
    {TableColumn::m, TableColumn::n, TableColumn::skip, TableColumn::C, TableColumn::S},
    {TableColumn::n, TableColumn::m, TableColumn::C},
};
const polystokes::Normalization normalizations[] = {
    polystokes::Normalization::fully, polystokes::Normalization::unnormalized, polystokes::Normalization::schmidt,
    polystokes::Normalization::orthonormal};
const char* comments[] = {"#", "%", "!", "//"};

}  // namespace

extern "C" int LLVMFuzzerTestOneInput(const std::uint8_t* data, std::size_t size) {
  if (size < 2) return 0;
  polystokes::TableImportOptions options;
  options.columns = layouts[data[0] % layouts.size()];
  options.normalization = normalizations[(data[0] >> 2) % 4];
  options.condon_shortley = (data[0] >> 4) & 1;
  options.zonal_as_j = (data[0] >> 5) & 1;
  options.unit = (data[0] >> 6) & 1 ? polystokes::LengthUnit::kilometer : polystokes::LengthUnit::meter;
  options.skip_lines = data[1] % 4;
  options.comment = comments[(data[1] >> 2) % 4];
  options.reference_radius = 1000.0;
  options.gm = 5.0e2;
  const std::string text(reinterpret_cast<const char*>(data) + 2, size - 2);
  try {
    const polystokes::CoefficientSet set = polystokes::parse_table(text, "fuzz.tab", options);
    polystokes::format_coefficient_text(set);
  } catch (const polystokes::Error&) {
  }
  return 0;
}
