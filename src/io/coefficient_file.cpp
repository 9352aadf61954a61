#include "polystokes/io/coefficient_file.h"

#include <fmt/format.h>

#include <algorithm>
#include <cctype>
#include <charconv>
#include <climits>
#include <cmath>
#include <iterator>
#include <map>
#include <nlohmann/json.hpp>
#include <optional>
#include <string_view>
#include <unordered_map>
#include <unordered_set>
#include <utility>
#include <vector>

#include "polystokes/core/errors.h"
#include "polystokes/io/output_file.h"

namespace polystokes {
namespace {

using Json = nlohmann::ordered_json;

// ---------------------------------------------------------------------------------------------------
// Shared by both formats: what a writer refuses, how numbers are spelled, how table rows become matrices.

void check_shape(const CoefficientSet& set) {
  if (set.degree < 0 || set.degree >= INT_MAX)
    throw ConventionError(
        fmt::format("coefficient set: degree must be in 0..{}, got {}", INT_MAX - 1, set.degree));
  const Eigen::Index size = set.degree + 1;
  const std::pair<const char*, const Eigen::MatrixXd*> matrices[] = {
      {"C", &set.C}, {"S", &set.S}, {"sigma_C", &set.sigma_C}, {"sigma_S", &set.sigma_S}};
  for (const auto& [name, matrix] : matrices) {
    if (matrix->rows() != size || matrix->cols() != size) {
      throw ConventionError(fmt::format("coefficient set: degree {} needs {}x{} matrices but {} is {}x{}",
                                        set.degree, size, size, name, matrix->rows(), matrix->cols()));
    }
  }
}

void require_finite(double value, const std::string& what) {
  if (!std::isfinite(value)) {
    throw OutputError(
        fmt::format("coefficient set not written: {} is {}; the coefficient formats hold finite "
                    "numbers only",
                    what, value));
  }
}

void require_finite(const Eigen::Vector3d& value, const std::string& what) {
  for (int i = 0; i < 3; ++i) require_finite(value[i], fmt::format("{}[{}]", what, i));
}

// Both writers refuse the same sets, so a set that one format holds the other holds too.
void check_writable(const CoefficientSet& set) {
  check_shape(set);
  require_finite(set.gm, "gm");
  require_finite(set.reference_radius, "reference_radius");
  require_finite(set.brillouin_radius, "brillouin_radius");
  require_finite(set.mass, "mass");
  require_finite(set.volume, "volume");
  require_finite(set.center_of_mass, "center_of_mass");
  require_finite(set.origin_in_mesh, "origin_in_mesh");
  for (int row = 0; row < 3; ++row)
    require_finite(Eigen::Vector3d(set.axes_in_mesh.row(row)), fmt::format("axes_in_mesh row {}", row));
  for (size_t i = 0; i < set.regions.size(); ++i) {
    require_finite(set.regions[i].density, fmt::format("regions[{}].density", i));
    require_finite(set.regions[i].volume, fmt::format("regions[{}].volume", i));
  }
  for (int n = 0; n <= set.degree; ++n) {
    for (int m = 0; m <= n; ++m) {
      require_finite(set.C(n, m), fmt::format("C({},{})", n, m));
      require_finite(set.S(n, m), fmt::format("S({},{})", n, m));
      require_finite(set.sigma_C(n, m), fmt::format("sigma_C({},{})", n, m));
      require_finite(set.sigma_S(n, m), fmt::format("sigma_S({},{})", n, m));
      // -0.0 passes on purpose: it is not below zero and must round-trip like any other value.
      if (set.sigma_C(n, m) < 0 || set.sigma_S(n, m) < 0)
        throw OutputError(fmt::format("coefficient set not written: sigma at n={} m={} is negative", n, m));
    }
  }
}

// Shortest decimal that reads back to the same double (fmt's default presentation, Dragonbox).
std::string number(double value) { return fmt::format("{}", value); }

// Length of the well-formed UTF-8 sequence starting at s[i] (Unicode Standard, ch. 3, table 3-7
// "Well-Formed UTF-8 Byte Sequences"), or 0 when the bytes there are not one.
size_t utf8_sequence_length(std::string_view s, size_t i) {
  const auto byte = [&](size_t k) { return static_cast<unsigned char>(s[k]); };
  const unsigned char lead = byte(i);
  if (lead < 0x80) return 1;
  size_t length = 0;
  unsigned char low = 0x80, high = 0xBF;
  if (lead >= 0xC2 && lead <= 0xDF)
    length = 2;
  else if (lead == 0xE0)
    length = 3, low = 0xA0;
  else if (lead == 0xED)
    length = 3, high = 0x9F;
  else if (lead >= 0xE1 && lead <= 0xEF)
    length = 3;
  else if (lead == 0xF0)
    length = 4, low = 0x90;
  else if (lead >= 0xF1 && lead <= 0xF3)
    length = 4;
  else if (lead == 0xF4)
    length = 4, high = 0x8F;
  else
    return 0;
  if (i + length > s.size() || byte(i + 1) < low || byte(i + 1) > high) return 0;
  for (size_t k = 2; k < length; ++k)
    if (byte(i + k) < 0x80 || byte(i + k) > 0xBF) return 0;
  return length;
}

bool is_utf8(std::string_view s) {
  for (size_t i = 0; i < s.size();) {
    const size_t length = utf8_sequence_length(s, i);
    if (length == 0) return false;
    i += length;
  }
  return true;
}

struct Row {
  long line;
  long long n, m;
  double c, s, sigma_c, sigma_s;
};

// Collects table rows, checking each on arrival, and allocates the matrices only once every row of the
// declared degree is present: a header claiming a huge degree then costs nothing.
class TableBuilder {
 public:
  TableBuilder(const std::string& source, int degree) : source_(source), degree_(degree) {}

  void add(const Row& row) {
    if (row.n < 0 || row.m < 0)
      throw format_error(source_, row.line, fmt::format("negative degree or order n={} m={}", row.n, row.m));
    if (row.m > row.n)
      throw format_error(source_, row.line, fmt::format("order m={} exceeds degree n={}", row.m, row.n));
    if (row.n > degree_) {
      throw format_error(source_, row.line,
                         fmt::format("degree n={} exceeds the set's degree {}", row.n, degree_));
    }
    if (row.sigma_c < 0 || row.sigma_s < 0)
      throw format_error(source_, row.line, "sigma_C and sigma_S must not be negative");
    const auto [first, inserted] = first_line_.emplace(key(row.n, row.m), row.line);
    if (!inserted) {
      throw format_error(
          source_, row.line,
          fmt::format("duplicate row n={} m={} (first on line {})", row.n, row.m, first->second));
    }
    rows_.push_back(row);
  }

  /// Fills C, S, sigma_C, sigma_S of set; end_line is where a missing row is reported.
  void finish(CoefficientSet& set, long end_line) const {
    const long long expected = (static_cast<long long>(degree_) + 1) * (degree_ + 2) / 2;
    if (static_cast<long long>(rows_.size()) != expected) {
      // Rows are unique and in range, so a gap exists and lies within the first rows_.size() + 1 keys.
      for (long long n = 0; n <= degree_; ++n) {
        for (long long m = 0; m <= n; ++m) {
          if (!first_line_.count(key(n, m))) {
            throw format_error(
                source_, end_line,
                fmt::format("coefficient table lacks the row n={} m={} ({} of {} rows for degree {})", n, m,
                            rows_.size(), expected, degree_));
          }
        }
      }
    }
    const Eigen::Index size = degree_ + 1;
    set.degree = degree_;
    set.C = Eigen::MatrixXd::Zero(size, size);
    set.S = Eigen::MatrixXd::Zero(size, size);
    set.sigma_C = Eigen::MatrixXd::Zero(size, size);
    set.sigma_S = Eigen::MatrixXd::Zero(size, size);
    for (const Row& row : rows_) {
      set.C(row.n, row.m) = row.c;
      set.S(row.n, row.m) = row.s;
      set.sigma_C(row.n, row.m) = row.sigma_c;
      set.sigma_S(row.n, row.m) = row.sigma_s;
    }
  }

 private:
  static long long key(long long n, long long m) { return n * (n + 1) / 2 + m; }

  const std::string& source_;
  int degree_;
  std::vector<Row> rows_;
  std::unordered_map<long long, long> first_line_;
};

// A token as shown in a message: quoted and cut short so one bad line cannot flood the terminal.
std::string shown(std::string_view token) {
  constexpr size_t kShown = 40;
  if (token.size() <= kShown) return "'" + std::string(token) + "'";
  return "'" + std::string(token.substr(0, kShown)) + "...'";
}

// ---------------------------------------------------------------------------------------------------
// Text format: writer.

// Text values are double-quoted. Escapes: \\ \" \n \r \t, \xHH for other control bytes and for any byte
// that is not part of well-formed UTF-8. Everything else is copied, so the file is always valid UTF-8
// and every byte string reads back unchanged.
std::string quote_text(std::string_view value) {
  std::string out = "\"";
  for (size_t i = 0; i < value.size();) {
    const unsigned char c = static_cast<unsigned char>(value[i]);
    const size_t length = utf8_sequence_length(value, i);
    if (c == '\\')
      out += "\\\\";
    else if (c == '"')
      out += "\\\"";
    else if (c == '\n')
      out += "\\n";
    else if (c == '\r')
      out += "\\r";
    else if (c == '\t')
      out += "\\t";
    else if (c < 0x20 || c == 0x7F || length == 0)
      out += fmt::format("\\x{:02X}", c);
    else {
      out.append(value.substr(i, length));
      i += length;
      continue;
    }
    ++i;
  }
  return out + "\"";
}

std::string vector_text(const Eigen::Vector3d& v) {
  return fmt::format("{} {} {}", number(v[0]), number(v[1]), number(v[2]));
}

// ---------------------------------------------------------------------------------------------------
// Text format: reader.

constexpr std::string_view kBlanks = " \t";

std::string_view trimmed(std::string_view s) {
  const size_t begin = s.find_first_not_of(kBlanks);
  if (begin == std::string_view::npos) return {};
  return s.substr(begin, s.find_last_not_of(kBlanks) - begin + 1);
}

std::vector<std::string_view> tokens(std::string_view s) {
  std::vector<std::string_view> out;
  size_t i = 0;
  while ((i = s.find_first_not_of(kBlanks, i)) != std::string_view::npos) {
    const size_t end = std::min(s.find_first_of(kBlanks, i), s.size());
    out.push_back(s.substr(i, end - i));
    i = end;
  }
  return out;
}

struct Line {
  long number;
  std::string_view text;  ///< without line break and surrounding blanks
};

// A '\r' before '\n' is dropped so files that passed through CRLF conversion still read; the writer never
// emits a raw '\r' (it is escaped inside text values).
std::vector<Line> split_lines(const std::string& text) {
  std::vector<Line> lines;
  size_t start = 0;
  long number = 1;
  while (start < text.size()) {
    size_t end = text.find('\n', start);
    if (end == std::string::npos) end = text.size();
    std::string_view line(text.data() + start, end - start);
    if (!line.empty() && line.back() == '\r') line.remove_suffix(1);
    lines.push_back({number++, trimmed(line)});
    start = end + 1;
  }
  return lines;
}

struct Entry {
  std::string_view value;
  long line;
};

// Sections in the order they must appear; [region] may repeat or be absent, the others appear once.
enum Rank { kBody, kExpansion, kRegion, kProvenance, kCoefficients, kEnd, kRankCount };
constexpr const char* kSectionNames[kRankCount] = {"body",       "expansion",    "region",
                                                   "provenance", "coefficients", "end"};

struct KeySpec {
  const char* name;
  bool repeatable;
};

const std::vector<KeySpec>& keys_of(Rank rank) {
  static const std::vector<KeySpec> specs[kProvenance + 1] = {
      {{"label", false},
       {"gm_m3_s2", false},
       {"mass_kg", false},
       {"volume_m3", false},
       {"center_of_mass_m", false},
       {"mesh_length_unit", false}},
      {{"degree", false},
       {"reference_radius_m", false},
       {"brillouin_radius_m", false},
       {"normalization", false},
       {"condon_shortley_phase", false},
       {"zonal_column", false},
       {"origin", false},
       {"origin_m", false},
       {"frame", false},
       {"frame_x_axis", false},
       {"frame_y_axis", false},
       {"frame_z_axis", false}},
      {{"mesh_file", false},
       {"sha256", false},
       {"length_unit", false},
       {"density_kg_m3", false},
       {"volume_m3", false},
       {"faces", false}},
      {{"created", false}, {"history", true}, {"note", true}},
  };
  return specs[rank];
}

class TextReader {
 public:
  TextReader(const std::string& text, const std::string& source) : text_(text), source_(source) {}

  CoefficientSet read() {
    const std::vector<Line> lines = split_lines(text_);
    if (lines.empty()) fail(0, "empty file, not a polystokes coefficient file");
    check_first_line(lines.front());

    CoefficientSet set;
    std::optional<TableBuilder> table;
    int rank = -1;
    for (size_t i = 1; i < lines.size(); ++i) {
      const Line& line = lines[i];
      if (line.text.empty() || line.text.front() == '#') continue;
      if (rank == kEnd) fail(line.number, "unexpected content after [end]");
      if (line.text.front() == '[') {
        rank = enter_section(line, rank);
        if (rank == kCoefficients) {
          read_header(set);
          table.emplace(source_, set.degree);
        } else if (rank == kEnd) {
          table->finish(set, line.number);
        } else {
          sections_.push_back({static_cast<Rank>(rank), line.number, {}});
        }
      } else if (rank == kCoefficients) {
        table->add(read_row(line));
      } else if (rank < 0) {
        fail(line.number, "expected the section header [body] before any key");
      } else {
        add_key(sections_.back(), line);
      }
    }
    if (rank != kEnd) {
      const long last = lines.back().number;
      if (rank == kCoefficients)
        fail(last, "file ends inside the coefficient table without [end] (truncated?)");
      fail(last,
           fmt::format("file ends before section [{}] (truncated?)", kSectionNames[next_required(rank)]));
    }
    return set;
  }

 private:
  struct Section {
    Rank rank;
    long line;
    std::map<std::string, std::vector<Entry>, std::less<>> entries;
  };

  [[noreturn]] void fail(long line, const std::string& problem) const {
    throw format_error(source_, line, problem);
  }

  void check_first_line(const Line& line) const {
    const std::string expected = fmt::format("{} {}", kCoefficientFormatName, kCoefficientFormatVersion);
    const auto words = tokens(line.text);
    if (words.empty() || words[0] != kCoefficientFormatName)
      fail(line.number,
           fmt::format("not a polystokes coefficient file: the first line must be '{}'", expected));
    if (words.size() != 2)
      fail(line.number, fmt::format("first line must be '{}', found {}", expected, shown(line.text)));
    if (words[1] != std::to_string(kCoefficientFormatVersion)) {
      fail(line.number, fmt::format("format version {} is not supported (this reader reads version {})",
                                    shown(words[1]), kCoefficientFormatVersion));
    }
  }

  static int next_required(int rank) {
    int next = rank + 1;
    if (next == kRegion) ++next;
    return next;
  }

  int enter_section(const Line& line, int rank) const {
    if (line.text.back() != ']') fail(line.number, "section header must end with ']'");
    const std::string_view name = trimmed(line.text.substr(1, line.text.size() - 2));
    const auto* found = std::find(std::begin(kSectionNames), std::end(kSectionNames), name);
    if (found == std::end(kSectionNames)) fail(line.number, fmt::format("unknown section [{}]", name));
    const int section = static_cast<int>(found - std::begin(kSectionNames));
    if (section < rank || (section == rank && section != kRegion)) {
      fail(line.number, fmt::format("section [{}] repeated or out of order (order: [body] [expansion] "
                                    "[region]... [provenance] [coefficients] [end])",
                                    name));
    }
    const int required = next_required(rank);
    if (section > required)
      fail(line.number, fmt::format("section [{}] missing before [{}]", kSectionNames[required], name));
    return section;
  }

  void add_key(Section& section, const Line& line) const {
    const size_t equals = line.text.find('=');
    if (equals == std::string_view::npos)
      fail(line.number, fmt::format("expected 'key = value', found {}", shown(line.text)));
    const std::string_view key = trimmed(line.text.substr(0, equals));
    const std::string_view value = trimmed(line.text.substr(equals + 1));
    const auto& specs = keys_of(section.rank);
    const auto spec =
        std::find_if(specs.begin(), specs.end(), [&](const KeySpec& s) { return key == s.name; });
    if (spec == specs.end())
      fail(line.number,
           fmt::format("unknown key {} in section [{}]", shown(key), kSectionNames[section.rank]));
    auto& entries = section.entries[spec->name];
    if (!entries.empty() && !spec->repeatable)
      fail(line.number, fmt::format("duplicate key '{}' (first on line {})", key, entries.front().line));
    entries.push_back({value, line.number});
  }

  const Entry& single(const Section& section, const char* key) const {
    const auto found = section.entries.find(key);
    if (found == section.entries.end()) {
      fail(section.line, fmt::format("section [{}] lacks the key '{}'", kSectionNames[section.rank], key));
    }
    return found->second.front();
  }

  static const std::vector<Entry>& all(const Section& section, const char* key) {
    static const std::vector<Entry> none;
    const auto found = section.entries.find(key);
    return found == section.entries.end() ? none : found->second;
  }

  std::string text_value(const Entry& entry) const {
    const std::string_view v = entry.value;
    if (v.size() < 2 || v.front() != '"')
      fail(entry.line, fmt::format("expected a double-quoted text value, found {}", shown(v)));
    std::string out;
    size_t i = 1;
    for (; i < v.size() && v[i] != '"'; ++i) {
      if (v[i] != '\\') {
        out += v[i];
        continue;
      }
      if (++i == v.size()) break;
      switch (v[i]) {
        case '\\':
          out += '\\';
          break;
        case '"':
          out += '"';
          break;
        case 'n':
          out += '\n';
          break;
        case 'r':
          out += '\r';
          break;
        case 't':
          out += '\t';
          break;
        case 'x': {
          unsigned value = 0;
          const char* digits = v.data() + i + 1;
          const auto result = i + 2 < v.size() ? std::from_chars(digits, digits + 2, value, 16)
                                               : std::from_chars_result{digits, std::errc::invalid_argument};
          if (result.ec != std::errc() || result.ptr != digits + 2)
            fail(entry.line, "escape \\x needs two hexadecimal digits");
          out += static_cast<char>(value);
          i += 2;
          break;
        }
        default:
          fail(entry.line, fmt::format("unknown escape '\\{}' (known: \\\\ \\\" \\n \\r \\t \\xHH)", v[i]));
      }
    }
    if (i >= v.size()) fail(entry.line, "text value lacks its closing '\"'");
    if (i + 1 != v.size())
      fail(entry.line, fmt::format("unexpected {} after the closing '\"'", shown(v.substr(i + 1))));
    return out;
  }

  double real(std::string_view token, long line, const char* what) const {
    double value = 0;
    const auto result = std::from_chars(token.data(), token.data() + token.size(), value);
    if (result.ec != std::errc() || result.ptr != token.data() + token.size() || !std::isfinite(value))
      fail(line, fmt::format("{}: {} is not a finite decimal number", what, shown(token)));
    return value;
  }

  long long integer(std::string_view token, long line, const char* what) const {
    long long value = 0;
    const auto result = std::from_chars(token.data(), token.data() + token.size(), value);
    if (result.ec != std::errc() || result.ptr != token.data() + token.size())
      fail(line, fmt::format("{}: {} is not an integer", what, shown(token)));
    return value;
  }

  double real_value(const Section& section, const char* key) const {
    const Entry& entry = single(section, key);
    return real(entry.value, entry.line, key);
  }

  std::string text_value(const Section& section, const char* key) const {
    return text_value(single(section, key));
  }

  // A position or axis written as the bare word `unknown` (CoefficientSet::origin_known, axes_known).
  bool is_unknown(const Section& section, const char* key) const {
    return single(section, key).value == kUnknownLabel;
  }

  Eigen::Vector3d vector_value(const Section& section, const char* key) const {
    const Entry& entry = single(section, key);
    const auto parts = tokens(entry.value);
    if (parts.size() != 3)
      fail(entry.line, fmt::format("{}: expected 3 numbers x y z, found {}", key, parts.size()));
    return {real(parts[0], entry.line, key), real(parts[1], entry.line, key),
            real(parts[2], entry.line, key)};
  }

  bool choice(const Section& section, const char* key, std::string_view yes, std::string_view no) const {
    const Entry& entry = single(section, key);
    if (entry.value == yes) return true;
    if (entry.value == no) return false;
    fail(entry.line, fmt::format("{}: expected {} or {}, found {}", key, yes, no, shown(entry.value)));
  }

  void read_header(CoefficientSet& set) const {
    const Section& body = sections_.at(0);
    set.body = text_value(body, "label");
    set.gm = real_value(body, "gm_m3_s2");
    set.mass = real_value(body, "mass_kg");
    set.volume = real_value(body, "volume_m3");
    set.center_of_mass = vector_value(body, "center_of_mass_m");
    set.length_unit = text_value(body, "mesh_length_unit");

    const Section& expansion = sections_.at(1);
    const Entry& degree = single(expansion, "degree");
    const long long value = integer(degree.value, degree.line, "degree");
    if (value < 0 || value >= INT_MAX)
      fail(degree.line, fmt::format("degree must be in 0..{}, got {}", INT_MAX - 1, value));
    set.degree = static_cast<int>(value);
    set.reference_radius = real_value(expansion, "reference_radius_m");
    set.brillouin_radius = real_value(expansion, "brillouin_radius_m");
    const Entry& normalization = single(expansion, "normalization");
    try {
      set.convention.normalization = parse_normalization(std::string(normalization.value));
    } catch (const ConventionError& error) {
      fail(normalization.line, error.what());
    }
    set.convention.condon_shortley = choice(expansion, "condon_shortley_phase", "yes", "no");
    set.convention.zonal_as_j = choice(expansion, "zonal_column", "J", "C");
    set.origin = text_value(expansion, "origin");
    set.origin_known = !is_unknown(expansion, "origin_m");
    if (set.origin_known) set.origin_in_mesh = vector_value(expansion, "origin_m");
    set.frame = text_value(expansion, "frame");
    const char* axis_keys[3] = {"frame_x_axis", "frame_y_axis", "frame_z_axis"};
    set.axes_known = !is_unknown(expansion, axis_keys[0]);
    for (int row = 0; row < 3; ++row) {
      if (is_unknown(expansion, axis_keys[row]) == set.axes_known)
        fail(single(expansion, axis_keys[row]).line,
             fmt::format("{}: the three axes must all be given or all be {}", axis_keys[row], kUnknownLabel));
      if (set.axes_known) set.axes_in_mesh.row(row) = vector_value(expansion, axis_keys[row]);
    }

    for (const Section& section : sections_) {
      if (section.rank != kRegion) continue;
      Region region;
      region.mesh = text_value(section, "mesh_file");
      region.checksum = text_value(section, "sha256");
      region.unit = text_value(section, "length_unit");
      region.density = real_value(section, "density_kg_m3");
      region.volume = real_value(section, "volume_m3");
      const Entry& faces = single(section, "faces");
      region.faces = static_cast<long>(integer(faces.value, faces.line, "faces"));
      set.regions.push_back(region);
    }

    const Section& provenance = sections_.back();
    set.created = text_value(provenance, "created");
    for (const Entry& entry : all(provenance, "history")) set.history.push_back(text_value(entry));
    for (const Entry& entry : all(provenance, "note")) set.notes.push_back(text_value(entry));
  }

  Row read_row(const Line& line) const {
    const auto fields = tokens(line.text);
    if (fields.size() != 6) {
      fail(line.number, fmt::format("expected 6 columns (n m C S sigma_C sigma_S), found {}", fields.size()));
    }
    return {line.number,
            integer(fields[0], line.number, "column n"),
            integer(fields[1], line.number, "column m"),
            real(fields[2], line.number, "column C"),
            real(fields[3], line.number, "column S"),
            real(fields[4], line.number, "column sigma_C"),
            real(fields[5], line.number, "column sigma_S")};
  }

  const std::string& text_;
  const std::string& source_;
  std::vector<Section> sections_;
};

// ---------------------------------------------------------------------------------------------------
// JSON form.

// Units of this format version; the reader insists on them, so a file in other units is refused rather
// than misread.
const std::vector<std::pair<const char*, const char*>>& json_units() {
  static const std::vector<std::pair<const char*, const char*>> units = {
      {"gm", "m^3 s^-2"},        {"reference_radius", "m"},
      {"brillouin_radius", "m"}, {"mass", "kg"},
      {"volume", "m^3"},         {"center_of_mass", "m"},
      {"origin.position", "m"},  {"regions.density", "kg m^-3"},
      {"regions.volume", "m^3"}};
  return units;
}

const std::string& utf8_field(const std::string& value, const std::string& field) {
  if (!is_utf8(value))
    throw OutputError(fmt::format("coefficient set not written as JSON: {} is not valid UTF-8", field));
  return value;
}

Json json_vector(const Eigen::Vector3d& v) { return Json::array({v[0], v[1], v[2]}); }

// Forward iterator over the text that records how far nlohmann's lexer has read, so the parse callback
// can tell on which line a key or an array entry starts (the lexer reads at most the token's own
// characters before the callback runs for object starts and keys).
class TrackingIterator {
 public:
  using iterator_category = std::input_iterator_tag;
  using value_type = char;
  using difference_type = std::ptrdiff_t;
  using pointer = const char*;
  using reference = const char&;

  TrackingIterator(const char* position, const char** reached) : position_(position), reached_(reached) {}
  reference operator*() const { return *position_; }
  TrackingIterator& operator++() {
    *reached_ = ++position_;
    return *this;
  }
  TrackingIterator operator++(int) {
    TrackingIterator before = *this;
    ++*this;
    return before;
  }
  bool operator==(const TrackingIterator& other) const { return position_ == other.position_; }
  bool operator!=(const TrackingIterator& other) const { return position_ != other.position_; }

 private:
  const char* position_;
  const char** reached_;
};

struct JsonLines {
  long top = 1;                                ///< line of the top-level '{'
  std::unordered_map<std::string, long> keys;  ///< line of each top-level key
  std::vector<long> coefficients;              ///< line of each "coefficients" entry's '{'
  std::vector<long> regions;                   ///< line of each "regions" entry's '{'
};

class JsonReader {
 public:
  JsonReader(const std::string& text, const std::string& source)
      : text_(text), source_(source), counted_(text.data()) {}

  CoefficientSet read() {
    const Json root = parse();
    if (!root.is_object()) fail(1, "the top-level JSON value must be an object");
    check_keys(root,
               {"format",
                "units",
                "body",
                "degree",
                "gm",
                "reference_radius",
                "brillouin_radius",
                "normalization",
                "condon_shortley",
                "zonal_as_j",
                "origin",
                "frame",
                "center_of_mass",
                "mass",
                "volume",
                "mesh_length_unit",
                "regions",
                "created",
                "history",
                "notes",
                "coefficients"},
               "top level", lines_.top);

    const Json& format = member(root, "format");
    const long format_line = key_line("format");
    check_keys(format, {"name", "version"}, "\"format\"", format_line);
    if (text(member(format, "name", format_line), "format.name", format_line) != kCoefficientFormatName)
      fail(format_line, fmt::format("\"format\".\"name\" must be \"{}\"", kCoefficientFormatName));
    const long long version = integer(member(format, "version", format_line), "format.version", format_line);
    if (version != kCoefficientFormatVersion) {
      fail(format_line, fmt::format("format version {} is not supported (this reader reads version {})",
                                    version, kCoefficientFormatVersion));
    }
    check_units(member(root, "units"));

    CoefficientSet set;
    set.body = text(root, "body");
    const long long degree = integer(member(root, "degree"), "degree", key_line("degree"));
    if (degree < 0 || degree >= INT_MAX)
      fail(key_line("degree"), fmt::format("degree must be in 0..{}, got {}", INT_MAX - 1, degree));
    set.gm = real(root, "gm");
    set.reference_radius = real(root, "reference_radius");
    set.brillouin_radius = real(root, "brillouin_radius");
    try {
      set.convention.normalization = parse_normalization(text(root, "normalization"));
    } catch (const ConventionError& error) {
      fail(key_line("normalization"), error.what());
    }
    set.convention.condon_shortley = boolean(root, "condon_shortley");
    set.convention.zonal_as_j = boolean(root, "zonal_as_j");

    const Json& origin = member(root, "origin");
    const long origin_line = key_line("origin");
    check_keys(origin, {"label", "position"}, "\"origin\"", origin_line);
    set.origin = text(member(origin, "label", origin_line), "origin.label", origin_line);
    const Json& position = member(origin, "position", origin_line);
    set.origin_known = !position.is_null();
    if (set.origin_known) set.origin_in_mesh = vector(position, "origin.position", origin_line);

    const Json& frame = member(root, "frame");
    const long frame_line = key_line("frame");
    check_keys(frame, {"label", "axes"}, "\"frame\"", frame_line);
    set.frame = text(member(frame, "label", frame_line), "frame.label", frame_line);
    const Json& axes = member(frame, "axes", frame_line);
    set.axes_known = !axes.is_null();
    if (set.axes_known && (!axes.is_array() || axes.size() != 3))
      fail(frame_line, "\"frame\".\"axes\" must be an array of 3 rows or null");
    for (int row = 0; row < 3 && set.axes_known; ++row)
      set.axes_in_mesh.row(row) = vector(axes[row], fmt::format("frame.axes[{}]", row), frame_line);

    set.center_of_mass = vector(member(root, "center_of_mass"), "center_of_mass", key_line("center_of_mass"));
    set.mass = real(root, "mass");
    set.volume = real(root, "volume");
    set.length_unit = text(root, "mesh_length_unit");
    read_regions(member(root, "regions"), set);
    set.created = text(root, "created");
    set.history = text_list(root, "history");
    set.notes = text_list(root, "notes");
    read_coefficients(member(root, "coefficients"), static_cast<int>(degree), set);
    return set;
  }

 private:
  [[noreturn]] void fail(long line, const std::string& problem) const {
    throw format_error(source_, line, problem);
  }

  long line_before(const char* position) {
    for (; counted_ < position; ++counted_)
      if (*counted_ == '\n') ++line_;
    return line_;
  }

  Json parse() {
    const char* begin = text_.data();
    const char* reached = begin;
    // Line of the character the lexer read last; positions only grow, so counting is incremental.
    const auto line_now = [&] { return line_before(reached > begin ? reached - 1 : begin); };
    std::string top_key;
    std::vector<std::vector<std::string>> open_keys;
    const Json::parser_callback_t track = [&](int depth, Json::parse_event_t event, Json& parsed) {
      if (event == Json::parse_event_t::object_start) {
        open_keys.emplace_back();
        if (depth == 0) lines_.top = line_now();
        if (depth == 2 && top_key == "coefficients") lines_.coefficients.push_back(line_now());
        if (depth == 2 && top_key == "regions") lines_.regions.push_back(line_now());
      } else if (event == Json::parse_event_t::object_end) {
        open_keys.pop_back();
      } else if (event == Json::parse_event_t::key) {
        const std::string& key = parsed.get_ref<const std::string&>();
        auto& keys = open_keys.back();
        // nlohmann keeps one of two equal keys silently; a repeated key is a typo or a merge gone wrong.
        if (std::find(keys.begin(), keys.end(), key) != keys.end())
          fail(line_now(), fmt::format("duplicate key \"{}\"", key));
        keys.push_back(key);
        if (depth == 1) {
          top_key = key;
          lines_.keys[key] = line_now();
        }
      }
      return true;
    };
    try {
      return Json::parse(TrackingIterator(begin, &reached), TrackingIterator(begin + text_.size(), &reached),
                         track);
    } catch (const Json::parse_error& error) {
      const size_t byte = std::min<size_t>(error.byte > 0 ? error.byte - 1 : 0, text_.size());
      const long line =
          1 + static_cast<long>(std::count(text_.begin(), text_.begin() + static_cast<long>(byte), '\n'));
      std::string detail = error.what();
      const size_t colon = detail.find(": ", detail.find("parse error"));
      if (colon != std::string::npos) detail = detail.substr(colon + 2);
      fail(line, "invalid JSON: " + detail);
    } catch (const Json::out_of_range& error) {
      // Raised for a number beyond the range of double while the lexer sits on it.
      std::string detail = error.what();
      detail = detail.substr(detail.find("] ") + 2);
      fail(line_now(), "invalid JSON: " + detail);
    }
  }

  long key_line(const std::string& key) const {
    const auto found = lines_.keys.find(key);
    return found == lines_.keys.end() ? lines_.top : found->second;
  }

  static long entry_line(const std::vector<long>& lines, size_t index, long fallback) {
    return index < lines.size() ? lines[index] : fallback;
  }

  void check_keys(const Json& object, std::initializer_list<const char*> allowed, const std::string& where,
                  long line) const {
    if (!object.is_object()) fail(line, fmt::format("{} must be a JSON object", where));
    for (const auto& item : object.items()) {
      if (std::none_of(allowed.begin(), allowed.end(), [&](const char* key) { return item.key() == key; })) {
        const long at = where == "top level" ? key_line(item.key()) : line;
        fail(at, fmt::format("unknown key \"{}\" in {}", item.key(), where));
      }
    }
  }

  const Json& member(const Json& object, const char* key, long line) const {
    if (!object.contains(key)) fail(line, fmt::format("missing key \"{}\"", key));
    return object.at(key);
  }
  const Json& member(const Json& root, const char* key) const { return member(root, key, lines_.top); }

  double real(const Json& value, const std::string& what, long line) const {
    if (!value.is_number()) fail(line, fmt::format("\"{}\" must be a number", what));
    const double result = value.get<double>();
    if (!std::isfinite(result)) fail(line, fmt::format("\"{}\" must be finite", what));
    return result;
  }
  double real(const Json& root, const char* key) const { return real(member(root, key), key, key_line(key)); }

  long long integer(const Json& value, const std::string& what, long line) const {
    if (!value.is_number_integer()) fail(line, fmt::format("\"{}\" must be an integer", what));
    if (value.is_number_unsigned() && value.get<unsigned long long>() > LLONG_MAX)
      fail(line, fmt::format("\"{}\" is out of range", what));
    return value.get<long long>();
  }

  std::string text(const Json& value, const std::string& what, long line) const {
    if (!value.is_string()) fail(line, fmt::format("\"{}\" must be a string", what));
    return value.get<std::string>();
  }
  std::string text(const Json& root, const char* key) const {
    return text(member(root, key), key, key_line(key));
  }

  bool boolean(const Json& root, const char* key) const {
    const Json& value = member(root, key);
    if (!value.is_boolean()) fail(key_line(key), fmt::format("\"{}\" must be true or false", key));
    return value.get<bool>();
  }

  Eigen::Vector3d vector(const Json& value, const std::string& what, long line) const {
    if (!value.is_array() || value.size() != 3)
      fail(line, fmt::format("\"{}\" must be an array of 3 numbers", what));
    return {real(value[0], what, line), real(value[1], what, line), real(value[2], what, line)};
  }

  std::vector<std::string> text_list(const Json& root, const char* key) const {
    const Json& list = member(root, key);
    if (!list.is_array()) fail(key_line(key), fmt::format("\"{}\" must be an array of strings", key));
    std::vector<std::string> out;
    for (const Json& item : list) out.push_back(text(item, key, key_line(key)));
    return out;
  }

  void check_units(const Json& units) const {
    const long line = key_line("units");
    const auto& expected = json_units();
    bool same = units.is_object() && units.size() == expected.size();
    for (const auto& [key, unit] : expected) same = same && units.contains(key) && units.at(key) == unit;
    if (!same) {
      std::string listing;
      for (const auto& [key, unit] : expected)
        listing += fmt::format("{}\"{}\": \"{}\"", listing.empty() ? "" : ", ", key, unit);
      fail(line, "\"units\" must be exactly {" + listing + "} (format version 1 is SI only)");
    }
  }

  void read_regions(const Json& regions, CoefficientSet& set) const {
    const long list_line = key_line("regions");
    if (!regions.is_array()) fail(list_line, "\"regions\" must be an array");
    for (size_t i = 0; i < regions.size(); ++i) {
      const Json& entry = regions[i];
      const long line = entry_line(lines_.regions, i, list_line);
      const std::string where = fmt::format("regions[{}]", i);
      check_keys(entry, {"mesh", "sha256", "unit", "density", "volume", "faces"}, where, line);
      Region region;
      region.mesh = text(member(entry, "mesh", line), where + ".mesh", line);
      region.checksum = text(member(entry, "sha256", line), where + ".sha256", line);
      region.unit = text(member(entry, "unit", line), where + ".unit", line);
      region.density = real(member(entry, "density", line), where + ".density", line);
      region.volume = real(member(entry, "volume", line), where + ".volume", line);
      region.faces = static_cast<long>(integer(member(entry, "faces", line), where + ".faces", line));
      set.regions.push_back(region);
    }
  }

  void read_coefficients(const Json& coefficients, int degree, CoefficientSet& set) const {
    const long list_line = key_line("coefficients");
    if (!coefficients.is_array()) fail(list_line, "\"coefficients\" must be an array");
    TableBuilder table(source_, degree);
    for (size_t i = 0; i < coefficients.size(); ++i) {
      const Json& entry = coefficients[i];
      const long line = entry_line(lines_.coefficients, i, list_line);
      const std::string where = fmt::format("coefficients[{}]", i);
      check_keys(entry, {"n", "m", "C", "S", "sigma_C", "sigma_S"}, where, line);
      const auto field = [&](const char* key) { return where + "." + key; };
      table.add({line, integer(member(entry, "n", line), field("n"), line),
                 integer(member(entry, "m", line), field("m"), line),
                 real(member(entry, "C", line), field("C"), line),
                 real(member(entry, "S", line), field("S"), line),
                 real(member(entry, "sigma_C", line), field("sigma_C"), line),
                 real(member(entry, "sigma_S", line), field("sigma_S"), line)});
    }
    table.finish(set, list_line);
  }

  const std::string& text_;
  const std::string& source_;
  JsonLines lines_;
  const char* counted_;  ///< text before this point has been counted into line_
  long line_ = 1;
};

std::string source_name_of(const std::string& path) { return path == "-" ? "<stdin>" : path; }

// Writer errors carry no path of their own; the file that was not written is added here.
template <typename Format>
std::string formatted_for(const std::string& path, Format format) {
  try {
    return format();
  } catch (const OutputError& error) {
    throw OutputError(source_name_of(path) + ": " + error.what());
  } catch (const ConventionError& error) {
    throw ConventionError(source_name_of(path) + ": " + error.what());
  }
}

// Degree 0 is C00 = +1 in every zonal form; J-form sets written by earlier versions stored it as -1
// (J_0 = -C00), which is the only reading a negative C00 can have there.
CoefficientSet with_positive_degree_zero(CoefficientSet set, const std::string& source_name) {
  if (set.convention.zonal_as_j && set.C(0, 0) < 0) {
    set.C(0, 0) = -set.C(0, 0);
    set.history.push_back(
        fmt::format("{}: degree 0 stored as J_0 = -C00 (an earlier J-form file); read as C00 = {}",
                    source_name, set.C(0, 0)));
  }
  return set;
}

}  // namespace

std::string format_coefficient_text(const CoefficientSet& set) {
  check_writable(set);
  fmt::memory_buffer out;
  const auto put = [&](auto&&... args) {
    fmt::format_to(std::back_inserter(out), std::forward<decltype(args)>(args)...);
  };
  put("{} {}\n", kCoefficientFormatName, kCoefficientFormatVersion);
  put("# Spherical-harmonic (Stokes) gravity coefficients of a body model, written by polystokes.\n"
      "# Specification: docs/format.md. SI units; every key with a unit ends in it (_m, _kg, _m3, _m3_s2, "
      "_kg_m3).\n"
      "# Text values are double-quoted with escapes \\\\ \\\" \\n \\r \\t \\xHH. Lines starting with # are "
      "comments.\n");

  put("\n[body]\nlabel = {}\n", quote_text(set.body));
  put("# G times the mass (m^3 s^-2); mass (kg) and volume (m^3) are 0 when unknown\n");
  put("gm_m3_s2 = {}\nmass_kg = {}\nvolume_m3 = {}\n", number(set.gm), number(set.mass), number(set.volume));
  put("# centre of mass in the mesh frame (m)\ncenter_of_mass_m = {}\n", vector_text(set.center_of_mass));
  put("# length unit the source mesh was given in\nmesh_length_unit = {}\n", quote_text(set.length_unit));

  put("\n[expansion]\n"
      "# U(r, lat, lon) = GM/r sum_n (R/r)^n sum_m P_nm(sin lat) (C_nm cos(m lon) + S_nm sin(m lon)), with\n"
      "# R the reference radius; valid outside the Brillouin sphere (radius about the origin, m; 0 = "
      "unknown)\n");
  put("degree = {}\nreference_radius_m = {}\nbrillouin_radius_m = {}\n", set.degree,
      number(set.reference_radius), number(set.brillouin_radius));
  put("# normalization of P_nm: fully | unnormalized | schmidt | orthonormal\nnormalization = {}\n",
      to_string(set.convention.normalization));
  put("# yes: P_nm carries the Condon-Shortley phase (-1)^m\ncondon_shortley_phase = {}\n",
      set.convention.condon_shortley ? "yes" : "no");
  put("# C: the m = 0 column holds C_n0; J: it holds J_n = -C_n0\nzonal_column = {}\n",
      set.convention.zonal_as_j ? "J" : "C");
  put("# expansion origin: label and position in the mesh frame (m), or unknown\norigin = {}\norigin_m = "
      "{}\n",
      quote_text(set.origin), set.origin_known ? vector_text(set.origin_in_mesh) : kUnknownLabel);
  put("# expansion axes: label and each axis as a unit vector in mesh-frame components, or unknown\n"
      "frame = {}\n",
      quote_text(set.frame));
  const auto axis_text = [&](int row) {
    return set.axes_known ? vector_text(set.axes_in_mesh.row(row)) : std::string(kUnknownLabel);
  };
  put("frame_x_axis = {}\nframe_y_axis = {}\nframe_z_axis = {}\n", axis_text(0), axis_text(1), axis_text(2));

  for (const Region& region : set.regions) {
    put("\n[region]\n# one constant-density piece: density kg m^-3 (negative for a void), volume m^3\n");
    put("mesh_file = {}\nsha256 = {}\nlength_unit = {}\n", quote_text(region.mesh),
        quote_text(region.checksum), quote_text(region.unit));
    put("density_kg_m3 = {}\nvolume_m3 = {}\nfaces = {}\n", number(region.density), number(region.volume),
        region.faces);
  }

  put("\n[provenance]\ncreated = {}\n", quote_text(set.created));
  for (const std::string& line : set.history) put("history = {}\n", quote_text(line));
  for (const std::string& line : set.notes) put("note = {}\n", quote_text(line));

  put("\n[coefficients]\n# n m C S sigma_C sigma_S (sigma: one-sigma uncertainty, 0 when not estimated)\n");
  for (int n = 0; n <= set.degree; ++n) {
    for (int m = 0; m <= n; ++m) {
      put("{} {} {} {} {} {}\n", n, m, number(set.C(n, m)), number(set.S(n, m)), number(set.sigma_C(n, m)),
          number(set.sigma_S(n, m)));
    }
  }
  put("[end]\n");
  return fmt::to_string(out);
}

CoefficientSet parse_coefficient_text(const std::string& text, const std::string& source_name) {
  return with_positive_degree_zero(TextReader(text, source_name).read(), source_name);
}

void write_coefficient_file(const CoefficientSet& set, const std::string& path) {
  write_coefficient_files(set, {{path, CoefficientForm::text}});
}

CoefficientSet read_coefficient_file(const std::string& path) {
  const std::string text = read_file(path);
  const size_t first = text.find_first_not_of(" \t\r\n");
  if (first != std::string::npos && text[first] == '{')
    return parse_coefficient_json(text, source_name_of(path));
  return parse_coefficient_text(text, source_name_of(path));
}

std::string format_coefficient_json(const CoefficientSet& set) {
  check_writable(set);
  Json root;
  root["format"] = {{"name", kCoefficientFormatName}, {"version", kCoefficientFormatVersion}};
  Json units = Json::object();
  for (const auto& [key, unit] : json_units()) units[key] = unit;
  root["units"] = units;
  root["body"] = utf8_field(set.body, "body");
  root["degree"] = set.degree;
  root["gm"] = set.gm;
  root["reference_radius"] = set.reference_radius;
  root["brillouin_radius"] = set.brillouin_radius;
  root["normalization"] = to_string(set.convention.normalization);
  root["condon_shortley"] = set.convention.condon_shortley;
  root["zonal_as_j"] = set.convention.zonal_as_j;
  root["origin"] = {{"label", utf8_field(set.origin, "origin")},
                    {"position", set.origin_known ? json_vector(set.origin_in_mesh) : Json(nullptr)}};
  Json axes = set.axes_known ? Json::array() : Json(nullptr);
  for (int row = 0; row < 3 && set.axes_known; ++row) axes.push_back(json_vector(set.axes_in_mesh.row(row)));
  root["frame"] = {{"label", utf8_field(set.frame, "frame")}, {"axes", axes}};
  root["center_of_mass"] = json_vector(set.center_of_mass);
  root["mass"] = set.mass;
  root["volume"] = set.volume;
  root["mesh_length_unit"] = utf8_field(set.length_unit, "mesh_length_unit");
  Json regions = Json::array();
  for (size_t i = 0; i < set.regions.size(); ++i) {
    const Region& region = set.regions[i];
    Json entry = Json::object();
    entry["mesh"] = utf8_field(region.mesh, fmt::format("regions[{}].mesh", i));
    entry["sha256"] = utf8_field(region.checksum, fmt::format("regions[{}].sha256", i));
    entry["unit"] = utf8_field(region.unit, fmt::format("regions[{}].unit", i));
    entry["density"] = region.density;
    entry["volume"] = region.volume;
    entry["faces"] = region.faces;
    regions.push_back(std::move(entry));
  }
  root["regions"] = std::move(regions);
  root["created"] = utf8_field(set.created, "created");
  Json history = Json::array(), notes = Json::array();
  for (size_t i = 0; i < set.history.size(); ++i)
    history.push_back(utf8_field(set.history[i], fmt::format("history[{}]", i)));
  for (size_t i = 0; i < set.notes.size(); ++i)
    notes.push_back(utf8_field(set.notes[i], fmt::format("notes[{}]", i)));
  root["history"] = std::move(history);
  root["notes"] = std::move(notes);
  Json coefficients = Json::array();
  for (int n = 0; n <= set.degree; ++n) {
    for (int m = 0; m <= n; ++m) {
      Json entry = Json::object();
      entry["n"] = n;
      entry["m"] = m;
      entry["C"] = set.C(n, m);
      entry["S"] = set.S(n, m);
      entry["sigma_C"] = set.sigma_C(n, m);
      entry["sigma_S"] = set.sigma_S(n, m);
      coefficients.push_back(std::move(entry));
    }
  }
  root["coefficients"] = std::move(coefficients);
  return root.dump(2) + "\n";
}

CoefficientSet parse_coefficient_json(const std::string& text, const std::string& source_name) {
  return with_positive_degree_zero(JsonReader(text, source_name).read(), source_name);
}

void write_coefficient_json(const CoefficientSet& set, const std::string& path) {
  write_coefficient_files(set, {{path, CoefficientForm::json}});
}

CoefficientForm coefficient_form_for(const std::string& path) {
  constexpr std::string_view suffix = ".json";
  if (path.size() < suffix.size()) return CoefficientForm::text;
  const std::string_view end = std::string_view(path).substr(path.size() - suffix.size());
  const bool json = std::equal(end.begin(), end.end(), suffix.begin(), [](char a, char b) {
    return std::tolower(static_cast<unsigned char>(a)) == b;
  });
  return json ? CoefficientForm::json : CoefficientForm::text;
}

void write_coefficient_files(const CoefficientSet& set, const std::vector<CoefficientOutput>& outputs) {
  OutputGroup group;
  for (const CoefficientOutput& output : outputs) {
    group.stage(output.path, formatted_for(output.path, [&] {
                  return output.form == CoefficientForm::json ? format_coefficient_json(set)
                                                              : format_coefficient_text(set);
                }));
  }
  group.commit();
}

}  // namespace polystokes
