#include "polystokes/io/shard_file.h"

#include <fmt/format.h>

#include <charconv>
#include <cmath>
#include <sstream>

#include "polystokes/core/errors.h"
#include "polystokes/io/coefficient_file.h"
#include "polystokes/sets/conventions.h"
#include "uncertainty/sample_layout.h"

namespace polystokes {

namespace {

constexpr const char* kShardFormat = "polystokes-uncertainty-shard";
constexpr int kShardVersion = 1;

std::string bool_word(bool value) { return value ? "true" : "false"; }

class ShardReader {
 public:
  ShardReader(const std::string& text, const std::string& source) : source_(source) {
    std::istringstream in(text);
    std::string line;
    while (std::getline(in, line)) lines_.push_back(line);
  }

  /// Reports the line last looked at.
  [[noreturn]] void fail(const std::string& problem) const { throw format_error(source_, current_, problem); }
  long line_number() const { return current_; }
  bool at_end() const { return next_ >= lines_.size(); }
  const std::string& peek() {
    current_ = long(next_) + 1;
    if (at_end()) {
      current_ = long(lines_.size());
      fail("unexpected end of file (truncated shard?)");
    }
    return lines_[next_];
  }
  std::string peek_key() {
    const std::string& line = peek();
    return line.substr(0, line.find(' '));
  }
  /// The value of the next line, which must start with "key ".
  std::string value(const std::string& key) {
    const std::string& line = peek();
    if (line.compare(0, key.size() + 1, key + " ") != 0)
      fail("expected '" + key + " ...', got '" + line + "'");
    ++next_;
    return line.substr(key.size() + 1);
  }
  std::string take_line() {
    const std::string& line = peek();
    ++next_;
    return line;
  }

  double number(const std::string& text) const {
    double out = 0;
    const auto result = std::from_chars(text.data(), text.data() + text.size(), out);
    if (result.ec != std::errc() || result.ptr != text.data() + text.size() || !std::isfinite(out))
      fail("'" + text + "' is not a finite number");
    return out;
  }
  template <class Int>
  Int integer(const std::string& text) const {
    Int out = 0;
    const auto result = std::from_chars(text.data(), text.data() + text.size(), out);
    if (result.ec != std::errc() || result.ptr != text.data() + text.size() || text.empty())
      fail("'" + text + "' is not an integer");
    return out;
  }
  bool boolean(const std::string& text) const {
    if (text == "true") return true;
    if (text == "false") return false;
    fail("'" + text + "' is not true or false");
  }

  static std::vector<std::string> words(const std::string& text) {
    std::istringstream in(text);
    std::vector<std::string> out;
    std::string word;
    while (in >> word) out.push_back(word);
    return out;
  }

 private:
  std::string source_;
  std::vector<std::string> lines_;
  size_t next_ = 0;
  long current_ = 1;
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
  if (in.at_end() || in.take_line() != fmt::format("{} {}", kShardFormat, kShardVersion))
    throw format_error(
        source_name, 1,
        fmt::format("not a shard file: the first line must be '{} {}'", kShardFormat, kShardVersion));
  UncertaintyShard shard;
  try {
    shard.shard = parse_shard(in.value("shard"));
  } catch (const ConventionError& e) {
    in.fail(e.what());
  }
  UncertaintySettings& s = shard.settings;
  shard.fingerprint = in.value("fingerprint");
  while (in.peek_key() == "mesh_checksum") shard.mesh_checksums.push_back(in.value("mesh_checksum"));
  s.samples = in.integer<long>(in.value("samples"));
  s.seed = in.integer<std::uint64_t>(in.value("seed"));
  const int degree = in.integer<int>(in.value("degree"));
  s.shape.sigma = in.number(in.value("shape_sigma"));
  s.shape.correlation_length = in.number(in.value("correlation_length"));
  s.density_sigma = in.number(in.value("density_sigma"));
  s.lateral.sigma = in.number(in.value("lateral_sigma"));
  s.lateral.sectors = in.integer<int>(in.value("lateral_sectors"));
  s.preserve_mass = in.boolean(in.value("preserve_mass"));
  while (in.peek_key() == "inclusion") {
    const auto w = ShardReader::words(in.value("inclusion"));
    if (w.size() != 8 || (w[0] != "core" && w[0] != "void"))
      in.fail("inclusion needs: core|void radius contrast x y z offset subdivisions");
    Inclusion inclusion;
    inclusion.empty = w[0] == "void";
    inclusion.radius = in.number(w[1]);
    inclusion.contrast = in.number(w[2]);
    inclusion.center = Eigen::Vector3d(in.number(w[3]), in.number(w[4]), in.number(w[5]));
    inclusion.offset = in.number(w[6]);
    inclusion.subdivisions = in.integer<int>(w[7]);
    s.inclusions.push_back(inclusion);
  }
  try {
    shard.convention.normalization = parse_normalization(in.value("normalization"));
  } catch (const ConventionError& e) {
    in.fail(e.what());
  }
  shard.convention.condon_shortley = in.boolean(in.value("condon_shortley"));
  shard.convention.zonal_as_j = in.boolean(in.value("zonal_as_j"));
  shard.mean_edge = in.number(in.value("mean_edge"));

  const long nominal_lines = in.integer<long>(in.value("nominal_lines"));
  const long nominal_line = in.line_number();
  std::string nominal;
  for (long k = 0; k < nominal_lines; ++k) nominal += in.take_line() + "\n";
  try {
    shard.nominal = parse_coefficient_text(
        nominal, source_name + " (nominal set from line " + std::to_string(nominal_line + 1) + ")");
  } catch (const Error& e) {
    throw FormatError(e.what());
  }
  if (shard.nominal.degree != degree)
    in.fail(fmt::format("nominal set has degree {}, header says {}", shard.nominal.degree, degree));

  const long count = in.integer<long>(in.value("sample_count"));
  const size_t values = packed_size(degree);
  for (long k = 0; k < count; ++k) {
    const auto w = ShardReader::words(in.value("sample"));
    if (w.size() != values + 3)
      in.fail(fmt::format(
          "a sample line needs index, Brillouin radius, GM delta and {} coefficient deltas; got {} "
          "values",
          values, w.size()));
    SampleResult sample;
    sample.index = in.integer<long>(w[0]);
    if (sample.index < 0 || sample.index >= s.samples)
      in.fail(fmt::format("sample index {} outside 0..{}", sample.index, s.samples - 1));
    if (!shard.samples.empty() && sample.index <= shard.samples.back().index)
      in.fail(fmt::format("sample {} out of order", sample.index));
    sample.brillouin_radius = in.number(w[1]);
    sample.gm_delta = in.number(w[2]);
    sample.delta.resize(Eigen::Index(values));
    for (size_t i = 0; i < values; ++i) sample.delta(Eigen::Index(i)) = in.number(w[i + 3]);
    shard.samples.push_back(std::move(sample));
  }
  if (in.take_line() != "end") in.fail("expected 'end' after the samples");
  if (!in.at_end()) in.fail("text after 'end'");
  return shard;
}

}  // namespace polystokes
