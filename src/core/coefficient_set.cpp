#include "polystokes/core/coefficient_set.h"

#include <fmt/format.h>

#include <cctype>
#include <cmath>
#include <ctime>

#include "polystokes/core/errors.h"

namespace polystokes {

const std::vector<KindName<OriginKind>>& origin_names() {
  static const std::vector<KindName<OriginKind>> names = {
      {OriginKind::center_of_mass, "com", "the centre of mass"},
      {OriginKind::mesh, "mesh", "the origin of the mesh frame"},
      {OriginKind::point, "point", "a declared point of the mesh frame"},
      {OriginKind::shifted, "shifted", "a point an origin shift moved it to"},
      {OriginKind::unknown, kUnknownLabel, "unknown"},
  };
  return names;
}

const std::vector<KindName<FrameKind>>& frame_names() {
  static const std::vector<KindName<FrameKind>> names = {
      {FrameKind::mesh, "mesh", "the axes of the mesh frame"},
      {FrameKind::principal, "principal", "the principal axes of inertia"},
      {FrameKind::rotated, "rotated", "axes rotated from the source's"},
      {FrameKind::declared, "declared", "a declared frame"},
      {FrameKind::unknown, kUnknownLabel, "unknown"},
  };
  return names;
}

namespace {

template <typename Kind>
const KindName<Kind>& name_of(const std::vector<KindName<Kind>>& names, Kind kind) {
  for (const KindName<Kind>& name : names)
    if (name.value == kind) return name;
  throw ConventionError(fmt::format("kind {} has no name", static_cast<int>(kind)));
}

template <typename Kind>
std::string words_of(const std::vector<KindName<Kind>>& names) {
  std::string words;
  for (size_t i = 0; i < names.size(); ++i) words += fmt::format("{}{}", i ? ", " : "", names[i].word);
  return words;
}

}  // namespace

std::string to_string(OriginKind origin) { return name_of(origin_names(), origin).word; }
std::string describe(OriginKind origin) { return name_of(origin_names(), origin).description; }

OriginKind parse_origin_kind(const std::string& text) {
  for (const KindName<OriginKind>& name : origin_names())
    if (text == name.word) return name.value;
  throw ConventionError(fmt::format("unknown origin '{}' (expected {})", text, words_of(origin_names())));
}

std::string to_string(FrameKind frame) { return name_of(frame_names(), frame).word; }
std::string describe(FrameKind frame) { return name_of(frame_names(), frame).description; }

FrameKind parse_frame_kind(const std::string& label) {
  if (label.empty()) throw ConventionError("a frame label must not be empty");
  if (label == to_string(FrameKind::declared))
    throw ConventionError("'declared' names no frame: give the declared frame's own label");
  for (const KindName<FrameKind>& name : frame_names())
    if (label == name.word) return name.value;
  return FrameKind::declared;
}

std::string frame_label(const CoefficientSet& set) {
  if (set.frame != FrameKind::declared) return to_string(set.frame);
  if (!set.frame_metadata.name) throw ConventionError("a declared frame lacks its name");
  return *set.frame_metadata.name;
}

void set_frame_label(CoefficientSet& set, const std::string& label) {
  set.frame = parse_frame_kind(label);
  if (set.frame == FrameKind::declared) set.frame_metadata.name = label;
}

CoefficientSet make_empty_set(int degree) {
  if (degree < 0) throw ConventionError("degree must be >= 0, got " + std::to_string(degree));
  CoefficientSet set;
  set.degree = degree;
  const int size = degree + 1;
  set.C = Eigen::MatrixXd::Zero(size, size);
  set.S = Eigen::MatrixXd::Zero(size, size);
  set.sigma_C = Eigen::MatrixXd::Zero(size, size);
  set.sigma_S = Eigen::MatrixXd::Zero(size, size);
  return set;
}

std::string utc_timestamp() {
  const std::time_t now = std::time(nullptr);
  std::tm tm{};
  gmtime_r(&now, &tm);  // the reentrant form: std::gmtime shares one buffer between threads
  char buffer[32];
  std::strftime(buffer, sizeof buffer, "%Y-%m-%dT%H:%M:%SZ", &tm);
  return buffer;
}

MeshUnitChoice mesh_unit_for_set(const CoefficientSet& set, const std::string& mesh_checksum,
                                 std::optional<LengthUnit> requested, const std::string& mesh_name) {
  for (size_t i = 0; i < set.regions.size(); ++i) {
    const Region& region = set.regions[i];
    if (mesh_checksum.empty() || region.checksum != mesh_checksum) continue;
    const LengthUnit recorded = region.unit;
    if (requested && *requested != recorded)
      throw ConventionError(fmt::format(
          "{} is region {} of the set (same SHA-256), which was computed from it in {}, but it is to be read "
          "in {}: lengths would be off by a factor 1000 (read it in {}, or leave the unit out)",
          mesh_name, i + 1, to_string(region.unit), to_string(*requested), to_string(region.unit)));
    return {recorded,
            fmt::format("the unit the set records for region {}, whose SHA-256 this file has", i + 1)};
  }
  if (requested) return {*requested, "as given"};
  if (!set.regions.empty())
    return {set.length_unit, "the unit of the set's source meshes; this file is none of them"};
  return {LengthUnit::meter, "the default; the set records no source mesh"};
}

namespace {

// True for "YYYY-MM-DDTHH:MM:SS[.digits]Z" with a real Gregorian date, hour 0..23, minute 0..59 and
// second 0..60 (60: a leap second).
bool is_iso8601_utc(const std::string& text) {
  const auto digits = [&](size_t at, size_t count, int& value) {
    if (at + count > text.size()) return false;
    value = 0;
    for (size_t i = at; i < at + count; ++i) {
      if (!std::isdigit(static_cast<unsigned char>(text[i]))) return false;
      value = value * 10 + (text[i] - '0');
    }
    return true;
  };
  int year = 0, month = 0, day = 0, hour = 0, minute = 0, second = 0;
  if (!digits(0, 4, year) || text.size() < 20 || text[4] != '-' || !digits(5, 2, month) || text[7] != '-' ||
      !digits(8, 2, day) || text[10] != 'T' || !digits(11, 2, hour) || text[13] != ':' ||
      !digits(14, 2, minute) || text[16] != ':' || !digits(17, 2, second))
    return false;
  size_t end = 19;
  if (text[end] == '.') {
    const size_t first = ++end;
    while (end < text.size() && std::isdigit(static_cast<unsigned char>(text[end]))) ++end;
    if (end == first) return false;
  }
  if (end + 1 != text.size() || text[end] != 'Z') return false;
  const bool leap = (year % 4 == 0 && year % 100 != 0) || year % 400 == 0;
  const int month_days[] = {31, leap ? 29 : 28, 31, 30, 31, 30, 31, 31, 30, 31, 30, 31};
  return month >= 1 && month <= 12 && day >= 1 && day <= month_days[month - 1] && hour <= 23 &&
         minute <= 59 && second <= 60;
}

std::string angle_text(double degrees) { return fmt::format("{} deg", degrees); }

}  // namespace

void check_frame_metadata(const FrameMetadata& frame) {
  if (frame.name && frame.name->empty()) throw ConventionError("frame name: must not be empty");
  if (frame.pole_ra.has_value() != frame.pole_dec.has_value())
    throw ConventionError("frame pole: give both right ascension and declination");
  if (frame.pole_ra && !(*frame.pole_ra >= 0 && *frame.pole_ra < 360))
    throw ConventionError(
        fmt::format("frame pole: right ascension {} deg is outside [0, 360)", *frame.pole_ra));
  if (frame.pole_dec && !(*frame.pole_dec >= -90 && *frame.pole_dec <= 90))
    throw ConventionError(
        fmt::format("frame pole: declination {} deg is outside [-90, 90]", *frame.pole_dec));
  if (frame.meridian && !(*frame.meridian >= 0 && *frame.meridian < 360))
    throw ConventionError(
        fmt::format("frame prime meridian: angle {} deg is outside [0, 360)", *frame.meridian));
  if (frame.meridian && !frame.epoch)
    throw ConventionError("frame prime meridian: an angle needs the epoch it holds at");
  if (frame.epoch && !frame.pole_ra && !frame.meridian)
    throw ConventionError("frame epoch: given without a pole or prime meridian it would date");
  if (frame.epoch && !is_iso8601_utc(*frame.epoch))
    throw ConventionError(fmt::format(
        "frame epoch: '{}' is not an ISO 8601 UTC time YYYY-MM-DDTHH:MM:SS[.fraction]Z with a real date",
        *frame.epoch));
}

std::string describe(const FrameMetadata& frame) {
  std::vector<std::string> parts;
  if (frame.name) parts.push_back(fmt::format("name '{}'", *frame.name));
  if (frame.definition) parts.push_back(fmt::format("definition '{}'", *frame.definition));
  if (frame.pole_ra && frame.pole_dec)
    parts.push_back(
        fmt::format("pole RA {} Dec {}", angle_text(*frame.pole_ra), angle_text(*frame.pole_dec)));
  if (frame.meridian) parts.push_back("prime meridian " + angle_text(*frame.meridian));
  if (frame.epoch) {
    if (frame.pole_ra || frame.meridian)
      parts.back() += " at " + *frame.epoch;
    else
      parts.push_back("epoch " + *frame.epoch);
  }
  return fmt::format("{}", fmt::join(parts, ", "));
}

void declare_frame_metadata(CoefficientSet& set, const FrameMetadata& given) {
  if (given.empty()) return;
  FrameMetadata merged = set.frame_metadata;
  const auto take = [](auto& to, const auto& from) {
    if (from) to = from;
  };
  take(merged.name, given.name);
  take(merged.definition, given.definition);
  if (given.pole_ra || given.pole_dec) {
    merged.pole_ra = given.pole_ra;
    merged.pole_dec = given.pole_dec;
  }
  take(merged.meridian, given.meridian);
  take(merged.epoch, given.epoch);
  check_frame_metadata(merged);
  set.frame_metadata = merged;
  set.history.push_back("frame metadata given: " + describe(given));
}

void drop_frame_orientation(CoefficientSet& set) {
  FrameMetadata& frame = set.frame_metadata;
  if (!frame.pole_ra && !frame.meridian && !frame.epoch) return;
  FrameMetadata dropped;
  dropped.pole_ra = frame.pole_ra;
  dropped.pole_dec = frame.pole_dec;
  dropped.meridian = frame.meridian;
  dropped.epoch = frame.epoch;
  frame.pole_ra = frame.pole_dec = frame.meridian = std::nullopt;
  frame.epoch = std::nullopt;
  set.history.push_back(fmt::format(
      "frame metadata: {} dropped, as it described the axes before the rotation{}", describe(dropped),
      frame.name ? fmt::format(" (the name '{}' now names the frame the axes were rotated from)", *frame.name)
                 : std::string()));
}

}  // namespace polystokes
