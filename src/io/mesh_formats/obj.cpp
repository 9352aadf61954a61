// Wavefront OBJ: "v x y z [w]" vertices and "f i j k ..." polygons (index forms i, i/t, i//n, i/t/n; negative
// indices count back from the latest vertex). Wavefront, "Object Files (.obj)", Appendix B1 of the Advanced
// Visualizer manual (from memory). Every other statement of the format is read past.
#include <fmt/format.h>

#include <algorithm>
#include <cctype>
#include <cmath>
#include <cstring>
#include <limits>
#include <utility>

#include "io/mesh_format_registry.h"
#include "io/text_scanner.h"
#include "polystokes/core/quantity.h"

namespace polystokes {
namespace {

/// Statements of the OBJ format: geometry, free-form, grouping and display records. Only v and f carry the
/// mesh; the rest are read past.
bool is_obj_keyword(std::string_view word) {
  static constexpr std::string_view keywords[] = {
      "v",    "vt",         "vn",        "vp",     "f",     "l",    "p",    "g",      "o",        "s",
      "mg",   "usemtl",     "mtllib",    "cstype", "deg",   "bmat", "step", "curv",   "curv2",    "surf",
      "parm", "trim",       "hole",      "scrv",   "sp",    "end",  "con",  "bevel",  "c_interp", "d_interp",
      "lod",  "shadow_obj", "trace_obj", "ctech",  "stech", "call", "csh",  "maplib", "usemap",   "res"};
  return std::find(std::begin(keywords), std::end(keywords), word) != std::end(keywords);
}

/// A token that can only be part of a vertex or face record: a number or a v/vt/vn index triple.
bool looks_numeric(std::string_view token) {
  return !token.empty() && token.find_first_not_of("0123456789+-.eE/") == std::string_view::npos &&
         token.find_first_of("0123456789") != std::string_view::npos;
}

/// Refuses a statement the format does not know but that reads like a vertex or face record ("V 1 2 3",
/// "F 1 2 3", "vx 0 0 1"): skipping it would leave a missing vertex to surface later as a confusing index
/// error.
void check_keyword(TextScanner& in, std::string_view word) {
  if (word[0] == '#' || is_obj_keyword(word)) return;
  std::string lower(word);
  std::transform(lower.begin(), lower.end(), lower.begin(), [](unsigned char c) { return std::tolower(c); });
  if (is_obj_keyword(lower))
    in.fail(fmt::format("unknown statement '{}': OBJ keywords are lower case ('{}')", word, lower));
  bool any = false, all_numeric = true;
  for (std::string_view token = in.token(); !token.empty(); token = in.token()) {
    any = true;
    all_numeric = all_numeric && looks_numeric(token);
  }
  if (any && all_numeric)
    in.fail(fmt::format("unknown statement '{}' followed by numbers: a vertex is 'v x y z', a face 'f i j k'",
                        word));
}

void read_vertex(TextScanner& in, PolygonSoup& soup) {
  std::string_view tokens[3];
  double p[3];
  NumberStatus status[3];
  for (int k = 0; k < 3; ++k) {
    tokens[k] = in.token();
    if (tokens[k].empty())
      in.fail(fmt::format("vertex {} has {} coordinates, expected 3", soup.vertex_count() + 1, k));
    status[k] = read_strict_number(tokens[k], p[k]);
    if (status[k] == NumberStatus::malformed)
      in.fail(fmt::format("cannot parse vertex coordinate '{}'", tokens[k]));
    if (status[k] == NumberStatus::out_of_range)
      in.fail(fmt::format("vertex coordinate '{}' is not representable as a double", tokens[k]));
  }
  for (int k = 0; k < 3; ++k) {
    if (status[k] == NumberStatus::not_finite)
      in.fail(fmt::format("vertex {} has a non-finite coordinate ({} {} {})", soup.vertex_count() + 1,
                          tokens[0], tokens[1], tokens[2]));
  }
  soup.add_vertex(p[0], p[1], p[2]);
}

void read_face(TextScanner& in, PolygonSoup& soup) {
  const std::int64_t face = soup.polygon_count() + 1;
  const std::int64_t vertices = soup.vertex_count();
  long count = 0;
  for (std::string_view token = in.token(); !token.empty(); token = in.token(), ++count) {
    const std::string_view digits = token.substr(0, token.find('/'));
    std::int64_t raw = 0;
    if (!parse_integer_token(digits, raw) || raw == 0)
      in.fail(fmt::format("face {} has a missing or non-numeric vertex index", face));
    // One-based; negative indices count back from the latest vertex.
    const std::int64_t index = raw > 0 ? raw - 1 : vertices + raw;
    if (index < 0 || index >= vertices)
      in.fail(fmt::format("face {} refers to vertex {}, but only {} vertices are defined before it", face,
                          raw, vertices));
    soup.corners.push_back(static_cast<int>(index));
  }
  if (count < 3) in.fail(fmt::format("face {} has {} vertices, a face needs at least 3", face, count));
  soup.end_polygon();
}

/// Lines starting with "v" or "f" and a blank: an exact bound on the records, for sizing the soup at once.
std::pair<std::int64_t, std::int64_t> count_records(std::string_view bytes) {
  std::int64_t vertices = 0, faces = 0;
  const char* p = bytes.data();
  const char* end = p + bytes.size();
  while (p < end) {
    while (p < end && is_blank(*p)) ++p;
    if (end - p > 1 && is_blank(p[1])) {
      vertices += *p == 'v';
      faces += *p == 'f';
    }
    const void* line_end = std::memchr(p, '\n', static_cast<size_t>(end - p));
    p = line_end ? static_cast<const char*>(line_end) + 1 : end;
  }
  return {vertices, faces};
}

}  // namespace

void read_obj(const std::string& path, std::string_view bytes, PolygonSoup& soup) {
  const auto [vertex_lines, face_lines] = count_records(bytes);
  soup.reserve(vertex_lines, face_lines, bytes.size(), 8.0, 8.0);
  TextScanner in(bytes, path);
  while (in.next_line()) {
    const std::string_view word = in.token();
    if (word.empty()) continue;
    if (in.rest().size() > 0 && in.rest().back() == '\\')
      in.fail("line continuations ('\\' at the end of a line) are not supported");
    if (word == "v") {
      if (soup.vertex_count() >= max_mesh_vertices)
        throw ResourceError(path + ": more vertices than a 32-bit face index can address");
      read_vertex(in, soup);
    } else if (word == "f") {
      read_face(in, soup);
    } else {
      check_keyword(in, word);
    }
  }
}

}  // namespace polystokes
