#include "polystokes/io/covariance_file.h"

#include <fmt/format.h>

#include <algorithm>
#include <cmath>
#include <cstdint>
#include <cstring>
#include <filesystem>
#include <limits>

#include "io/text_scanner.h"
#include "polystokes/core/errors.h"
#include "polystokes/io/mesh_io.h"
#include "polystokes/io/output_file.h"

namespace polystokes {

namespace {

constexpr const char* kFormatName = "polystokes-covariance";
constexpr int kFormatVersion = 1;
constexpr const char* kOrder = "n = 0..degree; m = 0..n; C(n,m) then S(n,m); S(n,0) omitted";
constexpr const char* kDefinition =
    "second moment of the samples about the nominal set, sum_i (x_i - x_0)(x_i - x_0)^T / K; rank at most K";
constexpr const char* kTextValues = "values text lower_triangle";
constexpr const char* kBinaryValues = "values binary float64 little_endian row_major bytes";
constexpr const char* kLinkPrefix = "Covariance: ";
constexpr const char* kLinkFile = "companion file \"";
constexpr const char* kLinkSha = "(SHA-256 ";

std::string bool_word(bool value) { return value ? "true" : "false"; }

// The file's "key value" lines in order, on the one text scanner of the readers.
class KeyLines {
 public:
  KeyLines(const std::string& bytes, const std::string& source) : in_(bytes, source) {}
  TextScanner& scanner() { return in_; }
  [[noreturn]] void fail(const std::string& problem) const { in_.fail(problem); }

  /// Moves to the next line, which must start with `key`, and past the key.
  void key(const char* key) {
    if (!in_.next_line()) in_.fail("unexpected end of file (truncated covariance file?)");
    const std::string_view word = in_.token();
    if (word != key) in_.fail(fmt::format("expected '{} ...', got '{}'", key, word));
  }
  /// The rest of a `key` line, without the blanks after the key.
  std::string text(const char* key) {
    this->key(key);
    const std::string_view rest = in_.rest();
    const size_t start = std::min(rest.find_first_not_of(" \t"), rest.size());
    return std::string(rest.substr(start));
  }
  double number(const char* key) {
    this->key(key);
    const double value = in_.number(key);
    in_.expect_line_end(key);
    return value;
  }
  std::int64_t integer(const char* key, std::int64_t low, std::int64_t high) {
    this->key(key);
    const std::int64_t value = in_.integer(key, low, high);
    in_.expect_line_end(key);
    return value;
  }
  bool boolean(const char* key) {
    const std::string value = text(key);
    if (value != "true" && value != "false")
      in_.fail(fmt::format("{} '{}' is not true or false", key, value));
    return value == "true";
  }

 private:
  TextScanner in_;
};

// Doubles to and from little-endian bytes, whatever the machine's order.
void put_double(double value, char* out) {
  std::uint64_t bits = 0;
  std::memcpy(&bits, &value, 8);
  for (int k = 0; k < 8; ++k) out[k] = char((bits >> (8 * k)) & 0xff);
}

double get_double(const char* in) {
  std::uint64_t bits = 0;
  for (int k = 0; k < 8; ++k) bits |= std::uint64_t(static_cast<unsigned char>(in[k])) << (8 * k);
  double value = 0;
  std::memcpy(&value, &bits, 8);
  return value;
}

std::string directory_of(const std::string& set_path) {
  if (set_path == "-") return ".";
  const std::filesystem::path parent = std::filesystem::path(set_path).parent_path();
  return parent.empty() ? "." : parent.string();
}

}  // namespace

std::string to_string(CovarianceFormat format) {
  return format == CovarianceFormat::text ? "text" : "binary";
}

std::string format_covariance(const CoefficientCovariance& c, CovarianceFormat format) {
  const Eigen::Index size = covariance_parameter_count(c.degree);
  if (c.values.rows() != size || c.values.cols() != size)
    throw ConventionError(fmt::format("a covariance of degree {} needs a {} x {} matrix, it holds {} x {}",
                                      c.degree, size, size, c.values.rows(), c.values.cols()));
  if (c.body.find_first_of("\r\n") != std::string::npos)
    throw OutputError("the body label holds a line break, which a covariance file cannot carry");
  if (!c.values.allFinite()) throw OutputError("the covariance holds non-finite values");
  std::string out = fmt::format("{} {}\n", kFormatName, kFormatVersion);
  out += "body " + c.body + "\n";
  out += fmt::format("degree {}\nparameters {}\norder {}\n", c.degree, size, kOrder);
  out += fmt::format("normalization {}\ncondon_shortley {}\nzonal_as_j {}\n",
                     to_string(c.convention.normalization), bool_word(c.convention.condon_shortley),
                     bool_word(c.convention.zonal_as_j));
  out += fmt::format("reference_radius_m {}\ngm_m3_s2 {}\nsamples {}\ndefinition {}\n", c.reference_radius,
                     c.gm, c.samples, kDefinition);
  const auto parameters = covariance_parameters(c.degree);
  for (size_t i = 0; i < parameters.size(); ++i)
    out += fmt::format("parameter {} {} {} {}\n", i, parameters[i].sine ? 'S' : 'C', parameters[i].n,
                       parameters[i].m);
  if (format == CovarianceFormat::binary) {
    const size_t bytes = size_t(size) * size_t(size) * 8;
    out += fmt::format("{} {}\n", kBinaryValues, bytes);
    const size_t start = out.size();
    out.resize(start + bytes);
    for (Eigen::Index i = 0; i < size; ++i)
      for (Eigen::Index j = 0; j < size; ++j)
        put_double(c.values(i, j), &out[start + 8 * size_t(i * size + j)]);
    return out;
  }
  out += std::string(kTextValues) + "\n";
  for (Eigen::Index i = 0; i < size; ++i) {
    out += fmt::format("row {}", i);
    for (Eigen::Index j = 0; j <= i; ++j) out += fmt::format(" {}", c.values(i, j));
    out += '\n';
  }
  out += "end\n";
  return out;
}

CoefficientCovariance parse_covariance(const std::string& bytes, const std::string& source_name) {
  KeyLines in(bytes, source_name);
  TextScanner& scanner = in.scanner();
  const std::string first = fmt::format("{} {}", kFormatName, kFormatVersion);
  if (!scanner.next_line() || scanner.rest() != first)
    in.fail(fmt::format("not a covariance file: the first line must be '{}'", first));
  CoefficientCovariance c;
  c.body = in.text("body");
  c.degree = int(in.integer("degree", 0, 100000));
  try {
    check_covariance_degree(c.degree);
  } catch (const ResourceError& e) {
    in.fail(e.what());
  }
  const Eigen::Index size = covariance_parameter_count(c.degree);
  if (in.integer("parameters", 0, std::numeric_limits<std::int64_t>::max()) != size)
    in.fail(fmt::format("degree {} has {} parameters", c.degree, size));
  if (in.text("order") != kOrder) in.fail(fmt::format("the parameter order must read '{}'", kOrder));
  try {
    c.convention.normalization = parse_normalization(in.text("normalization"));
  } catch (const ConventionError& e) {
    in.fail(e.what());
  }
  c.convention.condon_shortley = in.boolean("condon_shortley");
  c.convention.zonal_as_j = in.boolean("zonal_as_j");
  c.reference_radius = in.number("reference_radius_m");
  c.gm = in.number("gm_m3_s2");
  c.samples = long(in.integer("samples", 0, std::numeric_limits<long>::max()));
  in.text("definition");
  const auto parameters = covariance_parameters(c.degree);
  for (size_t i = 0; i < parameters.size(); ++i) {
    const auto expected =
        fmt::format("{} {} {} {}", i, parameters[i].sine ? 'S' : 'C', parameters[i].n, parameters[i].m);
    const std::string given = in.text("parameter");
    if (given != expected)
      in.fail(fmt::format("parameter '{}' out of order: expected 'parameter {}'", given, expected));
  }
  // "values text lower_triangle" or "values binary ... bytes B".
  const std::string values = "values " + in.text("values");
  if (values.compare(0, std::strlen(kBinaryValues), kBinaryValues) == 0) {
    const size_t expected = size_t(size) * size_t(size) * 8;
    const std::string stated = values.substr(std::min(values.size(), std::strlen(kBinaryValues) + 1));
    std::int64_t bytes_stated = -1;
    if (!parse_integer_token(stated, bytes_stated) || bytes_stated < 0 || size_t(bytes_stated) != expected)
      in.fail(fmt::format("{} parameters take {} bytes, the header says {}", size, expected, stated));
    // Checked against the file before anything is allocated for the values.
    if (scanner.remaining_bytes() != expected)
      in.fail(fmt::format("the binary values hold {} bytes, the header says {} (truncated or extended file?)",
                          scanner.remaining_bytes(), expected));
    c.values.resize(size, size);
    const char* data = bytes.data() + scanner.next_offset();
    for (Eigen::Index i = 0; i < size; ++i)
      for (Eigen::Index j = 0; j < size; ++j) {
        const double value = get_double(data + 8 * size_t(i * size + j));
        if (!std::isfinite(value))
          in.fail(fmt::format("value ({}, {}) of the binary part is not finite", i, j));
        c.values(i, j) = value;
      }
    if (c.values != c.values.transpose()) in.fail("the binary matrix is not symmetric");
    return c;
  }
  if (values != kTextValues)
    in.fail(fmt::format("expected '{}' or '{} COUNT', got '{}'", kTextValues, kBinaryValues, values));
  c.values.resize(size, size);
  for (Eigen::Index i = 0; i < size; ++i) {
    in.key("row");
    scanner.integer("row index", i, i);
    for (Eigen::Index j = 0; j <= i; ++j) c.values(i, j) = c.values(j, i) = scanner.number("value");
    scanner.expect_line_end("the row's values");
  }
  in.key("end");
  scanner.expect_line_end("end");
  if (scanner.next_line()) in.fail("text after 'end'");
  return c;
}

CoefficientCovariance read_covariance_file(const std::string& path) {
  return parse_covariance(read_file(path), path);
}

std::string companion_covariance_path(const std::string& set_path, CovarianceFormat format) {
  if (set_path == "-") throw ConventionError("a set written to standard output has no companion file name");
  std::filesystem::path path(set_path);
  path.replace_extension(format == CovarianceFormat::text ? ".cov.txt" : ".cov.bin");
  return path.string();
}

std::optional<CovarianceLink> covariance_link(const CoefficientSet& set) {
  for (const std::string& note : set.notes) {
    if (note.compare(0, std::strlen(kLinkPrefix), kLinkPrefix) != 0) continue;
    const size_t file = note.find(kLinkFile);
    const size_t file_end = file == std::string::npos ? file : note.find('"', file + std::strlen(kLinkFile));
    const size_t sha = note.find(kLinkSha);
    if (file_end == std::string::npos || sha == std::string::npos ||
        note.size() < sha + std::strlen(kLinkSha) + 64)
      throw FormatError(fmt::format(
          "{}: the covariance note does not name a companion file and its SHA-256: '{}'", set.body, note));
    CovarianceLink link;
    link.file = note.substr(file + std::strlen(kLinkFile), file_end - file - std::strlen(kLinkFile));
    link.sha256 = note.substr(sha + std::strlen(kLinkSha), 64);
    return link;
  }
  return std::nullopt;
}

void drop_covariance_link(CoefficientSet& set) {
  auto& notes = set.notes;
  notes.erase(std::remove_if(notes.begin(), notes.end(),
                             [](const std::string& note) {
                               return note.compare(0, std::strlen(kLinkPrefix), kLinkPrefix) == 0;
                             }),
              notes.end());
}

std::optional<CoefficientCovariance> read_companion_covariance(const CoefficientSet& set,
                                                               const std::string& set_path) {
  const auto link = covariance_link(set);
  if (!link) return std::nullopt;
  const std::string path = (std::filesystem::path(directory_of(set_path)) / link->file).string();
  const std::string set_name = set_path == "-" ? "<stdin>" : set_path;
  std::string bytes;
  try {
    bytes = read_file(path);
  } catch (const FormatError& e) {
    throw FormatError(fmt::format("{} names its covariance companion {}, which cannot be read ({})", set_name,
                                  link->file, e.what()));
  }
  const std::string sha = sha256_hex(bytes);
  if (sha != link->sha256)
    throw FormatError(
        fmt::format("{}: SHA-256 {} is not the {} that {} records: not the covariance of this set", path, sha,
                    link->sha256, set_name));
  CoefficientCovariance covariance = parse_covariance(bytes, path);
  check_covariance_matches(set, covariance, path);
  return covariance;
}

void write_set_with_covariance(CoefficientSet set, const std::vector<CoefficientOutput>& outputs,
                               const CoefficientCovariance& covariance,
                               const CovarianceOutput& covariance_output) {
  const std::string& path = covariance_output.path;
  if (path == "-") throw ConventionError("the covariance needs a file of its own, not standard output");
  apply_covariance_sigmas(set, covariance);
  drop_covariance_link(set);
  const std::string content = format_covariance(covariance, covariance_output.format);
  const std::string sha = sha256_hex(content);
  const std::string samples = covariance.samples > 0 ? fmt::format(", from {} samples, so of rank at most {}",
                                                                   covariance.samples, covariance.samples)
                                                     : std::string();
  OutputGroup group;
  group.stage(path, content);
  // Each set file names the companion relative to its own directory.
  for (const CoefficientOutput& output : outputs) {
    const std::string name = std::filesystem::relative(std::filesystem::absolute(path),
                                                       std::filesystem::absolute(directory_of(output.path)))
                                 .generic_string();
    if (name.find_first_of("\"\r\n") != std::string::npos)
      throw ConventionError("covariance file name '" + name + "' holds a double quote or a line break");
    CoefficientSet linked = set;
    linked.notes.push_back(fmt::format(
        "{}the covariance of the parameters of degrees 0..{} ({} parameters{}) is in the {}{}\" {}{}), read "
        "from the directory of this set file; its diagonal gives the sigmas of those degrees.",
        kLinkPrefix, covariance.degree, covariance_parameter_count(covariance.degree), samples, kLinkFile,
        name, kLinkSha, sha));
    group.stage(output.path, output.form == CoefficientForm::json ? format_coefficient_json(linked)
                                                                  : format_coefficient_text(linked));
  }
  group.commit();
}

}  // namespace polystokes
