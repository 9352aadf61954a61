// libFuzzer target: arbitrary bytes as the JSON form of a coefficient set. A parsed set must survive
// JSON -> set -> JSON unchanged; a refusal must be a polystokes::Error.
#include <cstdint>
#include <cstdlib>
#include <string>

#include "polystokes/io/coefficient_file.h"
#include "polystokes/core/errors.h"

extern "C" int LLVMFuzzerTestOneInput(const std::uint8_t* data, std::size_t size) {
  const std::string text(reinterpret_cast<const char*>(data), size);
  polystokes::CoefficientSet set;
  try {
    set = polystokes::parse_coefficient_json(text, "fuzz.json");
  } catch (const polystokes::Error&) {
    return 0;
  }
  std::string once;
  try {
    once = polystokes::format_coefficient_json(set);
  } catch (const polystokes::OutputError&) {
    // Documented: a text field that is not valid UTF-8 cannot be written as JSON. The JSON reader only
    // yields valid UTF-8, so this would itself be a finding.
    std::abort();
  }
  const std::string twice = polystokes::format_coefficient_json(polystokes::parse_coefficient_json(once, "once.json"));
  if (once != twice) std::abort();
  return 0;
}
