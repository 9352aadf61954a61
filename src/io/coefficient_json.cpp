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

}  // namespace

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

}  // namespace polystokes
