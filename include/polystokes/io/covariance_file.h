// Covariance files ("polystokes-covariance 1", text or binary values) and the companion link between a
// coefficient set and its covariance file: name and SHA-256 recorded in the set's notes. docs/uncertainty.md.
#pragma once

#include <optional>
#include <string>
#include <vector>

#include "polystokes/io/coefficient_file.h"
#include "polystokes/sets/covariance.h"

namespace polystokes {

/// How the values of a covariance file are stored: decimal text (lower triangle, shortest round-trip
/// doubles) or binary (the full matrix, row by row, IEEE 754 little-endian doubles).
enum class CovarianceFormat { text, binary };

/// "text" or "binary".
std::string to_string(CovarianceFormat format);

/// The file: a text header (format line, body, degree, parameter count, order, convention, reference radius,
/// GM, sample count, definition, one line per parameter "parameter INDEX C|S n m"), then the values: text
/// rows "row I v_I0 ... v_II" and a final "end", or, after a line "values binary ... bytes B", B bytes of
/// doubles. Throws OutputError for a body label holding a line break or non-finite values.
std::string format_covariance(const CoefficientCovariance& covariance, CovarianceFormat format);

/// Parses either form (told apart by the header's values line). `source_name` is used in messages. Throws
/// FormatError "source:line: problem" for a wrong format line, a missing or malformed header line, parameters
/// out of order, a degree whose matrix exceeds kCovarianceByteLimit, a binary part whose size differs from
/// the header's (checked before anything is allocated for it), malformed or non-finite values, an asymmetric
/// text row set or a missing end.
CoefficientCovariance parse_covariance(const std::string& bytes, const std::string& source_name);

/// Reads a covariance file. Throws FormatError if unreadable, as parse_covariance otherwise.
CoefficientCovariance read_covariance_file(const std::string& path);

/// A set's link to its companion covariance file.
struct CovarianceLink {
  std::string file;    ///< path relative to the directory of the set file (usually a bare file name)
  std::string sha256;  ///< of the companion's bytes, 64 hex digits
};

/// The companion name for a set written to `set_path`: the set's name with its extension (.txt, .json, any)
/// replaced by ".cov.txt" or ".cov.bin" (set.txt -> set.cov.txt). Throws ConventionError for "-".
std::string companion_covariance_path(const std::string& set_path, CovarianceFormat format);

/// The link recorded in the set's notes (the note starting "Covariance:"), if any. Throws FormatError when
/// such a note is malformed.
std::optional<CovarianceLink> covariance_link(const CoefficientSet& set);

/// Removes the link note, if any (a set written without its covariance).
void drop_covariance_link(CoefficientSet& set);

/// The companion covariance of a set read from `set_path` ("-": the current directory), or nothing when the
/// set records none. Throws FormatError when the companion is missing or unreadable, its SHA-256 is not the
/// recorded one ("refuse a mismatched one"), or it does not parse; ConventionError when it does not belong
/// with the set (check_covariance_matches).
std::optional<CoefficientCovariance> read_companion_covariance(const CoefficientSet& set,
                                                               const std::string& set_path);

/// A covariance to write beside a set: its file and form.
struct CovarianceOutput {
  std::string path;
  CovarianceFormat format = CovarianceFormat::text;
};

/// Writes the set to every output and the covariance to `covariance_output.path` as one OutputGroup (both or
/// neither). The set's sigmas of the covered degrees are taken from the covariance's diagonal first
/// (apply_covariance_sigmas) and the notes of each set file get the link (the companion's path relative to
/// that file's directory and the SHA-256 of the bytes written), replacing any earlier link. Throws as the
/// writers and check_covariance_matches; ConventionError if the covariance path is "-" or its relative path
/// contains a double quote or a line break.
void write_set_with_covariance(CoefficientSet set, const std::vector<CoefficientOutput>& outputs,
                               const CoefficientCovariance& covariance,
                               const CovarianceOutput& covariance_output);

}  // namespace polystokes
