// OFF (Geomview): a keyword line [N][4][n]OFF, the counts "vertices faces edges", vertex lines "x y z" (plus
// a normal for NOFF, a homogeneous w for 4OFF), face lines "n i1 .. in" (trailing colour values ignored); or
// the keyword followed by BINARY and big-endian 32-bit counts, float coordinates and integer faces.
// Geomview manual, "OFF files" (Geomview 1.9 documentation; from memory). Colour and texture variants (COFF,
// STOFF) are refused.
#include <fmt/format.h>

#include <cmath>
#include <cstring>

#include "io/mesh_format_registry.h"
#include "io/text_scanner.h"
#include "polystokes/core/quantity.h"

namespace polystokes {
namespace {

struct OffKeyword {
  std::string text;
  bool colours = false, textures = false, normals = false, homogeneous = false, dimensional = false;
};

/// The keyword's prefixes in their fixed order: [ST][C][N][4][n]OFF.
bool parse_keyword(std::string_view word, OffKeyword& keyword) {
  keyword.text = std::string(word);
  size_t j = 0;
  auto take = [&](std::string_view prefix, bool& flag) {
    if (word.substr(j, prefix.size()) == prefix) flag = true, j += prefix.size();
  };
  take("ST", keyword.textures);
  take("C", keyword.colours);
  take("N", keyword.normals);
  take("4", keyword.homogeneous);
  take("n", keyword.dimensional);
  return word.substr(j) == "OFF";
}

/// Header tokens may run over lines and comments.
std::string_view header_token(TextScanner& in) {
  for (;;) {
    const std::string_view token = in.token();
    if (!token.empty()) return token;
    if (!in.next_line()) return {};
    in.cut_comment('#');
  }
}

/// The next header count; `pending` is a token already read (consumed here first).
std::int64_t header_count(TextScanner& in, const char* what, std::string_view& pending) {
  const std::string_view token = pending.empty() ? header_token(in) : pending;
  pending = {};
  if (token.empty()) in.fail(fmt::format("the header ends before the {}", what));
  std::int64_t value = 0;
  if (!parse_integer_token(token, value) || value < INT32_MIN || value > INT32_MAX)
    in.fail(fmt::format("the {} '{}' is not a whole number", what, token));
  return value;
}

struct Counts {
  std::int64_t vertices = 0, faces = 0, edges = 0;
};

void check_counts(const std::string& path, const Counts& counts, double minimum_bytes, size_t file_size) {
  if (counts.vertices < 0)
    throw format_error(
        path, 0, fmt::format("the header declares a negative number of vertices ({})", counts.vertices));
  if (counts.faces < 0)
    throw format_error(path, 0,
                       fmt::format("the header declares a negative number of faces ({})", counts.faces));
  // Edges are not read, but a count beyond any real mesh marks a damaged header.
  if (std::abs(counts.edges) > (std::int64_t(1) << 30))
    throw format_error(path, 0, fmt::format("the header's edge count {} is out of range", counts.edges));
  if (minimum_bytes > static_cast<double>(file_size))
    throw format_error(path, 0,
                       fmt::format("the header declares {} vertices and {} faces, which need at least {:.0f} "
                                   "bytes, but the file has only {}",
                                   counts.vertices, counts.faces, minimum_bytes, file_size));
  if (counts.vertices + counts.faces > 1'000'000'000)
    throw ResourceError(
        fmt::format("{}: {} vertices and {} faces are more than the OFF reader takes (10^9 "
                    "together)",
                    path, counts.vertices, counts.faces));
}

class BigEndian {
 public:
  BigEndian(std::string_view bytes, size_t start) : bytes_(bytes), pos_(start) {}
  size_t remaining() const { return bytes_.size() - pos_; }
  bool word(std::uint32_t& value) {
    if (remaining() < 4) return false;
    value = 0;
    for (int k = 0; k < 4; ++k) value = value << 8 | static_cast<unsigned char>(bytes_[pos_++]);
    return true;
  }

 private:
  std::string_view bytes_;
  size_t pos_;
};

void read_binary(const std::string& path, std::string_view bytes, size_t start, PolygonSoup& soup) {
  BigEndian in(bytes, start);
  std::uint32_t raw[3];
  for (auto& r : raw)
    if (!in.word(r)) throw format_error(path, 0, "the file ends inside the binary header's counts");
  Counts counts{std::int32_t(raw[0]), std::int32_t(raw[1]), std::int32_t(raw[2])};
  // Three 4-byte coordinates per vertex and at least a 4-byte count per face.
  check_counts(path, counts,
               static_cast<double>(start) +
                   12.0 * static_cast<double>(std::max<std::int64_t>(0, counts.vertices)) +
                   4.0 * static_cast<double>(counts.faces) + 11.0,
               bytes.size());
  soup.reserve(counts.vertices, counts.faces, in.remaining(), 12.0, 16.0);
  for (std::int64_t v = 0; v < counts.vertices; ++v) {
    float p[3];
    for (float& x : p) {
      std::uint32_t bits = 0;
      if (!in.word(bits))
        throw format_error(path, 0,
                           fmt::format("the file ends inside the {} binary vertices", counts.vertices));
      std::memcpy(&x, &bits, 4);
    }
    soup.add_vertex(p[0], p[1], p[2]);
  }
  for (std::int64_t f = 0; f < counts.faces; ++f) {
    std::uint32_t size = 0;
    if (!in.word(size))
      throw format_error(path, 0,
                         fmt::format("the file ends before binary face {} of {}", f + 1, counts.faces));
    const std::int32_t n = static_cast<std::int32_t>(size);
    if (n < 0 || 4.0 * n > static_cast<double>(in.remaining()))
      throw format_error(
          path, 0,
          fmt::format("binary face {} declares {} vertices, more than the rest of the file holds", f + 1, n));
    for (std::int32_t k = 0; k < n; ++k) {
      std::uint32_t index = 0;
      in.word(index);
      if (static_cast<std::int64_t>(index) >= counts.vertices)
        throw format_error(
            path, 0,
            fmt::format("cannot parse OFF data: binary face {} refers to vertex {}, but the file "
                        "has {} vertices",
                        f + 1, std::int32_t(index), counts.vertices));
      soup.corners.push_back(static_cast<int>(index));
    }
    soup.end_polygon();
  }
}

/// The next line holding something besides blanks and comments; false at the end of the file.
bool next_record(TextScanner& in) {
  while (in.next_line()) {
    in.cut_comment('#');
    if (!in.at_line_end()) return true;
  }
  return false;
}

/// `first` is the header's first count, already read.
void read_ascii(TextScanner& in, std::string_view first, const OffKeyword& keyword, PolygonSoup& soup,
                size_t file_size) {
  Counts counts;
  if (keyword.dimensional) {
    const std::int64_t dimension = header_count(in, "dimension", first);
    if (dimension != 3) in.fail(fmt::format("nOFF dimension {} is not supported (3 only)", dimension));
  }
  counts.vertices = header_count(in, "vertex count", first);
  counts.faces = header_count(in, "face count", first);
  counts.edges = header_count(in, "edge count", first);
  in.expect_line_end("the counts");
  // A vertex line holds at least three numbers, a face line at least its count: two bytes each.
  const double minimum = static_cast<double>(in.rest().data() - in.text_start()) +
                         6.0 * static_cast<double>(std::max<std::int64_t>(0, counts.vertices)) +
                         2.0 * static_cast<double>(counts.faces) - 1.0;
  check_counts(in.path(), counts, minimum, file_size);
  soup.reserve(counts.vertices, counts.faces, in.remaining_bytes(), 6.0, 8.0);
  for (std::int64_t v = 0; v < counts.vertices; ++v) {
    if (!next_record(in))
      in.fail(fmt::format("the file ends after {} of its {} vertices", v, counts.vertices));
    double p[3];
    for (double& x : p) x = in.number("vertex coordinate");
    if (keyword.normals)
      for (int k = 0; k < 3; ++k) in.number("vertex normal");
    if (keyword.homogeneous) {
      const double w = in.number("homogeneous coordinate");
      if (w == 0) in.fail(fmt::format("vertex {} has homogeneous coordinate 0", v + 1));
      for (double& x : p) x /= w;
    }
    soup.add_vertex(p[0], p[1], p[2]);
  }
  for (std::int64_t f = 0; f < counts.faces; ++f) {
    if (!next_record(in)) in.fail(fmt::format("the file ends after {} of its {} faces", f, counts.faces));
    const long indices = in.tokens_left() - 1;
    const double declared = in.number("face vertex count");
    if (!(declared >= 0 && declared <= static_cast<double>(indices) && declared == std::floor(declared)))
      in.fail(fmt::format("face {}: the line declares {} vertices but holds {} indices", f + 1, declared,
                          indices));
    for (long k = 0; k < static_cast<long>(declared); ++k) {
      const double index = in.number("vertex index");
      if (!(index >= 0 && index == std::floor(index)))
        in.fail(fmt::format("face {}: vertex index {} is not a whole number >= 0", f + 1, index));
      if (index >= static_cast<double>(counts.vertices))
        in.fail(
            fmt::format("cannot parse OFF data: face {} refers to vertex {}, but the file has {} vertices",
                        f + 1, index, counts.vertices));
      soup.corners.push_back(static_cast<int>(index));
    }
    soup.end_polygon();  // values after the indices (a face colour) are not used
  }
}

}  // namespace

void read_off(const std::string& path, std::string_view bytes, PolygonSoup& soup) {
  TextScanner in(bytes, path);
  if (!next_record(in)) throw format_error(path, 0, "no OFF keyword");
  OffKeyword keyword;
  const std::string_view word = in.token();
  if (!parse_keyword(word, keyword)) in.fail(fmt::format("'{}' is not an OFF keyword ([N][4][n]OFF)", word));
  if (keyword.colours || keyword.textures)
    in.fail(
        fmt::format("OFF variant '{}' with colours or texture coordinates is not supported; write plain OFF",
                    keyword.text));
  const std::string_view next = header_token(in);
  if (next == "BINARY") {
    if (keyword.normals || keyword.homogeneous || keyword.dimensional)
      throw format_error(
          path, 0, fmt::format("binary OFF variant '{}' is not supported; write plain OFF", keyword.text));
    in.expect_line_end("BINARY");
    read_binary(path, bytes, in.next_offset(), soup);
    return;
  }
  read_ascii(in, next, keyword, soup, bytes.size());
}

}  // namespace polystokes
