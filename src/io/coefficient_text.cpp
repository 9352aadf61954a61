// The polystokes text form of a coefficient set: writer and reader (docs/format.md).
#include <fmt/format.h>

#include <algorithm>
#include <array>
#include <charconv>
#include <climits>
#include <cmath>
#include <iterator>
#include <map>
#include <optional>
#include <string_view>
#include <vector>

#include "io/coefficient_common.h"
#include "io/coefficient_fields.h"
#include "polystokes/core/errors.h"
#include "polystokes/io/coefficient_file.h"
#include "polystokes/sets/conventions.h"

namespace polystokes {
namespace {

using namespace coefficient_io;

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
  std::string name;
  bool repeatable;
};

// The keys a section may hold, from the field tables.
const std::vector<KeySpec>& keys_of(Rank rank) {
  static const std::array<std::vector<KeySpec>, kProvenance + 1> specs = [] {
    std::array<std::vector<KeySpec>, kProvenance + 1> out;
    const std::pair<Rank, Section> sections[] = {
        {kBody, Section::body}, {kExpansion, Section::expansion}, {kProvenance, Section::provenance}};
    for (const auto& [rank, section] : sections)
      for (const HeaderField* field : fields_of(section))
        for (const std::string& key : text_keys(*field))
          out[rank].push_back({key, field->kind == Kind::text_list});
    for (const RegionField& field : region_fields()) out[kRegion].push_back({field.text_key, false});
    return out;
  }();
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

  const Entry& single(const Section& section, const std::string& key) const {
    const auto found = section.entries.find(key);
    if (found == section.entries.end()) {
      fail(section.line, fmt::format("section [{}] lacks the key '{}'", kSectionNames[section.rank], key));
    }
    return found->second.front();
  }

  static const std::vector<Entry>& all(const Section& section, const std::string& key) {
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

  double real(std::string_view token, long line, std::string_view what) const {
    double value = 0;
    const auto result = std::from_chars(token.data(), token.data() + token.size(), value);
    if (result.ec != std::errc() || result.ptr != token.data() + token.size() || !std::isfinite(value))
      fail(line, fmt::format("{}: {} is not a finite decimal number", what, shown(token)));
    return value;
  }

  long long integer(std::string_view token, long line, std::string_view what) const {
    long long value = 0;
    const auto result = std::from_chars(token.data(), token.data() + token.size(), value);
    if (result.ec != std::errc() || result.ptr != token.data() + token.size())
      fail(line, fmt::format("{}: {} is not an integer", what, shown(token)));
    return value;
  }

  double real_value(const Section& section, const std::string& key) const {
    const Entry& entry = single(section, key);
    return real(entry.value, entry.line, key);
  }

  std::string text_value(const Section& section, const std::string& key) const {
    return text_value(single(section, key));
  }

  // A position or axis written as the bare word `unknown` (CoefficientSet::origin_known, axes_known).
  bool is_unknown(const Section& section, const std::string& key) const {
    return single(section, key).value == kUnknownLabel;
  }

  Eigen::Vector3d vector_value(const Section& section, const std::string& key) const {
    const Entry& entry = single(section, key);
    const auto parts = tokens(entry.value);
    if (parts.size() != 3)
      fail(entry.line, fmt::format("{}: expected 3 numbers x y z, found {}", key, parts.size()));
    return {real(parts[0], entry.line, key), real(parts[1], entry.line, key),
            real(parts[2], entry.line, key)};
  }

  // A word of a name table, spelled as text; `parse` throws ConventionError on a word it does not know.
  template <typename Parse>
  auto word_value(const Entry& entry, Parse parse) const {
    const std::string word = text_value(entry);
    try {
      return parse(word);
    } catch (const ConventionError& error) {
      fail(entry.line, error.what());
    }
  }

  bool choice(const Section& section, const std::string& key, std::string_view yes,
              std::string_view no) const {
    const Entry& entry = single(section, key);
    if (entry.value == yes) return true;
    if (entry.value == no) return false;
    fail(entry.line, fmt::format("{}: expected {} or {}, found {}", key, yes, no, shown(entry.value)));
  }

  void read_header(CoefficientSet& set) const {
    for (const HeaderField* field : fields_of(coefficient_io::Section::body))
      read_field(*field, sections_.at(0), set);
    for (const HeaderField* field : fields_of(coefficient_io::Section::expansion))
      read_field(*field, sections_.at(1), set);
    try {
      check_frame_metadata(set.frame_metadata);
    } catch (const ConventionError& error) {
      fail(single(sections_.at(1), "frame").line, error.what());
    }
    for (const Section& section : sections_) {
      if (section.rank != kRegion) continue;
      Region region;
      for (const RegionField& field : region_fields()) {
        if (field.kind == Kind::text) region.*field.text = text_value(section, field.text_key);
        if (field.kind == Kind::unit)
          region.*field.unit = word_value(single(section, field.text_key), parse_length_unit);
        if (field.kind == Kind::real) region.*field.real = real_value(section, field.text_key);
        if (field.kind == Kind::count) {
          const Entry& entry = single(section, field.text_key);
          region.*field.count = static_cast<long>(integer(entry.value, entry.line, field.text_key));
        }
      }
      set.regions.push_back(region);
    }
    for (const HeaderField* field : fields_of(coefficient_io::Section::provenance))
      read_field(*field, sections_.back(), set);
  }

  // One header field, spelled as its kind says (HeaderField).
  void read_field(const HeaderField& field, const Section& section, CoefficientSet& set) const {
    const char* key = field.text_key;
    switch (field.kind) {
      case Kind::text:
        set.*field.text = text_value(section, key);
        break;
      case Kind::real:
        set.*field.real = real_value(section, key);
        break;
      case Kind::vector:
        set.*field.vector = vector_value(section, key);
        break;
      case Kind::degree: {
        const Entry& degree = single(section, key);
        const long long value = integer(degree.value, degree.line, key);
        if (value < 0 || value >= INT_MAX)
          fail(degree.line, fmt::format("degree must be in 0..{}, got {}", INT_MAX - 1, value));
        set.degree = static_cast<int>(value);
        break;
      }
      case Kind::normalization: {
        const Entry& normalization = single(section, key);
        try {
          set.convention.normalization = parse_normalization(std::string(normalization.value));
        } catch (const ConventionError& error) {
          fail(normalization.line, error.what());
        }
        break;
      }
      case Kind::phase:
        set.convention.condon_shortley = choice(section, key, "yes", "no");
        break;
      case Kind::zonal:
        set.convention.zonal_as_j = choice(section, key, "J", "C");
        break;
      case Kind::position:
        set.origin_known = !is_unknown(section, key);
        if (set.origin_known) set.origin_in_mesh = vector_value(section, key);
        break;
      case Kind::axes: {
        const std::vector<std::string> keys = text_keys(field);
        set.axes_known = !is_unknown(section, keys[0]);
        for (int row = 0; row < 3; ++row) {
          const std::string& axis_key = keys[size_t(row)];
          if (is_unknown(section, axis_key) == set.axes_known)
            fail(single(section, axis_key).line,
                 fmt::format("{}: the three axes must all be given or all be {}", axis_key, kUnknownLabel));
          if (set.axes_known) set.axes_in_mesh.row(row) = vector_value(section, axis_key);
        }
        break;
      }
      case Kind::text_list:
        for (const Entry& entry : all(section, key)) (set.*field.list).push_back(text_value(entry));
        break;
      case Kind::unit:
        set.*field.unit = word_value(single(section, key), parse_length_unit);
        break;
      case Kind::origin_kind:
        set.origin = word_value(single(section, key), parse_origin_kind);
        break;
      case Kind::frame_label:
        word_value(single(section, key), [&](const std::string& label) {
          set_frame_label(set, label);
          return 0;
        });
        break;
      case Kind::optional_text:
      case Kind::optional_real: {
        const std::vector<Entry>& entries = all(section, key);
        if (entries.empty()) break;
        const Entry& entry = entries.front();
        if (is_declared_frame_name(field, set))
          fail(entry.line, fmt::format("{}: a declared frame is named by its label in 'frame'", key));
        if (field.kind == Kind::optional_text)
          set.frame_metadata.*field.optional_text = text_value(entry);
        else
          set.frame_metadata.*field.optional_real = real(entry.value, entry.line, key);
        break;
      }
      case Kind::count:
        break;  // region fields only
    }
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

// One header field as its kind spells it (HeaderField), after its comment.
void write_field(const HeaderField& field, const CoefficientSet& set, fmt::memory_buffer& out) {
  if (!is_written(field, set)) return;
  const auto put = [&](auto&&... args) {
    fmt::format_to(std::back_inserter(out), std::forward<decltype(args)>(args)...);
  };
  if (field.kind == Kind::normalization)
    put(fmt::runtime(field.comment), fmt::join(normalization_words(), " | "));
  else
    put("{}", field.comment);
  const auto line = [&](const std::string& key, const std::string& value) { put("{} = {}\n", key, value); };
  const char* key = field.text_key;
  switch (field.kind) {
    case Kind::text:
      line(key, quote_text(set.*field.text));
      break;
    case Kind::real:
      line(key, number(set.*field.real));
      break;
    case Kind::vector:
      line(key, vector_text(set.*field.vector));
      break;
    case Kind::degree:
      line(key, std::to_string(set.degree));
      break;
    case Kind::normalization:
      line(key, to_string(set.convention.normalization));
      break;
    case Kind::phase:
      line(key, set.convention.condon_shortley ? "yes" : "no");
      break;
    case Kind::zonal:
      line(key, set.convention.zonal_as_j ? "J" : "C");
      break;
    case Kind::position:
      line(key, set.origin_known ? vector_text(set.origin_in_mesh) : kUnknownLabel);
      break;
    case Kind::axes: {
      const std::vector<std::string> keys = text_keys(field);
      for (int row = 0; row < 3; ++row)
        line(keys[size_t(row)], set.axes_known ? vector_text(set.axes_in_mesh.row(row)) : kUnknownLabel);
      break;
    }
    case Kind::text_list:
      for (const std::string& entry : set.*field.list) line(key, quote_text(entry));
      break;
    case Kind::unit:
      line(key, quote_text(to_string(set.*field.unit)));
      break;
    case Kind::origin_kind:
      line(key, quote_text(to_string(set.origin)));
      break;
    case Kind::frame_label:
      line(key, quote_text(frame_label(set)));
      break;
    case Kind::optional_text:
      line(key, quote_text(*(set.frame_metadata.*field.optional_text)));
      break;
    case Kind::optional_real:
      line(key, number(*(set.frame_metadata.*field.optional_real)));
      break;
    case Kind::count:
      break;  // region fields only
  }
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

  const auto put_fields = [&](coefficient_io::Section section) {
    for (const HeaderField* field : fields_of(section)) write_field(*field, set, out);
  };
  put("\n[body]\n");
  put_fields(coefficient_io::Section::body);
  put("\n[expansion]\n");
  put_fields(coefficient_io::Section::expansion);
  for (const Region& region : set.regions) {
    put("\n[region]\n{}", kRegionComment);
    for (const RegionField& field : region_fields()) {
      if (field.kind == Kind::text) put("{} = {}\n", field.text_key, quote_text(region.*field.text));
      if (field.kind == Kind::unit)
        put("{} = {}\n", field.text_key, quote_text(to_string(region.*field.unit)));
      if (field.kind == Kind::real) put("{} = {}\n", field.text_key, number(region.*field.real));
      if (field.kind == Kind::count) put("{} = {}\n", field.text_key, region.*field.count);
    }
  }
  put("\n[provenance]\n");
  put_fields(coefficient_io::Section::provenance);

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

}  // namespace polystokes
