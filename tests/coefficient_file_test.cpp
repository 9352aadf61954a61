// Tests of the coefficient text format and its JSON form: bit-exact round trips, the numbers written, the
// JSON layout, and one FormatError per kind of bad input naming the file and the right line.
#include "polystokes/io/coefficient_file.h"

#include <algorithm>
#include <cmath>
#include <cstdint>
#include <cstdio>
#include <cstdlib>
#include <cstring>
#include <filesystem>
#include <functional>
#include <limits>
#include <nlohmann/json.hpp>
#include <random>
#include <sstream>
#include <string>
#include <vector>

#include "io/coefficient_fields.h"
#include "polystokes/core/errors.h"
#include "test_support.h"

namespace polystokes {
namespace {

using Json = nlohmann::json;
using Limits = std::numeric_limits<double>;

uint64_t bits(double value) {
  uint64_t out;
  std::memcpy(&out, &value, sizeof out);
  return out;
}

double from_bits(uint64_t pattern) {
  double out;
  std::memcpy(&out, &pattern, sizeof out);
  return out;
}

// Uniform over bit patterns, so every binary exponent (subnormals included) is equally likely; NaN and
// infinity patterns are drawn again.
double random_finite(std::mt19937_64& random) {
  for (;;) {
    const double value = from_bits(random());
    if (std::isfinite(value)) return value;
  }
}

// Values that trip up decimal conversion: signed zero, extremes of range, subnormals, repeating binary
// fractions, neighbours of powers of ten and two.
std::vector<double> awkward_values() {
  return {-0.0,
          0.0,
          1.0 / 3.0,
          -2.0 / 3.0,
          0.1,
          Limits::max(),
          -Limits::max(),
          Limits::min(),
          Limits::denorm_min(),
          -Limits::denorm_min(),
          from_bits(0x000FFFFFFFFFFFFFull),  // largest subnormal
          std::nextafter(1.0, 2.0),
          std::nextafter(1.0, 0.0),
          9007199254740993.0,  // 2^53 + 1, rounds to 2^53
          1e23,
          5e-324 * 3,
          123456789012345678.0,
          1e-310,
          -1e300,
          std::ldexp(1.0, -1022) * 1.5};
}

std::string awkward_text(int index) {
  const std::string texts[] = {
      "plain",
      "",
      " leading and trailing blanks ",
      "key = value # not a comment",
      "[region] on a line",
      "quote \" backslash \\ end\\",
      "two\nlines\r\nand a tab\there",
      "control \x01\x1f and delete \x7f",
      "unicode: ρ ∮ dV ≈ 3·10⁻⁶ Ω 🪐 ß",
      "\\x41 is not an escape once written",
  };
  return texts[index % (sizeof texts / sizeof texts[0])];
}

// Degree 9, every field set, every number drawn from awkward_values() first and then at random.
CoefficientSet awkward_set() {
  std::mt19937_64 random(20240611);  // fixed seed: the same set on every run
  const std::vector<double> specials = awkward_values();
  size_t next_special = 0;
  const auto value = [&] {
    return next_special < specials.size() ? specials[next_special++] : random_finite(random);
  };

  CoefficientSet set = make_empty_set(9);
  set.body = "Tessel-7 \"Kappa\" = rock # nickname";
  set.gm = 1.0 / 3.0;
  set.reference_radius = std::nextafter(1250.0, 2000.0);
  set.convention = {Normalization::schmidt, true, true};
  set.origin = OriginKind::shifted;
  set.frame = FrameKind::rotated;
  set.origin_in_mesh = {-0.0, Limits::denorm_min(), -123.456};
  set.axes_in_mesh << 0.0, -1.0, 0.0, 1.0 / std::sqrt(2.0), 0.0, 1.0 / std::sqrt(2.0), -0.0, 0.1, 0.7;
  set.center_of_mass = {value(), value(), value()};
  set.mass = 6.02214076e23;
  set.volume = 4.0 / 3.0 * std::acos(-1.0) * 1250.0 * 1250.0 * 1250.0;
  set.brillouin_radius = 1.7976931348623157e308;
  set.length_unit = LengthUnit::kilometer;
  set.regions = {{"core = dense.obj", std::string(64, 'a'), LengthUnit::kilometer, 3200.5, 1e9 / 3.0, 5120},
                 {"vo#id.ply", "", LengthUnit::meter, -1100.0, -0.0, 0}};
  set.created = "polystokes 0.1.0, 2024-06-11T08:00:00Z";
  set.history = {"compute --degree 9", awkward_text(3), awkward_text(6)};
  for (int i = 0; i < 10; ++i) set.notes.push_back(awkward_text(i));
  set.notes.push_back(std::string("nul \0 inside", 12));
  for (int n = 0; n <= set.degree; ++n) {
    for (int m = 0; m <= n; ++m) {
      set.C(n, m) = value();
      set.S(n, m) = value();
      set.sigma_C(n, m) = (n + m) % 3 == 0 ? 0.0 : std::abs(random_finite(random));
      set.sigma_S(n, m) = (n + m) % 4 == 1 ? -0.0 : std::abs(random_finite(random));
    }
  }
  set.C(0, 0) = std::abs(set.C(0, 0));  // C00 > 0 in every zonal form, J included
  return set;
}

// Bytes that are not UTF-8: a lone continuation byte, an overlong '/', an encoded surrogate, 0xFF.
CoefficientSet awkward_set_with_raw_bytes() {
  CoefficientSet set = awkward_set();
  set.notes.push_back("bad \x80 \xC0\xAF \xED\xA0\x80 \xFF end");
  set.regions[1].mesh = "mesh\xFE.obj";
  return set;
}

void require_same_doubles(double a, double b, const std::string& what) {
  CAPTURE(what, a, b);
  REQUIRE(bits(a) == bits(b));
}

void require_same_vectors(const Eigen::Vector3d& a, const Eigen::Vector3d& b, const std::string& what) {
  for (int i = 0; i < 3; ++i) require_same_doubles(a[i], b[i], what + "[" + std::to_string(i) + "]");
}

// Every field compared; doubles bit for bit so -0.0 against 0.0 or a last-bit change fails.
void require_identical(const CoefficientSet& a, const CoefficientSet& b) {
  REQUIRE(a.body == b.body);
  REQUIRE(a.degree == b.degree);
  require_same_doubles(a.gm, b.gm, "gm");
  require_same_doubles(a.reference_radius, b.reference_radius, "reference_radius");
  REQUIRE(a.convention.normalization == b.convention.normalization);
  REQUIRE(a.convention.condon_shortley == b.convention.condon_shortley);
  REQUIRE(a.convention.zonal_as_j == b.convention.zonal_as_j);
  REQUIRE(a.origin == b.origin);
  REQUIRE(a.frame == b.frame);
  REQUIRE(a.origin_known == b.origin_known);
  REQUIRE(a.axes_known == b.axes_known);
  REQUIRE(a.frame_metadata.name == b.frame_metadata.name);
  REQUIRE(a.frame_metadata.definition == b.frame_metadata.definition);
  REQUIRE(a.frame_metadata.pole_ra == b.frame_metadata.pole_ra);
  REQUIRE(a.frame_metadata.pole_dec == b.frame_metadata.pole_dec);
  REQUIRE(a.frame_metadata.meridian == b.frame_metadata.meridian);
  REQUIRE(a.frame_metadata.epoch == b.frame_metadata.epoch);
  require_same_vectors(a.origin_in_mesh, b.origin_in_mesh, "origin_in_mesh");
  for (int row = 0; row < 3; ++row)
    require_same_vectors(a.axes_in_mesh.row(row), b.axes_in_mesh.row(row), "axes row " + std::to_string(row));
  require_same_vectors(a.center_of_mass, b.center_of_mass, "center_of_mass");
  require_same_doubles(a.mass, b.mass, "mass");
  require_same_doubles(a.volume, b.volume, "volume");
  require_same_doubles(a.brillouin_radius, b.brillouin_radius, "brillouin_radius");
  REQUIRE(a.length_unit == b.length_unit);
  REQUIRE(a.regions.size() == b.regions.size());
  for (size_t i = 0; i < a.regions.size(); ++i) {
    CAPTURE(i);
    REQUIRE(a.regions[i].mesh == b.regions[i].mesh);
    REQUIRE(a.regions[i].checksum == b.regions[i].checksum);
    REQUIRE(a.regions[i].unit == b.regions[i].unit);
    require_same_doubles(a.regions[i].density, b.regions[i].density, "density");
    require_same_doubles(a.regions[i].volume, b.regions[i].volume, "region volume");
    REQUIRE(a.regions[i].faces == b.regions[i].faces);
  }
  REQUIRE(a.created == b.created);
  REQUIRE(a.history == b.history);
  REQUIRE(a.notes == b.notes);
  for (int n = 0; n <= a.degree; ++n) {
    for (int m = 0; m <= n; ++m) {
      const std::string at = "(" + std::to_string(n) + "," + std::to_string(m) + ")";
      require_same_doubles(a.C(n, m), b.C(n, m), "C" + at);
      require_same_doubles(a.S(n, m), b.S(n, m), "S" + at);
      require_same_doubles(a.sigma_C(n, m), b.sigma_C(n, m), "sigma_C" + at);
      require_same_doubles(a.sigma_S(n, m), b.sigma_S(n, m), "sigma_S" + at);
    }
  }
}

std::vector<std::string> lines_of(const std::string& text) {
  std::vector<std::string> lines;
  std::istringstream in(text);
  for (std::string line; std::getline(in, line);) lines.push_back(line);
  return lines;
}

std::string joined(const std::vector<std::string>& lines) {
  std::string out;
  for (const auto& line : lines) out += line + "\n";
  return out;
}

// 1-based number of the first line starting with prefix; fails the test if there is none.
long line_starting(const std::string& text, const std::string& prefix) {
  const auto lines = lines_of(text);
  for (size_t i = 0; i < lines.size(); ++i)
    if (lines[i].rfind(prefix, 0) == 0) return static_cast<long>(i) + 1;
  FAIL("no line starts with '" << prefix << "'");
  return 0;
}

// 1-based line on which the first occurrence of fragment starts.
long line_containing(const std::string& text, const std::string& fragment) {
  const size_t at = text.find(fragment);
  REQUIRE(at != std::string::npos);
  return 1 + static_cast<long>(std::count(text.begin(), text.begin() + static_cast<long>(at), '\n'));
}

std::string with_line_replaced(const std::string& text, long line, const std::string& replacement) {
  auto lines = lines_of(text);
  lines.at(line - 1) = replacement;
  return joined(lines);
}

std::string with_line_removed(const std::string& text, long line) {
  auto lines = lines_of(text);
  lines.erase(lines.begin() + (line - 1));
  return joined(lines);
}

std::string with_line_inserted(const std::string& text, long before_line, const std::string& inserted) {
  auto lines = lines_of(text);
  lines.insert(lines.begin() + (before_line - 1), inserted);
  return joined(lines);
}

void require_format_error(const std::function<void()>& read, const std::string& file, long line,
                          const std::string& fragment) {
  try {
    read();
  } catch (const FormatError& error) {
    const std::string message = error.what();
    CAPTURE(message, line, fragment);
    const std::string place = line > 0 ? file + ":" + std::to_string(line) + ": " : file + ": ";
    REQUIRE(message.rfind(place, 0) == 0);
    REQUIRE(message.find(fragment) != std::string::npos);
    REQUIRE(message.find('\n') == std::string::npos);
    return;
  }
  FAIL("no FormatError; expected line " << line << ": " << fragment);
}

void require_text_error(const std::string& text, long line, const std::string& fragment) {
  require_format_error([&] { parse_coefficient_text(text, "bad.pcs"); }, "bad.pcs", line, fragment);
}

void require_json_error(const std::string& text, long line, const std::string& fragment) {
  require_format_error([&] { parse_coefficient_json(text, "bad.json"); }, "bad.json", line, fragment);
}

// Degree 3, one region, history and notes: small enough that each bad-input case is one edited line.
CoefficientSet small_set() {
  CoefficientSet set = make_empty_set(3);
  set.body = "Pebble";
  set.gm = 0.5;
  set.reference_radius = 100;
  set.mass = 7.5e9;
  set.volume = 3.75e6;
  set.brillouin_radius = 120;
  set.regions = {{"pebble.obj", "00ff", LengthUnit::meter, 2000, 3.75e6, 320}};
  set.history = {"compute"};
  set.notes = {"a note"};
  for (int n = 0; n <= 3; ++n) {
    for (int m = 0; m <= n; ++m) {
      set.C(n, m) = 1.0 / (1 + n + m);
      if (m > 0) set.S(n, m) = -0.25 * m;
    }
  }
  return set;
}

// Significant digits of a decimal token: mantissa digits without leading and trailing zeros.
int significant_digits(const std::string& token) {
  std::string digits;
  for (char c : token.substr(0, token.find_first_of("eE"))) {
    if (c >= '0' && c <= '9') digits += c;
  }
  const size_t first = digits.find_first_not_of('0');
  if (first == std::string::npos) return 0;
  return static_cast<int>(digits.find_last_not_of('0') - first + 1);
}

TEST_CASE(
    "text format: write, read, write gives identical bytes and bit-identical doubles "
    "(shortest round-trip output: ISO C++17 [charconv.to.chars], Steele & White 1990)",
    "[coefficient_file]") {
  // fmt's "{}" for a double is to_chars(value) ([format.string.std], "none" type); [charconv.to.chars]
  // guarantees the shortest string from which from_chars recovers the value exactly, the property
  // Steele & White 1990, "How to Print Floating-Point Numbers Accurately", PLDI '90, first delivered.
  const CoefficientSet set = awkward_set_with_raw_bytes();
  const std::string first = format_coefficient_text(set);
  const CoefficientSet read = parse_coefficient_text(first, "awkward.pcs");
  require_identical(set, read);
  REQUIRE(format_coefficient_text(read) == first);
}

TEST_CASE(
    "text format: every table number is the shortest decimal that C strtod reads back to the same "
    "double (Clinger 1990; Steele & White 1990; IEEE 754-2008 clause 5.12)",
    "[coefficient_file]") {
  // Independent of the project's reader: glibc strtod rounds correctly (Clinger 1990, "How to Read
  // Floating Point Numbers Accurately", PLDI '90), so a token that strtod maps to the stored bits holds
  // that double. Shortness: the nearest decimal with one digit fewer (printf %.*e, correctly rounded) must
  // not read back. At exact powers of two the rounding interval is lopsided and a farther decimal could
  // qualify, so those are left out of the shortness check only.
  const CoefficientSet set = awkward_set();
  const auto lines = lines_of(format_coefficient_text(set));
  const long table = line_starting(format_coefficient_text(set), "[coefficients]");
  int checked_shortness = 0;
  for (size_t i = static_cast<size_t>(table); i < lines.size() && lines[i] != "[end]"; ++i) {
    if (lines[i].front() == '#') continue;
    std::istringstream row(lines[i]);
    int n, m;
    row >> n >> m;
    const double stored[] = {set.C(n, m), set.S(n, m), set.sigma_C(n, m), set.sigma_S(n, m)};
    for (double value : stored) {
      std::string token;
      row >> token;
      CAPTURE(lines[i], token);
      REQUIRE(bits(std::strtod(token.c_str(), nullptr)) == bits(value));
      const int digits = significant_digits(token);
      const bool power_of_two = (bits(value) & 0x000FFFFFFFFFFFFFull) == 0;
      if (digits > 1 && !power_of_two) {
        char shorter[64];
        std::snprintf(shorter, sizeof shorter, "%.*e", digits - 2, value);
        CAPTURE(shorter);
        REQUIRE(bits(std::strtod(shorter, nullptr)) != bits(value));
        ++checked_shortness;
      }
    }
  }
  REQUIRE(checked_shortness > 150);
}

TEST_CASE(
    "text format: signed zero, 1/3 and the extremes are spelled as shortest round-trip decimals "
    "(ISO C++17 [charconv.to.chars]; values from memory: 1/3 needs 16 digits, DBL_MAX 17)",
    "[coefficient_file]") {
  CoefficientSet set = make_empty_set(1);
  set.C(1, 0) = -0.0;
  set.C(1, 1) = 1.0 / 3.0;
  set.S(1, 1) = Limits::max();
  set.sigma_C(1, 1) = Limits::denorm_min();
  const std::string text = format_coefficient_text(set);
  REQUIRE(text.find("\n1 0 -0 0 0 0\n") != std::string::npos);
  REQUIRE(text.find("\n1 1 0.3333333333333333 1.7976931348623157e+308 5e-324 0\n") != std::string::npos);
}

TEST_CASE(
    "JSON form: write, read, write gives identical bytes and bit-identical doubles "
    "(nlohmann::json Grisu2 output, Loitsch 2010, round-trips through strtod)",
    "[coefficient_file]") {
  // nlohmann's serializer uses Grisu2 (Loitsch 2010, "Printing Floating-Point Numbers Quickly and
  // Accurately with Integers", PLDI '10), whose output always reads back exactly but is not always the
  // shortest; its reader converts with strtod (Clinger 1990).
  const CoefficientSet set = awkward_set();
  const std::string first = format_coefficient_json(set);
  const CoefficientSet read = parse_coefficient_json(first, "awkward.json");
  require_identical(set, read);
  REQUIRE(format_coefficient_json(read) == first);
}

TEST_CASE(
    "JSON form: required keys, JSON types and values, read back with plain nlohmann::json "
    "(RFC 8259 types; layout of docs/format.md)",
    "[coefficient_file]") {
  const CoefficientSet set = awkward_set();
  const Json json = Json::parse(format_coefficient_json(set));
  REQUIRE(json.at("format").at("name") == "polystokes-coefficients");
  REQUIRE(json.at("format").at("version").is_number_integer());
  REQUIRE(json.at("format").at("version") == 1);
  REQUIRE(json.at("body") == set.body);
  REQUIRE(json.at("degree").is_number_integer());
  REQUIRE(json.at("degree") == set.degree);
  for (const char* key : {"gm", "reference_radius", "brillouin_radius", "mass", "volume"}) {
    CAPTURE(key);
    REQUIRE(json.at(key).is_number_float());
  }
  REQUIRE(bits(json.at("gm").get<double>()) == bits(set.gm));
  REQUIRE(bits(json.at("reference_radius").get<double>()) == bits(set.reference_radius));
  REQUIRE(json.at("normalization") == "schmidt");
  REQUIRE(json.at("condon_shortley").is_boolean());
  REQUIRE(json.at("condon_shortley") == true);
  REQUIRE(json.at("zonal_as_j").is_boolean());
  REQUIRE(json.at("zonal_as_j") == true);
  REQUIRE(json.at("units").at("gm") == "m^3 s^-2");
  REQUIRE(json.at("units").at("reference_radius") == "m");
  REQUIRE(json.at("center_of_mass").size() == 3);
  REQUIRE(bits(json.at("center_of_mass")[1].get<double>()) == bits(set.center_of_mass[1]));
  REQUIRE(json.at("origin").at("label") == "shifted");
  REQUIRE(bits(json.at("origin").at("position")[0].get<double>()) == bits(-0.0));
  REQUIRE(json.at("frame").at("label") == "rotated");
  REQUIRE(json.at("frame").at("axes").size() == 3);
  REQUIRE(bits(json.at("frame").at("axes")[1][2].get<double>()) == bits(set.axes_in_mesh(1, 2)));
  REQUIRE(json.at("mesh_length_unit") == "km");
  REQUIRE(json.at("regions").size() == 2);
  REQUIRE(json.at("regions")[0].at("mesh") == set.regions[0].mesh);
  REQUIRE(json.at("regions")[0].at("faces").is_number_integer());
  REQUIRE(json.at("regions")[1].at("density").get<double>() == -1100.0);
  REQUIRE(json.at("created").is_string());
  REQUIRE(json.at("history").get<std::vector<std::string>>() == set.history);
  REQUIRE(json.at("notes").get<std::vector<std::string>>() == set.notes);

  const Json& coefficients = json.at("coefficients");
  REQUIRE(coefficients.size() == static_cast<size_t>((set.degree + 1) * (set.degree + 2) / 2));
  for (const Json& entry : coefficients) {
    REQUIRE(entry.size() == 6);
    REQUIRE(entry.at("n").is_number_integer());
    REQUIRE(entry.at("m").is_number_integer());
    const int n = entry.at("n"), m = entry.at("m");
    CAPTURE(n, m);
    REQUIRE(bits(entry.at("C").get<double>()) == bits(set.C(n, m)));
    REQUIRE(bits(entry.at("S").get<double>()) == bits(set.S(n, m)));
    REQUIRE(bits(entry.at("sigma_C").get<double>()) == bits(set.sigma_C(n, m)));
    REQUIRE(bits(entry.at("sigma_S").get<double>()) == bits(set.sigma_S(n, m)));
  }
}

TEST_CASE(
    "files: both formats written atomically and read back, the format told by content "
    "(common practice: content sniffing, not file names)",
    "[coefficient_file]") {
  const CoefficientSet set = awkward_set();
  const std::string dir = test::temp_directory();
  write_coefficient_file(set, dir + "/set.json");  // text despite the name
  write_coefficient_json(set, dir + "/set.txt");   // JSON despite the name
  REQUIRE(test::read_bytes(dir + "/set.json") == format_coefficient_text(set));
  REQUIRE(test::read_bytes(dir + "/set.txt") == format_coefficient_json(set));
  require_identical(set, read_coefficient_file(dir + "/set.json"));
  require_identical(set, read_coefficient_file(dir + "/set.txt"));
  require_format_error([&] { read_coefficient_file(dir + "/absent.pcs"); }, dir + "/absent.pcs", 0,
                       "cannot read");
}

TEST_CASE("text reader accepts CRLF line ends, blank lines and extra comments, as docs/format.md allows",
          "[coefficient_file]") {
  const CoefficientSet set = small_set();
  std::string loose;
  for (const std::string& line : lines_of(format_coefficient_text(set)))
    loose += "  " + line + "\t\r\n\r\n# extra\r\n";
  require_identical(set, parse_coefficient_text(loose, "loose.pcs"));
}

TEST_CASE("text reader: a file typed by hand after docs/format.md, rows in any order, reads as specified",
          "[coefficient_file]") {
  const std::string text =
      "polystokes-coefficients 1\n"
      "[body]\n"
      "label = \"Hand \\\"typed\\\" \\x41\"\n"
      "gm_m3_s2 = 2.5E+2\n"
      "mass_kg = 3746.8\n"
      "volume_m3 = 1\n"
      "center_of_mass_m = 0.5 -0.5 0\n"
      "mesh_length_unit = \"m\"\n"
      "[expansion]\n"
      "frame_z_axis = 0 0 1\n"
      "degree = 1\n"
      "reference_radius_m = 10\n"
      "brillouin_radius_m = 0\n"
      "normalization = unnormalized\n"
      "condon_shortley_phase = no\n"
      "zonal_column = J\n"
      "origin = \"com\"\n"
      "origin_m = 0.5 -0.5 0\n"
      "frame = \"mesh\"\n"
      "frame_x_axis = 1 0 0\n"
      "frame_y_axis = 0 1 0\n"
      "[provenance]\n"
      "created = \"\"\n"
      "[coefficients]\n"
      "1 1 0.25 -0.125 0 1e-3\n"
      "0 0 1 0 0 0\n"
      "1 0 -7 0 0 0\n"
      "[end]\n";
  const CoefficientSet set = parse_coefficient_text(text, "hand.pcs");
  REQUIRE(set.body == "Hand \"typed\" A");
  REQUIRE(set.gm == 250.0);
  REQUIRE(set.center_of_mass == Eigen::Vector3d(0.5, -0.5, 0));
  REQUIRE(set.degree == 1);
  REQUIRE(set.convention.normalization == Normalization::unnormalized);
  REQUIRE_FALSE(set.convention.condon_shortley);
  REQUIRE(set.convention.zonal_as_j);
  REQUIRE(set.regions.empty());
  REQUIRE(set.history.empty());
  REQUIRE(set.C(0, 0) == 1.0);
  REQUIRE(set.C(1, 0) == -7.0);
  REQUIRE(set.C(1, 1) == 0.25);
  REQUIRE(set.S(1, 1) == -0.125);
  REQUIRE(set.sigma_S(1, 1) == 1e-3);
  REQUIRE(set.C(0, 1) == 0.0);  // above the diagonal: zero
}

TEST_CASE(
    "writers refuse NaN, infinity and negative sigma, naming the entry, and leave no file behind "
    "(common practice: no partial output)",
    "[coefficient_file]") {
  const std::string dir = test::temp_directory();
  CoefficientSet set = small_set();
  SECTION("NaN coefficient") {
    set.C(2, 1) = std::nan("");
    REQUIRE_THROWS_WITH(format_coefficient_text(set), Catch::Contains("C(2,1) is nan"));
  }
  SECTION("infinite sigma") {
    set.sigma_S(3, 3) = Limits::infinity();
    REQUIRE_THROWS_WITH(format_coefficient_json(set), Catch::Contains("sigma_S(3,3) is inf"));
  }
  SECTION("infinite header value") {
    set.gm = -Limits::infinity();
    REQUIRE_THROWS_WITH(format_coefficient_text(set), Catch::Contains("gm is -inf"));
  }
  SECTION("negative sigma") {
    set.sigma_C(1, 0) = -1e-12;
    REQUIRE_THROWS_WITH(format_coefficient_text(set), Catch::Contains("n=1 m=0 is negative"));
  }
  REQUIRE_THROWS_AS(write_coefficient_file(set, dir + "/out.pcs"), OutputError);
  REQUIRE_THROWS_WITH(write_coefficient_json(set, dir + "/out.json"), Catch::StartsWith(dir + "/out.json: "));
  REQUIRE_FALSE(test::file_exists(dir + "/out.pcs"));
  REQUIRE_FALSE(test::file_exists(dir + "/out.json"));
  REQUIRE(std::distance(std::filesystem::directory_iterator(dir), std::filesystem::directory_iterator()) ==
          0);
}

TEST_CASE("writers refuse matrices that do not match the degree (ConventionError)", "[coefficient_file]") {
  CoefficientSet set = small_set();
  set.S = Eigen::MatrixXd::Zero(3, 3);
  REQUIRE_THROWS_AS(format_coefficient_text(set), ConventionError);
  REQUIRE_THROWS_WITH(format_coefficient_json(set), Catch::Contains("S is 3x3"));
}

TEST_CASE("JSON writer refuses text that is not UTF-8 (RFC 8259 section 8.1), the text format keeps it",
          "[coefficient_file]") {
  const CoefficientSet set = awkward_set_with_raw_bytes();
  REQUIRE_THROWS_AS(format_coefficient_json(set), OutputError);
  REQUIRE_THROWS_WITH(format_coefficient_json(set), Catch::Contains("regions[1].mesh is not valid UTF-8"));
  const std::string text = format_coefficient_text(set);
  REQUIRE(text.find("\\xC0\\xAF \\xED\\xA0\\x80 \\xFF end") != std::string::npos);
  REQUIRE(parse_coefficient_text(text, "raw.pcs").notes.back() == set.notes.back());
}

TEST_CASE("text reader: each kind of bad input is a FormatError naming the file and line",
          "[coefficient_file]") {
  const std::string good = format_coefficient_text(small_set());
  const long gm = line_starting(good, "gm_m3_s2 =");
  const long row21 = line_starting(good, "2 1 ");
  const long end = line_starting(good, "[end]");

  SECTION("good file reads") { REQUIRE_NOTHROW(parse_coefficient_text(good, "good.pcs")); }
  SECTION("empty file") {
    require_format_error([] { parse_coefficient_text("", "bad.pcs"); }, "bad.pcs", 0, "empty");
  }
  SECTION("not our file") {
    require_text_error(with_line_replaced(good, 1, "{}"), 1, "not a polystokes coefficient file");
  }
  SECTION("unknown version") {
    require_text_error(with_line_replaced(good, 1, "polystokes-coefficients 2"), 1,
                       "version '2' is not supported");
  }
  SECTION("missing key, reported at its section") {
    require_text_error(with_line_removed(good, line_starting(good, "mass_kg")), line_starting(good, "[body]"),
                       "section [body] lacks the key 'mass_kg'");
  }
  SECTION("missing key in a region") {
    require_text_error(with_line_removed(good, line_starting(good, "faces =")),
                       line_starting(good, "[region]"), "lacks the key 'faces'");
  }
  SECTION("misspelt key") {
    require_text_error(with_line_replaced(good, gm, "gm_m3s2 = 0.5"), gm,
                       "unknown key 'gm_m3s2' in section [body]");
  }
  SECTION("key from another section") {
    require_text_error(with_line_replaced(good, gm, "degree = 3"), gm,
                       "unknown key 'degree' in section [body]");
  }
  SECTION("repeated key") {
    require_text_error(with_line_inserted(good, gm + 1, "gm_m3_s2 = 0.5"), gm + 1,
                       "duplicate key 'gm_m3_s2' (first on line " + std::to_string(gm) + ")");
  }
  SECTION("line without '='") {
    require_text_error(with_line_replaced(good, gm, "gm_m3_s2 0.5"), gm, "expected 'key = value'");
  }
  SECTION("value that is not a number") {
    const long radius = line_starting(good, "reference_radius_m");
    require_text_error(with_line_replaced(good, radius, "reference_radius_m = 1O0"), radius,
                       "reference_radius_m: '1O0' is not a finite decimal number");
  }
  SECTION("NaN, infinity and overflow are refused") {
    for (const char* value : {"nan", "inf", "-infinity", "1e999"}) {
      CAPTURE(value);
      require_text_error(with_line_replaced(good, gm, std::string("gm_m3_s2 = ") + value), gm,
                         "not a finite");
    }
  }
  SECTION("degree that is not an integer") {
    const long degree = line_starting(good, "degree =");
    require_text_error(with_line_replaced(good, degree, "degree = 3.0"), degree,
                       "degree: '3.0' is not an integer");
  }
  SECTION("negative degree") {
    const long degree = line_starting(good, "degree =");
    require_text_error(with_line_replaced(good, degree, "degree = -1"), degree, "degree must be in 0..");
  }
  SECTION("unknown normalization word") {
    const long line = line_starting(good, "normalization =");
    require_text_error(with_line_replaced(good, line, "normalization = full"), line,
                       "unknown normalization 'full'");
  }
  SECTION("yes/no value") {
    const long line = line_starting(good, "condon_shortley_phase");
    require_text_error(with_line_replaced(good, line, "condon_shortley_phase = true"), line,
                       "expected yes or no");
  }
  SECTION("vector with two components") {
    const long line = line_starting(good, "origin_m");
    require_text_error(with_line_replaced(good, line, "origin_m = 1 2"), line,
                       "expected 3 numbers x y z, found 2");
  }
  SECTION("unquoted text") {
    const long line = line_starting(good, "label =");
    require_text_error(with_line_replaced(good, line, "label = Pebble"), line,
                       "expected a double-quoted text value");
  }
  SECTION("unterminated text") {
    const long line = line_starting(good, "label =");
    require_text_error(with_line_replaced(good, line, "label = \"Pebble"), line, "lacks its closing");
  }
  SECTION("unknown escape") {
    const long line = line_starting(good, "label =");
    require_text_error(with_line_replaced(good, line, "label = \"Peb\\qble\""), line, "unknown escape '\\q'");
  }
  SECTION("short \\x escape") {
    const long line = line_starting(good, "label =");
    require_text_error(with_line_replaced(good, line, "label = \"Peb\\x4\""), line, "two hexadecimal digits");
  }
  SECTION("text after the closing quote") {
    const long line = line_starting(good, "label =");
    require_text_error(with_line_replaced(good, line, "label = \"Pebble\" # comment"), line,
                       "after the closing");
  }
  SECTION("key before any section") {
    require_text_error(with_line_inserted(good, 2, "label = \"x\""), 2, "expected the section header [body]");
  }
  SECTION("unknown section") {
    const long line = line_starting(good, "[body]");
    require_text_error(with_line_replaced(good, line, "[bodies]"), line, "unknown section [bodies]");
  }
  SECTION("repeated section") {
    const long line = line_starting(good, "[expansion]");
    require_text_error(with_line_inserted(good, line, "[body]"), line,
                       "section [body] repeated or out of order");
  }
  SECTION("missing section") {
    std::string text = good;
    const long first = line_starting(good, "[provenance]");
    const long last = line_starting(good, "[coefficients]") - 1;
    for (long line = last; line >= first; --line) text = with_line_removed(text, line);
    require_text_error(text, first, "section [provenance] missing before [coefficients]");
  }
  SECTION("file truncated in the header") {
    const auto lines = lines_of(good);
    const long degree = line_starting(good, "degree =");
    const std::vector<std::string> head(lines.begin(), lines.begin() + degree);
    require_text_error(joined(head), degree, "file ends before section [provenance]");
  }
  SECTION("file truncated in the table") {
    require_text_error(with_line_removed(good, end), end - 1, "without [end]");
  }
  SECTION("content after [end]") {
    require_text_error(good + "0 0 1 0 0 0\n", end + 1, "unexpected content after [end]");
  }
  SECTION("repeated (n, m) row") {
    const std::string row = lines_of(good)[row21 - 1];
    require_text_error(with_line_inserted(good, end, row), end,
                       "duplicate row n=2 m=1 (first on line " + std::to_string(row21) + ")");
  }
  SECTION("missing (n, m) row, reported at [end]") {
    require_text_error(with_line_removed(good, row21), end - 1,
                       "lacks the row n=2 m=1 (9 of 10 rows for degree 3)");
  }
  SECTION("order above degree") {
    require_text_error(with_line_replaced(good, row21, "1 2 0 0 0 0"), row21, "order m=2 exceeds degree n=1");
  }
  SECTION("degree above the set's degree") {
    require_text_error(with_line_replaced(good, row21, "4 1 0 0 0 0"), row21,
                       "degree n=4 exceeds the set's degree 3");
  }
  SECTION("negative order") {
    require_text_error(with_line_replaced(good, row21, "2 -1 0 0 0 0"), row21, "negative degree or order");
  }
  SECTION("non-numeric column") {
    require_text_error(with_line_replaced(good, row21, "2 1 0.5 abc 0 0"), row21,
                       "column S: 'abc' is not a finite");
  }
  SECTION("non-integer index") {
    require_text_error(with_line_replaced(good, row21, "2 1.0 0.5 0 0 0"), row21,
                       "column m: '1.0' is not an integer");
  }
  SECTION("wrong column count") {
    require_text_error(with_line_replaced(good, row21, "2 1 0.5 0 0"), row21, "expected 6 columns");
    require_text_error(with_line_replaced(good, row21, "2 1 0.5 0 0 0 0"), row21, "found 7");
  }
  SECTION("negative sigma") {
    require_text_error(with_line_replaced(good, row21, "2 1 0.5 0 -1e-9 0"), row21, "must not be negative");
  }
  SECTION("read_coefficient_file names the path") {
    const std::string path = test::temp_directory() + "/bad.pcs";
    test::write_text(path, with_line_replaced(good, row21, "2 1 0.5 0 0"));
    require_format_error([&] { read_coefficient_file(path); }, path, row21, "expected 6 columns");
  }
}

TEST_CASE(
    "JSON reader: each kind of bad input is a FormatError naming the file and the line of the key or "
    "entry",
    "[coefficient_file]") {
  const Json good = Json::parse(format_coefficient_json(small_set()));
  const auto dumped = [](const Json& json) { return json.dump(2) + "\n"; };
  // Entry (2, 1) is the 5th coefficient (0,0 1,0 1,1 2,0 2,1), index 4.
  const auto entry_line = [](const std::string& text, int index) {
    size_t at = text.find("\"coefficients\"");
    for (int i = 0; i <= index; ++i) at = text.find('{', at + 1);
    return 1 + static_cast<long>(std::count(text.begin(), text.begin() + static_cast<long>(at), '\n'));
  };

  SECTION("good file reads") { REQUIRE_NOTHROW(parse_coefficient_json(dumped(good), "good.json")); }
  SECTION("syntax error") {
    std::string text = dumped(good);
    const long line = line_containing(text, "\"condon_shortley\": false");
    text.replace(text.find("\"condon_shortley\": false"), 24, "\"condon_shortley\": flase");
    require_json_error(text, line, "invalid JSON");
  }
  SECTION("top level not an object") { require_json_error("[1, 2]\n", 1, "must be an object"); }
  SECTION("unknown version") {
    Json json = good;
    json["format"]["version"] = 2;
    const std::string text = dumped(json);
    require_json_error(text, line_containing(text, "\"format\""), "format version 2 is not supported");
  }
  SECTION("missing key") {
    Json json = good;
    json.erase("mass");
    require_json_error(dumped(json), 1, "missing key \"mass\"");
  }
  SECTION("unknown key") {
    Json json = good;
    json["masss"] = 1.0;
    const std::string text = dumped(json);
    require_json_error(text, line_containing(text, "\"masss\""), "unknown key \"masss\" in top level");
  }
  SECTION("repeated key") {
    std::string text = dumped(good);
    const long line = line_containing(text, "\"gm\": 0.5");
    text.insert(text.find("\n  \"gm\": 0.5") + 1, "  \"gm\": 1.0,\n");
    require_json_error(text, line + 1, "duplicate key \"gm\"");
  }
  SECTION("wrong type") {
    Json json = good;
    json["gm"] = "0.5";
    const std::string text = dumped(json);
    require_json_error(text, line_containing(text, "\"gm\": \"0.5\""), "\"gm\" must be a number");
  }
  SECTION("boolean given as word") {
    Json json = good;
    json["zonal_as_j"] = "no";
    const std::string text = dumped(json);
    require_json_error(text, line_containing(text, "\"zonal_as_j\""), "must be true or false");
  }
  SECTION("other units") {
    Json json = good;
    json["units"]["reference_radius"] = "km";
    const std::string text = dumped(json);
    require_json_error(text, line_containing(text, "\"units\""), "\"units\" must be exactly");
  }
  SECTION("region entry lacks a key") {
    Json json = good;
    json["regions"][0].erase("faces");
    const std::string text = dumped(json);
    require_json_error(text, line_containing(text, "\"regions\"") + 1, "missing key \"faces\"");
  }
  SECTION("repeated (n, m) entry") {
    Json json = good;
    json["coefficients"][5]["m"] = 1;  // entry (2, 2) becomes a second (2, 1)
    const std::string text = dumped(json);
    require_json_error(text, entry_line(text, 5),
                       "duplicate row n=2 m=1 (first on line " + std::to_string(entry_line(text, 4)) + ")");
  }
  SECTION("missing (n, m) entry") {
    Json json = good;
    json["coefficients"].erase(4);
    const std::string text = dumped(json);
    require_json_error(text, line_containing(text, "\"coefficients\""), "lacks the row n=2 m=1");
  }
  SECTION("order above degree") {
    Json json = good;
    json["coefficients"][4]["m"] = 3;
    const std::string text = dumped(json);
    require_json_error(text, entry_line(text, 4), "order m=3 exceeds degree n=2");
  }
  SECTION("degree above the set's degree") {
    Json json = good;
    json["coefficients"][4]["n"] = 7;
    const std::string text = dumped(json);
    require_json_error(text, entry_line(text, 4), "degree n=7 exceeds the set's degree 3");
  }
  SECTION("non-numeric coefficient") {
    Json json = good;
    json["coefficients"][4]["C"] = "0.5";
    const std::string text = dumped(json);
    require_json_error(text, entry_line(text, 4), "\"coefficients[4].C\" must be a number");
  }
  SECTION("unknown key in an entry") {
    Json json = good;
    json["coefficients"][4]["K"] = 0.0;
    const std::string text = dumped(json);
    require_json_error(text, entry_line(text, 4), "unknown key \"K\" in coefficients[4]");
  }
  SECTION("number beyond the range of double") {
    std::string text = dumped(good);
    const size_t at = text.find("\"gm\": 0.5");
    text.replace(at, 9, "\"gm\": 1e999");
    require_json_error(text, line_containing(text, "\"gm\": 1e999"), "number overflow parsing '1e999'");
  }
}

TEST_CASE("an unknown origin and unknown axes round-trip through text and JSON as 'unknown' and null",
          "[coefficient_file]") {
  // Issue 10, defect 4: the formats had no way to say "not known" and wrote (0,0,0) and the identity.
  CoefficientSet set = small_set();
  set.origin =
      OriginKind::center_of_mass;  // declared about the centre of mass, its place in the mesh frame not known
  set.origin_known = false;
  set.frame = FrameKind::unknown;
  set.axes_known = false;
  const std::string text = format_coefficient_text(set);
  CHECK(text.find("\norigin_m = unknown\n") != std::string::npos);
  CHECK(text.find("\nframe_x_axis = unknown\nframe_y_axis = unknown\nframe_z_axis = unknown\n") !=
        std::string::npos);
  require_identical(set, parse_coefficient_text(text, "unknown.pcs"));
  REQUIRE(format_coefficient_text(parse_coefficient_text(text, "unknown.pcs")) == text);
  const std::string json = format_coefficient_json(set);
  const auto parsed = nlohmann::json::parse(json);
  CHECK(parsed["origin"]["position"].is_null());
  CHECK(parsed["frame"]["axes"].is_null());
  require_identical(set, parse_coefficient_json(json, "unknown.json"));
  // One axis unknown and the others given is refused, naming the line.
  std::string mixed = format_coefficient_text(small_set());
  mixed.replace(mixed.find("frame_y_axis = 0 1 0"), 20, "frame_y_axis = unknown");
  const auto mixed_lines = lines_of(mixed);
  const long line = long(std::find(mixed_lines.begin(), mixed_lines.end(), "frame_y_axis = unknown") -
                         mixed_lines.begin()) +
                    1;
  require_text_error(mixed, line, "the three axes must all be given or all be unknown");
}

TEST_CASE("degree 0 is C00 = +1 in J form; an earlier file's -1 reads as +1 with a history line",
          "[coefficient_file]") {
  // Issue 10, defect 14: J-form sets stored C00 as -1. J_n = -C_n0 concerns n >= 1 (IERS Conventions 2010,
  // eq. 6.2); degree 0 is the positive total-mass term (common practice).
  CoefficientSet set = small_set();
  set.convention.zonal_as_j = true;
  set.C(0, 0) = 1.0;
  require_identical(set, parse_coefficient_text(format_coefficient_text(set), "j.pcs"));
  CoefficientSet earlier = set;
  earlier.C(0, 0) = -1.0;
  for (const CoefficientSet& read : {parse_coefficient_text(format_coefficient_text(earlier), "old.pcs"),
                                     parse_coefficient_json(format_coefficient_json(earlier), "old.json")}) {
    CHECK(read.C(0, 0) == 1.0);
    CHECK(read.C(1, 0) == set.C(1, 0));
    REQUIRE(read.history.size() == set.history.size() + 1);
    CHECK(read.history.back().find("read as C00 = 1") != std::string::npos);
  }
}

}  // namespace
}  // namespace polystokes

namespace polystokes {
namespace {

// Whether the field that `field` names holds the same value in a and b (bitwise for numbers).
bool same_field(const coefficient_io::HeaderField& field, const CoefficientSet& a, const CoefficientSet& b) {
  using coefficient_io::Kind;
  switch (field.kind) {
    case Kind::text:
      return a.*field.text == b.*field.text;
    case Kind::real:
      return bits(a.*field.real) == bits(b.*field.real);
    case Kind::vector:
      for (int i = 0; i < 3; ++i)
        if (bits((a.*field.vector)[i]) != bits((b.*field.vector)[i])) return false;
      return true;
    case Kind::degree:
      return a.degree == b.degree;
    case Kind::normalization:
      return a.convention.normalization == b.convention.normalization;
    case Kind::phase:
      return a.convention.condon_shortley == b.convention.condon_shortley;
    case Kind::zonal:
      return a.convention.zonal_as_j == b.convention.zonal_as_j;
    case Kind::position:
      return a.origin_known == b.origin_known && a.origin_in_mesh == b.origin_in_mesh;
    case Kind::axes:
      return a.axes_known == b.axes_known && a.axes_in_mesh == b.axes_in_mesh;
    case Kind::text_list:
      return a.*field.list == b.*field.list;
    case Kind::unit:
      return a.*field.unit == b.*field.unit;
    case Kind::origin_kind:
      return a.origin == b.origin;
    case Kind::frame_label:
      return a.frame == b.frame && frame_label(a) == frame_label(b);
    case Kind::optional_text:
      return a.frame_metadata.*field.optional_text == b.frame_metadata.*field.optional_text;
    case Kind::optional_real: {
      const auto& x = a.frame_metadata.*field.optional_real;
      const auto& y = b.frame_metadata.*field.optional_real;
      return x.has_value() == y.has_value() && (!x || bits(*x) == bits(*y));
    }
    case Kind::count:
      break;
  }
  return false;
}

}  // namespace

TEST_CASE(
    "every field of the field table appears in the text and the JSON form and round-trips through both "
    "(write -> read, common practice)",
    "[coefficient_file]") {
  // With frame metadata, whose fields are written only when present.
  const CoefficientSet set = [] {
    CoefficientSet s = awkward_set();
    s.frame_metadata.name = "Awkward \"fixed\"";
    s.frame_metadata.definition = "pole by fiat";
    s.frame_metadata.pole_ra = 1.0 / 3.0;
    s.frame_metadata.pole_dec = -Limits::denorm_min();
    s.frame_metadata.meridian = 359.99999999999994;
    s.frame_metadata.epoch = "2024-02-29T23:59:60.125Z";
    return s;
  }();
  const std::string text = format_coefficient_text(set);
  const std::string json_text = format_coefficient_json(set);
  const Json json = Json::parse(json_text);
  const CoefficientSet from_text = parse_coefficient_text(text, "field-table.txt");
  const CoefficientSet from_json = parse_coefficient_json(json_text, "field-table.json");
  for (const coefficient_io::HeaderField& field : coefficient_io::header_fields()) {
    CAPTURE(field.text_key, field.json_key);
    for (const std::string& key : coefficient_io::text_keys(field))
      CHECK(text.find("\n" + key + " = ") != std::string::npos);
    const std::string path = field.json_key;
    const size_t dot = path.find('.');
    const Json& top = json.at(path.substr(0, dot));
    CHECK((dot == std::string::npos || top.contains(path.substr(dot + 1))));
    CHECK(same_field(field, set, from_text));
    CHECK(same_field(field, set, from_json));
  }
  REQUIRE(from_text.regions.size() == set.regions.size());
  REQUIRE(from_json.regions.size() == set.regions.size());
  for (const coefficient_io::RegionField& field : coefficient_io::region_fields()) {
    CAPTURE(field.text_key, field.json_key);
    CHECK(text.find("\n" + std::string(field.text_key) + " = ") != std::string::npos);
    for (size_t i = 0; i < set.regions.size(); ++i) {
      CHECK(json.at("regions").at(i).contains(field.json_key));
      for (const CoefficientSet* read : {&from_text, &from_json}) {
        const Region& a = set.regions[i];
        const Region& b = read->regions[i];
        if (field.text) CHECK(a.*field.text == b.*field.text);
        if (field.real) CHECK(bits(a.*field.real) == bits(b.*field.real));
        if (field.count) CHECK(a.*field.count == b.*field.count);
        if (field.unit) CHECK(a.*field.unit == b.*field.unit);
      }
    }
  }
  // Writing what was read gives the same bytes in both forms.
  CHECK(format_coefficient_text(from_text) == text);
  CHECK(format_coefficient_json(from_json) == json_text);
}

}  // namespace polystokes

namespace polystokes {
namespace {

// Frame metadata with every field, the angles chosen so that no short decimal holds them.
FrameMetadata full_frame_metadata() {
  FrameMetadata frame;
  frame.name = "Pebble body-fixed \"PBF\"";
  frame.definition = "z along the spin pole,\nx through the crater Alpha";
  frame.pole_ra = 11.35 + 1.0 / 3.0;
  frame.pole_dec = -17.22;
  frame.meridian = 326.07;
  frame.epoch = "2000-01-01T12:00:00.000Z";
  return frame;
}

}  // namespace

TEST_CASE("frame metadata round-trips through text and JSON; a set without it is written as before",
          "[coefficient_file]") {
  // Issue 12: written only when present, read back bit for bit (the write, read, write rule of this file).
  CoefficientSet set = small_set();
  const std::string plain = format_coefficient_text(set);
  CHECK(plain.find("frame_name") == std::string::npos);
  CHECK(plain.find("frame_pole") == std::string::npos);
  CHECK(nlohmann::json::parse(format_coefficient_json(set))["frame"].size() == 2);  // label and axes only

  set.frame_metadata = full_frame_metadata();
  const std::string text = format_coefficient_text(set);
  CHECK(text.find("\nframe_name = \"Pebble body-fixed \\\"PBF\\\"\"\n") != std::string::npos);
  CHECK(text.find("\nframe_pole_dec_deg = -17.22\n") != std::string::npos);
  CHECK(text.find("\nframe_epoch = \"2000-01-01T12:00:00.000Z\"\n") != std::string::npos);
  require_identical(set, parse_coefficient_text(text, "frame.pcs"));
  REQUIRE(format_coefficient_text(parse_coefficient_text(text, "frame.pcs")) == text);
  const std::string json = format_coefficient_json(set);
  const auto parsed = nlohmann::json::parse(json);
  CHECK(parsed["frame"]["meridian_deg"] == 326.07);
  require_identical(set, parse_coefficient_json(json, "frame.json"));
  REQUIRE(format_coefficient_json(parse_coefficient_json(json, "frame.json")) == json);

  // Only some fields: only those keys.
  CoefficientSet named = small_set();
  named.frame_metadata.name = "PBF";
  const std::string named_text = format_coefficient_text(named);
  CHECK(named_text.find("frame_definition") == std::string::npos);
  require_identical(named, parse_coefficient_text(named_text, "named.pcs"));
}

TEST_CASE("a declared frame is named by its label: no frame_name key, and one given beside it is refused",
          "[coefficient_file]") {
  CoefficientSet set = small_set();
  set_frame_label(set, "PBF-2000");
  set.axes_known = false;
  REQUIRE(set.frame == FrameKind::declared);
  const std::string text = format_coefficient_text(set);
  CHECK(text.find("\nframe = \"PBF-2000\"\n") != std::string::npos);
  CHECK(text.find("frame_name") == std::string::npos);
  const CoefficientSet read = parse_coefficient_text(text, "declared.pcs");
  CHECK(read.frame == FrameKind::declared);
  CHECK(frame_label(read) == "PBF-2000");
  std::string both = text;
  const size_t at = both.find("frame_z_axis = unknown\n") + std::string("frame_z_axis = unknown\n").size();
  both.insert(at, "frame_name = \"Other\"\n");
  require_text_error(both, line_starting(both, "frame_name"), "a declared frame is named by its label");
}

TEST_CASE("bad frame metadata in a file is a FormatError naming the file and the frame line",
          "[coefficient_file]") {
  // Ranges: right ascension [0, 360), declination [-90, 90] (the equatorial coordinate ranges, common
  // practice); an epoch must be a real ISO 8601 UTC date-time (ISO 8601-1:2019, Gregorian calendar).
  CoefficientSet set = small_set();
  set.frame_metadata = full_frame_metadata();
  const std::string good = format_coefficient_text(set);
  const long frame_line = line_starting(good, "frame =");
  const auto with = [&](const std::string& key, const std::string& value) {
    std::string text = good;
    const size_t begin = text.find("\n" + key + " = ") + 1;
    text.replace(begin, text.find('\n', begin) - begin, key + " = " + value);
    return text;
  };
  require_text_error(with("frame_pole_ra_deg", "360"), frame_line,
                     "right ascension 360 deg is outside [0, 360)");
  require_text_error(with("frame_pole_ra_deg", "-0.5"), frame_line, "outside [0, 360)");
  require_text_error(with("frame_pole_dec_deg", "90.5"), frame_line,
                     "declination 90.5 deg is outside [-90, 90]");
  require_text_error(with("frame_epoch", "\"2023-02-29T00:00:00Z\""), frame_line, "not an ISO 8601 UTC time");
  require_text_error(with("frame_epoch", "\"2024-01-01 00:00:00\""), frame_line, "not an ISO 8601 UTC time");
  require_text_error(with("frame_meridian_deg", "x"), line_starting(good, "frame_meridian_deg"),
                     "is not a finite decimal number");
  std::string json = format_coefficient_json(set);
  json.replace(json.find("\"pole_dec_deg\": -17.22"), 22, "\"pole_dec_deg\": -91.0");
  require_json_error(json, line_containing(json, "\"frame\": {"), "outside [-90, 90]");
}

TEST_CASE(
    "frame metadata checks: ISO 8601 UTC epochs with real dates, pole pairs, a meridian needs its epoch",
    "[coefficient_file]") {
  // Leap years by the Gregorian rule (divisible by 4, centuries only when divisible by 400; common practice).
  const auto epoch_ok = [](const std::string& epoch) {
    FrameMetadata frame;
    frame.meridian = 10;
    frame.epoch = epoch;
    try {
      check_frame_metadata(frame);
      return true;
    } catch (const ConventionError&) {
      return false;
    }
  };
  CHECK(epoch_ok("2024-02-29T23:59:59Z"));
  CHECK(epoch_ok("2000-02-29T00:00:00.5Z"));
  CHECK(epoch_ok("2016-12-31T23:59:60Z"));  // a leap second
  CHECK_FALSE(epoch_ok("1900-02-29T00:00:00Z"));
  CHECK_FALSE(epoch_ok("2024-04-31T00:00:00Z"));
  CHECK_FALSE(epoch_ok("2024-01-01T24:00:00Z"));
  CHECK_FALSE(epoch_ok("2024-01-01T00:00:00"));
  CHECK_FALSE(epoch_ok("2024-01-01T00:00:00.Z"));
  CHECK_FALSE(epoch_ok("2024-1-01T00:00:00Z"));
  FrameMetadata half_pole;
  half_pole.pole_ra = 10;
  CHECK_THROWS_WITH(check_frame_metadata(half_pole),
                    Catch::Contains("give both right ascension and declination"));
  FrameMetadata undated;
  undated.meridian = 10;
  CHECK_THROWS_WITH(check_frame_metadata(undated), Catch::Contains("needs the epoch"));
}

}  // namespace polystokes
