#include "polystokes/io/covariance_file.h"

#include <fmt/format.h>

#include <algorithm>
#include <charconv>
#include <cmath>
#include <cstdint>
#include <cstring>
#include <filesystem>

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

// Line-by-line reading of the header (and the text values), remembering where the bytes after a line start.
class CovarianceReader {
 public:
  CovarianceReader(const std::string& bytes, const std::string& source) : bytes_(bytes), source_(source) {}

  [[noreturn]] void fail(const std::string& problem) const { throw format_error(source_, line_, problem); }
  size_t offset() const { return next_; }

  std::string line() {
    ++line_;
    if (next_ >= bytes_.size()) fail("unexpected end of file (truncated covariance file?)");
    const size_t end = bytes_.find('\n', next_);
    const size_t stop = end == std::string::npos ? bytes_.size() : end;
    std::string text = bytes_.substr(next_, stop - next_);
    next_ = end == std::string::npos ? bytes_.size() : end + 1;
    return text;
  }
  /// The value of the next line, which must start with "key ".
  std::string value(const std::string& key) {
    const std::string text = line();
    if (text.compare(0, key.size() + 1, key + " ") != 0)
      fail("expected '" + key + " ...', got '" + text + "'");
    return text.substr(key.size() + 1);
  }
  double number(std::string_view text) const {
    double out = 0;
    const auto result = std::from_chars(text.data(), text.data() + text.size(), out);
    if (result.ec != std::errc() || result.ptr != text.data() + text.size() || !std::isfinite(out))
      fail("'" + std::string(text) + "' is not a finite number");
    return out;
  }
  long integer(std::string_view text) const {
    long out = 0;
    const auto result = std::from_chars(text.data(), text.data() + text.size(), out);
    if (text.empty() || result.ec != std::errc() || result.ptr != text.data() + text.size())
      fail("'" + std::string(text) + "' is not an integer");
    return out;
  }
  bool boolean(const std::string& text) const {
    if (text == "true") return true;
    if (text == "false") return false;
    fail("'" + text + "' is not true or false");
  }

 private:
  const std::string& bytes_;
  std::string source_;
  size_t next_ = 0;
  long line_ = 0;
};

std::vector<std::string_view> words(std::string_view text) {
  std::vector<std::string_view> out;
  size_t start = 0;
  while (start < text.size()) {
    const size_t end = std::min(text.find(' ', start), text.size());
    if (end > start) out.push_back(text.substr(start, end - start));
    start = end + 1;
  }
  return out;
}

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
  CovarianceReader in(bytes, source_name);
  if (in.line() != fmt::format("{} {}", kFormatName, kFormatVersion))
    in.fail(
        fmt::format("not a covariance file: the first line must be '{} {}'", kFormatName, kFormatVersion));
  CoefficientCovariance c;
  c.body = in.value("body");
  const long degree = in.integer(in.value("degree"));
  if (degree < 0 || degree > 100000) in.fail(fmt::format("degree {} out of range", degree));
  c.degree = int(degree);
  try {
    check_covariance_degree(c.degree);
  } catch (const ResourceError& e) {
    in.fail(e.what());
  }
  const Eigen::Index size = covariance_parameter_count(c.degree);
  if (in.integer(in.value("parameters")) != size)
    in.fail(fmt::format("degree {} has {} parameters", c.degree, size));
  if (in.value("order") != kOrder) in.fail(fmt::format("the parameter order must read '{}'", kOrder));
  try {
    c.convention.normalization = parse_normalization(in.value("normalization"));
  } catch (const ConventionError& e) {
    in.fail(e.what());
  }
  c.convention.condon_shortley = in.boolean(in.value("condon_shortley"));
  c.convention.zonal_as_j = in.boolean(in.value("zonal_as_j"));
  c.reference_radius = in.number(in.value("reference_radius_m"));
  c.gm = in.number(in.value("gm_m3_s2"));
  c.samples = in.integer(in.value("samples"));
  if (c.samples < 0) in.fail("the sample count must be >= 0");
  in.value("definition");
  const auto parameters = covariance_parameters(c.degree);
  for (size_t i = 0; i < parameters.size(); ++i) {
    const auto expected =
        fmt::format("{} {} {} {}", i, parameters[i].sine ? 'S' : 'C', parameters[i].n, parameters[i].m);
    const std::string given = in.value("parameter");
    if (given != expected)
      in.fail(fmt::format("parameter '{}' out of order: expected 'parameter {}'", given, expected));
  }
  const std::string values_line = in.line();
  if (values_line.compare(0, std::strlen(kBinaryValues), kBinaryValues) == 0) {
    const size_t expected = size_t(size) * size_t(size) * 8;
    const long stated = in.integer(std::string_view(values_line).substr(std::strlen(kBinaryValues) + 1));
    if (stated < 0 || size_t(stated) != expected)
      in.fail(fmt::format("{} parameters take {} bytes, the header says {}", size, expected, stated));
    const size_t remaining = bytes.size() - in.offset();
    if (remaining != expected)
      in.fail(fmt::format("the binary values hold {} bytes, the header says {} (truncated or extended file?)",
                          remaining, expected));
    c.values.resize(size, size);
    const char* data = bytes.data() + in.offset();
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
  if (values_line != kTextValues)
    in.fail(fmt::format("expected '{}' or '{} COUNT', got '{}'", kTextValues, kBinaryValues, values_line));
  c.values.resize(size, size);
  for (Eigen::Index i = 0; i < size; ++i) {
    const std::string row = in.value("row");
    const auto w = words(row);
    if (Eigen::Index(w.size()) != i + 2 || in.integer(w[0]) != i)
      in.fail(fmt::format("row {} needs its index and {} values", i, i + 1));
    for (Eigen::Index j = 0; j <= i; ++j) c.values(i, j) = c.values(j, i) = in.number(w[size_t(j + 1)]);
  }
  if (in.line() != "end") in.fail("expected 'end' after the rows");
  if (in.offset() != bytes.size()) in.fail("text after 'end'");
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
  const std::string name = std::filesystem::path(path).filename().string();
  if (name.find_first_of("\"\r\n") != std::string::npos)
    throw ConventionError("covariance file name '" + name + "' holds a double quote or a line break");
  for (const CoefficientOutput& output : outputs)
    if (output.path != "-" && std::filesystem::weakly_canonical(directory_of(output.path)) !=
                                  std::filesystem::weakly_canonical(directory_of(path)))
      throw ConventionError(
          fmt::format("the covariance {} must be in the directory of the set {}, which records its name only",
                      path, output.path));
  apply_covariance_sigmas(set, covariance);
  CompanionOutput companion{path, format_covariance(covariance, covariance_output.format)};
  drop_covariance_link(set);
  set.notes.push_back(fmt::format(
      "{}the covariance of the parameters of degrees 0..{} ({} parameters{}) is in the {}{}\" {}{}), read "
      "from the directory of this set file; its diagonal gives the sigmas of those degrees.",
      kLinkPrefix, covariance.degree, covariance_parameter_count(covariance.degree),
      covariance.samples > 0
          ? fmt::format(", from {} samples, so of rank at most {}", covariance.samples, covariance.samples)
          : std::string(),
      kLinkFile, name, kLinkSha, sha256_hex(companion.content)));
  write_coefficient_files(set, outputs, {companion});
}

}  // namespace polystokes
