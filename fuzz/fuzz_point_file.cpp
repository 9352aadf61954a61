// libFuzzer target: arbitrary bytes as a CSV point list. Parsed points must be finite (the reader's
// promise); a refusal must be a polystokes::Error.
#include <cmath>
#include <cstdint>
#include <cstdlib>
#include <string>

#include "polystokes/core/errors.h"
#include "polystokes/io/point_file.h"

extern "C" int LLVMFuzzerTestOneInput(const std::uint8_t* data, std::size_t size) {
  const std::string text(reinterpret_cast<const char*>(data), size);
  try {
    const polystokes::Points points = polystokes::parse_points(text, "fuzz.csv").points;
    if (!points.allFinite()) std::abort();
  } catch (const polystokes::Error&) {
  }
  return 0;
}
