// libFuzzer target: arbitrary bytes as a polystokes text coefficient file. A parsed set must format and
// parse back to the same text (the format's round-trip promise); a refusal must be a polystokes::Error.
#include <cstdint>
#include <cstdlib>
#include <string>

#include "polystokes/io/coefficient_file.h"
#include "polystokes/core/errors.h"

extern "C" int LLVMFuzzerTestOneInput(const std::uint8_t* data, std::size_t size) {
  const std::string text(reinterpret_cast<const char*>(data), size);
  polystokes::CoefficientSet set;
  try {
    set = polystokes::parse_coefficient_text(text, "fuzz.txt");
  } catch (const polystokes::Error&) {
    return 0;
  }
  // What the reader accepts, the writer must write and the reader read back unchanged.
  const std::string once = polystokes::format_coefficient_text(set);
  const std::string twice = polystokes::format_coefficient_text(polystokes::parse_coefficient_text(once, "once.txt"));
  if (once != twice) std::abort();
  return 0;
}
