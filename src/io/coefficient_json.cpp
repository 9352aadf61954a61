// The JSON form of a coefficient set: writer and reader, with the same content and checks as the text form.
#include <fmt/format.h>

#include <algorithm>
#include <climits>
#include <cmath>
#include <iterator>
#include <nlohmann/json.hpp>
#include <string_view>
#include <unordered_map>
#include <utility>
#include <vector>

#include "io/coefficient_common.h"
#include "io/coefficient_fields.h"
#include "polystokes/core/errors.h"
#include "polystokes/io/coefficient_file.h"
#include "polystokes/sets/conventions.h"

namespace polystokes {
namespace {

using namespace coefficient_io;
using Json = nlohmann::ordered_json;

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
    check_keys(root, top_level_keys(), "top level", lines_.top);

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
    std::vector<std::string> checked_objects;
    bool regions_read = false;
    for (const HeaderField* field : json_ordered_fields()) {
      // The regions sit between the body and expansion fields and the provenance.
      if (field->section == coefficient_io::Section::provenance && !regions_read) {
        read_regions(member(root, "regions"), set);
        regions_read = true;
      }
      read_field(root, *field, checked_objects, set);
    }
    try {
      check_frame_metadata(set.frame_metadata);
    } catch (const ConventionError& error) {
      fail(key_line("frame"), error.what());
    }
    read_coefficients(member(root, "coefficients"), set.degree, set);
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

  void check_keys(const Json& object, const std::vector<std::string>& allowed, const std::string& where,
                  long line) const {
    if (!object.is_object()) fail(line, fmt::format("{} must be a JSON object", where));
    for (const auto& item : object.items()) {
      if (std::find(allowed.begin(), allowed.end(), item.key()) == allowed.end()) {
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

  // A word of a name table, spelled as a string; `parse` throws ConventionError on a word it does not know.
  template <typename Parse>
  auto word(const Json& value, const std::string& what, long line, Parse parse) const {
    const std::string word = text(value, what, line);
    try {
      return parse(word);
    } catch (const ConventionError& error) {
      fail(line, error.what());
    }
  }

  bool boolean(const Json& value, const std::string& what, long line) const {
    if (!value.is_boolean()) fail(line, fmt::format("\"{}\" must be true or false", what));
    return value.get<bool>();
  }

  Eigen::Vector3d vector(const Json& value, const std::string& what, long line) const {
    if (!value.is_array() || value.size() != 3)
      fail(line, fmt::format("\"{}\" must be an array of 3 numbers", what));
    return {real(value[0], what, line), real(value[1], what, line), real(value[2], what, line)};
  }

  std::vector<std::string> text_list(const Json& list, const std::string& what, long line) const {
    if (!list.is_array()) fail(line, fmt::format("\"{}\" must be an array of strings", what));
    std::vector<std::string> out;
    for (const Json& item : list) out.push_back(text(item, what, line));
    return out;
  }

  // Every key the top level may hold: the fixed format and units blocks, the header fields (an object
  // counted once), the regions and the coefficient table.
  static std::vector<std::string> top_level_keys() {
    std::vector<std::string> keys = {"format", "units", "regions", "coefficients"};
    for (const HeaderField& field : header_fields()) {
      const std::string key = std::string(field.json_key).substr(0, std::string(field.json_key).find('.'));
      if (std::find(keys.begin(), keys.end(), key) == keys.end()) keys.push_back(key);
    }
    return keys;
  }

  // One header field, spelled as its kind says (HeaderField). A field inside an object ("origin.label")
  // checks that object's keys when the first of its fields is read; messages give the object's line.
  void read_field(const Json& root, const HeaderField& field, std::vector<std::string>& checked_objects,
                  CoefficientSet& set) const {
    const std::string path = field.json_key;
    const size_t dot = path.find('.');
    const std::string top = path.substr(0, dot);
    const long line = key_line(top);
    const Json* value = nullptr;
    if (dot == std::string::npos) {
      value = &member(root, top.c_str());
    } else {
      const Json& object = member(root, top.c_str());
      if (std::find(checked_objects.begin(), checked_objects.end(), top) == checked_objects.end()) {
        std::vector<std::string> children;
        for (const HeaderField& f : header_fields())
          if (std::string(f.json_key).rfind(top + ".", 0) == 0)
            children.push_back(f.json_key + top.size() + 1);
        check_keys(object, children, "\"" + top + "\"", line);
        checked_objects.push_back(top);
      }
      const bool optional = field.kind == Kind::optional_text || field.kind == Kind::optional_real;
      if (optional && !object.contains(path.substr(dot + 1))) return;
      value = &member(object, path.substr(dot + 1).c_str(), line);
    }
    switch (field.kind) {
      case Kind::text:
        set.*field.text = text(*value, path, line);
        break;
      case Kind::real:
        set.*field.real = real(*value, path, line);
        break;
      case Kind::vector:
        set.*field.vector = vector(*value, path, line);
        break;
      case Kind::degree: {
        const long long degree = integer(*value, path, line);
        if (degree < 0 || degree >= INT_MAX)
          fail(line, fmt::format("degree must be in 0..{}, got {}", INT_MAX - 1, degree));
        set.degree = static_cast<int>(degree);
        break;
      }
      case Kind::normalization:
        try {
          set.convention.normalization = parse_normalization(text(*value, path, line));
        } catch (const ConventionError& error) {
          fail(line, error.what());
        }
        break;
      case Kind::phase:
        set.convention.condon_shortley = boolean(*value, path, line);
        break;
      case Kind::zonal:
        set.convention.zonal_as_j = boolean(*value, path, line);
        break;
      case Kind::position:
        set.origin_known = !value->is_null();
        if (set.origin_known) set.origin_in_mesh = vector(*value, path, line);
        break;
      case Kind::axes: {
        const Json& axes = *value;
        set.axes_known = !axes.is_null();
        if (set.axes_known && (!axes.is_array() || axes.size() != 3))
          fail(line,
               fmt::format("\"{}\".\"{}\" must be an array of 3 rows or null", top, path.substr(dot + 1)));
        for (int row = 0; row < 3 && set.axes_known; ++row)
          set.axes_in_mesh.row(row) = vector(axes[row], fmt::format("{}[{}]", path, row), line);
        break;
      }
      case Kind::text_list:
        set.*field.list = text_list(*value, path, line);
        break;
      case Kind::unit:
        set.*field.unit = word(*value, path, line, parse_length_unit);
        break;
      case Kind::origin_kind:
        set.origin = word(*value, path, line, parse_origin_kind);
        break;
      case Kind::frame_label:
        word(*value, path, line, [&](const std::string& label) {
          set_frame_label(set, label);
          return 0;
        });
        break;
      case Kind::optional_text:
        if (is_declared_frame_name(field, set))
          fail(line, fmt::format("\"{}\": a declared frame is named by its label", path));
        set.frame_metadata.*field.optional_text = text(*value, path, line);
        break;
      case Kind::optional_real:
        set.frame_metadata.*field.optional_real = real(*value, path, line);
        break;
      case Kind::count:
        break;  // region fields only
    }
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
      std::vector<std::string> keys;
      for (const RegionField& field : region_fields()) keys.emplace_back(field.json_key);
      check_keys(entry, keys, where, line);
      Region region;
      for (const RegionField& field : region_fields()) {
        const Json& value = member(entry, field.json_key, line);
        const std::string what = where + "." + field.json_key;
        if (field.kind == Kind::text) region.*field.text = text(value, what, line);
        if (field.kind == Kind::unit) region.*field.unit = word(value, what, line, parse_length_unit);
        if (field.kind == Kind::real) region.*field.real = real(value, what, line);
        if (field.kind == Kind::count) region.*field.count = static_cast<long>(integer(value, what, line));
      }
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

// One header field as its kind spells it (HeaderField); `name` is the top-level key, named when a text is
// not UTF-8.
Json json_value(const HeaderField& field, const CoefficientSet& set, const std::string& name) {
  switch (field.kind) {
    case Kind::text:
      return utf8_field(set.*field.text, name);
    case Kind::real:
      return set.*field.real;
    case Kind::vector:
      return json_vector(set.*field.vector);
    case Kind::degree:
      return set.degree;
    case Kind::normalization:
      return to_string(set.convention.normalization);
    case Kind::phase:
      return set.convention.condon_shortley;
    case Kind::zonal:
      return set.convention.zonal_as_j;
    case Kind::position:
      return set.origin_known ? json_vector(set.origin_in_mesh) : Json(nullptr);
    case Kind::axes: {
      Json axes = set.axes_known ? Json::array() : Json(nullptr);
      for (int row = 0; row < 3 && set.axes_known; ++row)
        axes.push_back(json_vector(set.axes_in_mesh.row(row)));
      return axes;
    }
    case Kind::text_list: {
      Json list = Json::array();
      const std::vector<std::string>& entries = set.*field.list;
      for (size_t i = 0; i < entries.size(); ++i)
        list.push_back(utf8_field(entries[i], fmt::format("{}[{}]", name, i)));
      return list;
    }
    case Kind::unit:
      return to_string(set.*field.unit);
    case Kind::origin_kind:
      return to_string(set.origin);
    case Kind::frame_label:
      return utf8_field(frame_label(set), name);
    case Kind::optional_text:
      return utf8_field(*(set.frame_metadata.*field.optional_text), name);
    case Kind::optional_real:
      return *(set.frame_metadata.*field.optional_real);
    case Kind::count:
      break;  // region fields only
  }
  return Json(nullptr);
}

Json json_regions(const CoefficientSet& set) {
  Json regions = Json::array();
  for (size_t i = 0; i < set.regions.size(); ++i) {
    const Region& region = set.regions[i];
    Json entry = Json::object();
    for (const RegionField& field : region_fields()) {
      Json& slot = entry[field.json_key];
      if (field.kind == Kind::text)
        slot = utf8_field(region.*field.text, fmt::format("regions[{}].{}", i, field.json_key));
      if (field.kind == Kind::unit) slot = to_string(region.*field.unit);
      if (field.kind == Kind::real) slot = region.*field.real;
      if (field.kind == Kind::count) slot = region.*field.count;
    }
    regions.push_back(std::move(entry));
  }
  return regions;
}

}  // namespace

std::string format_coefficient_json(const CoefficientSet& set) {
  check_writable(set);
  Json root;
  root["format"] = {{"name", kCoefficientFormatName}, {"version", kCoefficientFormatVersion}};
  Json units = Json::object();
  for (const auto& [key, unit] : json_units()) units[key] = unit;
  root["units"] = units;
  bool regions_written = false;
  for (const HeaderField* field : json_ordered_fields()) {
    // The regions sit between the body and expansion fields and the provenance.
    if (field->section == coefficient_io::Section::provenance && !regions_written) {
      root["regions"] = json_regions(set);
      regions_written = true;
    }
    if (!is_written(*field, set)) continue;
    const std::string path = field->json_key;
    const size_t dot = path.find('.');
    const std::string top = path.substr(0, dot);
    Json& slot = dot == std::string::npos ? root[top] : root[top][path.substr(dot + 1)];
    slot = json_value(*field, set, top);
  }
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

}  // namespace polystokes
