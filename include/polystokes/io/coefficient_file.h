// Reading and writing coefficient sets: the versioned polystokes text format and its JSON form.
// Both carry every field of CoefficientSet and give back bit-identical doubles; see docs/format.md.
#pragma once

#include <string>
#include <vector>

#include "polystokes/core/coefficient_set.h"

namespace polystokes {

/// Name on the first line of the text format and in the JSON "format" object.
inline constexpr const char* kCoefficientFormatName = "polystokes-coefficients";
/// Format version written; readers refuse any other.
inline constexpr int kCoefficientFormatVersion = 1;

/// The set in the polystokes text format (first line "polystokes-coefficients 1", sectioned header,
/// one table row per (n, m) with m <= n <= degree). Numbers are the shortest decimal that reads back to
/// the same double, so format -> parse -> format is byte-identical. Any byte string in a text field
/// round-trips (escapes for quotes, backslashes, control characters and bytes that are not UTF-8).
/// Throws ConventionError if the matrices are not (degree+1)^2, OutputError if a number is NaN or
/// infinite or a sigma is negative (the format holds finite values only). Linear in the number of rows.
std::string format_coefficient_text(const CoefficientSet& set);

/// Parses the text format. source_name is used in messages only. Throws FormatError
/// "source:line: problem" for a wrong first line or version, missing, unknown or repeated keys and
/// sections, values that do not parse, and table rows that are malformed, repeated, out of range or
/// missing. Entries above the diagonal of the matrices are zero. `origin_m = unknown` and three
/// `frame_*_axis = unknown` give origin_known / axes_known false. In J form a negative C00 (earlier files
/// stored J_0 = -C00) is read as +C00 with a history line.
CoefficientSet parse_coefficient_text(const std::string& text, const std::string& source_name);

/// format_coefficient_text written atomically (write_file_atomically; "-" = stdout).
void write_coefficient_file(const CoefficientSet& set, const std::string& path);

/// Reads a set from a file ("-" = stdin) in either format, told apart by content: a first non-blank
/// character '{' means JSON, anything else is parsed as the text format.
CoefficientSet read_coefficient_file(const std::string& path);

/// The set as pretty-printed JSON (2-space indent) with the same content as the text form. Doubles are
/// written by nlohmann::json's shortest round-trip conversion. Text fields must be valid UTF-8 (JSON text
/// is Unicode): otherwise OutputError. Same ConventionError/OutputError checks as the text writer.
std::string format_coefficient_json(const CoefficientSet& set);

/// Parses the JSON form with the same validation as the text reader; messages are "source:line: problem"
/// where line is that of the offending key or of the array entry the problem is in. A null origin position
/// or axes array means unknown, as `unknown` does in the text format.
CoefficientSet parse_coefficient_json(const std::string& text, const std::string& source_name);

/// format_coefficient_json written atomically ("-" = stdout).
void write_coefficient_json(const CoefficientSet& set, const std::string& path);

/// The two forms a set is written in.
enum class CoefficientForm { text, json };

/// The form a file name asks for: a name ending in ".json" (any case) is JSON; any other name, and "-"
/// (standard output), is the text format. The one rule every command that writes a set follows.
CoefficientForm coefficient_form_for(const std::string& path);

/// One file a set is written to, and its form.
struct CoefficientOutput {
  std::string path;
  CoefficientForm form = CoefficientForm::text;
};

/// Writes the set to every output as one OutputGroup (output_file.h): all files are replaced or, on any
/// failure, none is. Each form is formatted and staged in turn, so one formatted copy is held at a time.
/// Same errors as the single-file writers.
void write_coefficient_files(const CoefficientSet& set, const std::vector<CoefficientOutput>& outputs);

}  // namespace polystokes
