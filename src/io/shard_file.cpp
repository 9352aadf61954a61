#include "polystokes/io/shard_file.h"

#include <fmt/format.h>

#include <charconv>
#include <cmath>
#include <limits>

#include "io/text_scanner.h"
#include "polystokes/core/errors.h"
#include "polystokes/io/coefficient_file.h"
#include "polystokes/sets/conventions.h"
#include "uncertainty/sample_layout.h"

namespace polystokes {

namespace {

constexpr const char* kShardFormat = "polystokes-uncertainty-shard";
constexpr int kShardVersion = 1;

std::string bool_word(bool value) { return value ? "true" : "false"; }

/// The "KEY VALUE..." lines of a shard, one after another, through the one text scanner: values are read
/// with its strict number rule and errors name the shard's file and line.
class ShardReader {
 public:
  ShardReader(std::string_view text, const std::string& source) : in_(text, source) {}

  TextScanner& in() { return in_; }
  [[noreturn]] void fail(const std::string& problem) const { in_.fail(problem); }

  /// The key of the next line, which is not taken yet; fails at the end of the text.
  std::string_view peek_key() {
    if (!loaded_) {
      if (!in_.next_line()) fail("unexpected end of file (truncated shard?)");
      loaded_ = true;
    }
    const std::string_view rest = in_.rest();
    return rest.substr(0, rest.find(' '));
  }
  /// Takes the next line, which must start with `key`; its values follow in in().
  TextScanner& line(const char* key) {
    if (peek_key() != key) fail(fmt::format("expected '{} ...', got '{}'", key, in_.rest()));
    in_.token();
    loaded_ = false;
    return in_;
  }
  /// The single word after `key` (a fingerprint, a checksum, a name).
  std::string word(const char* key) {
    const std::string out(line(key).token());
    if (out.empty()) fail(fmt::format("{} needs a value", key));
    in_.expect_line_end(key);
    return out;
  }
  double number(const char* key) {
    const double out = line(key).number(key);
    if (!std::isfinite(out)) fail(fmt::format("{} is not finite", key));
    in_.expect_line_end(key);
    return out;
  }
  std::int64_t integer(const char* key, std::int64_t low, std::int64_t high) {
    const std::int64_t out = line(key).integer(key, low, high);
    in_.expect_line_end(key);
    return out;
  }
  bool boolean(const char* key) {
    const std::string text = word(key);
    if (text != "true" && text != "false") fail(fmt::format("{} '{}' is not true or false", key, text));
    return text == "true";
  }
  /// Takes the next line whole (the embedded nominal set).
  void skip_line() {
    peek_key();
    loaded_ = false;
  }

 private:
  TextScanner in_;
  bool loaded_ = false;  ///< the scanner holds a line whose key has not been taken
};

}  // namespace

std::vector<std::pair<std::string, std::string>> shard_run_lines(const UncertaintyShard& shard) {
  const UncertaintySettings& s = shard.settings;
  std::vector<std::pair<std::string, std::string>> lines;
  lines.emplace_back("fingerprint", shard.fingerprint);
  for (const auto& checksum : shard.mesh_checksums) lines.emplace_back("mesh_checksum", checksum);
  lines.emplace_back("samples", std::to_string(s.samples));
  lines.emplace_back("seed", std::to_string(s.seed));
  lines.emplace_back("degree", std::to_string(shard.nominal.degree));
  lines.emplace_back("shape_sigma", fmt::format("{}", s.shape.sigma));
  lines.emplace_back("correlation_length", fmt::format("{}", s.shape.correlation_length));
  lines.emplace_back("density_sigma", fmt::format("{}", s.density_sigma));
  lines.emplace_back("lateral_sigma", fmt::format("{}", s.lateral.sigma));
  lines.emplace_back("lateral_sectors", std::to_string(s.lateral.sectors));
  lines.emplace_back("preserve_mass", bool_word(s.preserve_mass));
  for (const auto& inclusion : s.inclusions) {
    const Eigen::Vector3d c = inclusion.center.value_or(Eigen::Vector3d::Zero());
    lines.emplace_back("inclusion", fmt::format("{} {} {} {} {} {} {} {}", inclusion.empty ? "void" : "core",
                                                inclusion.radius, inclusion.contrast, c.x(), c.y(), c.z(),
                                                inclusion.offset, inclusion.subdivisions));
  }
  lines.emplace_back("normalization", to_string(shard.convention.normalization));
  lines.emplace_back("condon_shortley", bool_word(shard.convention.condon_shortley));
  lines.emplace_back("zonal_as_j", bool_word(shard.convention.zonal_as_j));
  lines.emplace_back("mean_edge", fmt::format("{}", shard.mean_edge));
  return lines;
}

std::string format_shard_text(const UncertaintyShard& shard) {
  const int N = shard.nominal.degree;
  std::string out = fmt::format("{} {}\n", kShardFormat, kShardVersion);
  out += fmt::format("shard {}/{}\n", shard.shard.index, shard.shard.count);
  for (const auto& [key, value] : shard_run_lines(shard)) out += key + " " + value + "\n";
  const std::string nominal = format_coefficient_text(shard.nominal);
  out += fmt::format("nominal_lines {}\n", std::count(nominal.begin(), nominal.end(), '\n'));
  out += nominal;
  if (!nominal.empty() && nominal.back() != '\n') out += '\n';
  out += fmt::format("sample_count {}\n", shard.samples.size());
  for (const auto& sample : shard.samples) {
    if (size_t(sample.delta.size()) != packed_size(N))
      throw ConventionError(fmt::format("sample {} holds {} values, degree {} needs {}", sample.index,
                                        sample.delta.size(), N, packed_size(N)));
    out += fmt::format("sample {} {} {}", sample.index, sample.brillouin_radius, sample.gm_delta);
    for (Eigen::Index i = 0; i < sample.delta.size(); ++i) out += fmt::format(" {}", sample.delta(i));
    out += '\n';
  }
  out += "end\n";
  return out;
}

UncertaintyShard parse_shard_text(const std::string& text, const std::string& source_name) {
  ShardReader in(text, source_name);
  const std::string magic = fmt::format("{} {}", kShardFormat, kShardVersion);
  if (!in.in().next_line() || in.in().rest() != magic)
    throw format_error(source_name, 1, fmt::format("not a shard file: the first line must be '{}'", magic));
  UncertaintyShard shard;
  try {
    shard.shard = parse_shard(in.word("shard"));
  } catch (const ConventionError& e) {
    in.fail(e.what());
  }
  UncertaintySettings& s = shard.settings;
  constexpr std::int64_t kMost = std::numeric_limits<std::int64_t>::max();
  shard.fingerprint = in.word("fingerprint");
  while (in.peek_key() == "mesh_checksum") shard.mesh_checksums.push_back(in.word("mesh_checksum"));
  s.samples = long(in.integer("samples", 1, kMost));
  {
    // The seed is any 64-bit unsigned value, beyond the scanner's signed integers.
    const std::string seed = in.word("seed");
    const auto result = std::from_chars(seed.data(), seed.data() + seed.size(), s.seed);
    if (result.ec != std::errc() || result.ptr != seed.data() + seed.size())
      in.fail(fmt::format("seed '{}' is not a whole number from 0 to 2^64 - 1", seed));
  }
  const int degree = int(in.integer("degree", 0, std::numeric_limits<int>::max()));
  s.shape.sigma = in.number("shape_sigma");
  s.shape.correlation_length = in.number("correlation_length");
  s.density_sigma = in.number("density_sigma");
  s.lateral.sigma = in.number("lateral_sigma");
  s.lateral.sectors = int(in.integer("lateral_sectors", 0, std::numeric_limits<int>::max()));
  s.preserve_mass = in.boolean("preserve_mass");
  while (in.peek_key() == "inclusion") {
    TextScanner& line = in.line("inclusion");
    const std::string_view kind = line.token();
    if (kind != "core" && kind != "void")
      in.fail("inclusion needs: core|void radius contrast x y z offset subdivisions");
    Inclusion inclusion;
    inclusion.empty = kind == "void";
    inclusion.radius = line.number("inclusion radius");
    inclusion.contrast = line.number("inclusion contrast");
    const double x = line.number("inclusion x"), y = line.number("inclusion y"),
                 z = line.number("inclusion z");
    inclusion.center = Eigen::Vector3d(x, y, z);
    inclusion.offset = line.number("inclusion offset");
    inclusion.subdivisions = int(line.integer("inclusion subdivisions", 0, 12));
    line.expect_line_end("the inclusion");
    s.inclusions.push_back(inclusion);
  }
  try {
    shard.convention.normalization = parse_normalization(in.word("normalization"));
  } catch (const ConventionError& e) {
    in.fail(e.what());
  }
  shard.convention.condon_shortley = in.boolean("condon_shortley");
  shard.convention.zonal_as_j = in.boolean("zonal_as_j");
  shard.mean_edge = in.number("mean_edge");

  // The nominal set is our coefficient text, embedded whole: its bytes go to the coefficient reader.
  const std::int64_t nominal_lines = in.integer("nominal_lines", 0, kMost);
  const long nominal_line = in.in().line_number();
  const size_t nominal_start = in.in().next_offset();
  for (std::int64_t k = 0; k < nominal_lines; ++k) in.skip_line();
  const std::string nominal = text.substr(nominal_start, in.in().next_offset() - nominal_start);
  try {
    shard.nominal = parse_coefficient_text(
        nominal, source_name + " (nominal set from line " + std::to_string(nominal_line + 1) + ")");
  } catch (const Error& e) {
    throw FormatError(e.what());
  }
  if (shard.nominal.degree != degree)
    in.fail(fmt::format("nominal set has degree {}, header says {}", shard.nominal.degree, degree));

  const std::int64_t count = in.integer("sample_count", 0, s.samples);
  const size_t values = packed_size(degree);
  for (std::int64_t k = 0; k < count; ++k) {
    TextScanner& line = in.line("sample");
    if (line.tokens_left() != long(values) + 3)
      in.fail(fmt::format(
          "a sample line needs index, Brillouin radius, GM delta and {} coefficient deltas; got {} values",
          values, line.tokens_left()));
    SampleResult sample;
    sample.index = long(line.integer("sample index", 0, s.samples - 1));
    if (!shard.samples.empty() && sample.index <= shard.samples.back().index)
      in.fail(fmt::format("sample {} out of order", sample.index));
    sample.brillouin_radius = line.number("Brillouin radius");
    sample.gm_delta = line.number("GM delta");
    sample.delta.resize(Eigen::Index(values));
    for (size_t i = 0; i < values; ++i) sample.delta(Eigen::Index(i)) = line.number("coefficient delta");
    shard.samples.push_back(std::move(sample));
  }
  if (in.peek_key() != "end") in.fail("expected 'end' after the samples");
  in.line("end").expect_line_end("end");
  if (in.in().next_line()) in.fail("text after 'end'");
  return shard;
}

}  // namespace polystokes
