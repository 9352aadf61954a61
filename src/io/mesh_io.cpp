#include "polystokes/io/mesh_io.h"

#include <CGAL/Exact_predicates_inexact_constructions_kernel.h>
#include <CGAL/IO/OFF.h>
#include <CGAL/IO/PLY.h>
#include <CGAL/IO/STL.h>
#include <fmt/format.h>
#include <openssl/evp.h>
#include <tiny_obj_loader.h>

#include <Eigen/Geometry>
#include <algorithm>
#include <array>
#include <charconv>
#include <cmath>
#include <cstdint>
#include <cstring>
#include <filesystem>
#include <limits>
#include <sstream>
#include <string_view>
#include <type_traits>
#include <unordered_map>

#include "polystokes/core/errors.h"
#include "internal/memory_budget.h"
#include "io/mesh_preflight.h"
#include "polystokes/io/output_file.h"

namespace polystokes {

// The double build of tinyobjloader is linked (its CMake target defines TINYOBJLOADER_USE_DOUBLE); real_t
// must agree with the library, because it appears in the callback signatures and in attrib_t.
static_assert(std::is_same<tinyobj::real_t, double>::value, "link tinyobjloader_double");

namespace {

using Point = Eigen::Vector3d;
using Triangle = std::array<long, 3>;

/// Vertices and faces exactly as the file states them (indices zero-based, not yet checked).
struct Soup {
  std::vector<Point> points;
  std::vector<std::vector<long>> polygons;
  long raw_vertex_entries = 0;  ///< vertex records in the file (STL repeats them per facet)
};

std::string sha256_hex(const std::string& bytes) {
  unsigned char digest[EVP_MAX_MD_SIZE];
  unsigned int length = 0;
  if (EVP_Digest(bytes.data(), bytes.size(), digest, &length, EVP_sha256(), nullptr) != 1)
    throw ResourceError("OpenSSL SHA-256 digest failed");
  std::string hex;
  hex.reserve(2 * length);
  for (unsigned int i = 0; i < length; ++i) hex += fmt::format("{:02x}", digest[i]);
  return hex;
}

std::string lower_extension(const std::string& path) {
  std::string ext = std::filesystem::path(path).extension().string();
  std::transform(ext.begin(), ext.end(), ext.begin(), [](unsigned char c) { return std::tolower(c); });
  return ext;
}

std::vector<std::string_view> split_whitespace(std::string_view line) {
  std::vector<std::string_view> tokens;
  size_t i = 0;
  while (i < line.size()) {
    while (i < line.size() && (line[i] == ' ' || line[i] == '\t')) ++i;
    const size_t start = i;
    while (i < line.size() && line[i] != ' ' && line[i] != '\t') ++i;
    if (i > start) tokens.push_back(line.substr(start, i - start));
  }
  return tokens;
}

/// Correctly rounded decimal -> double (std::from_chars), accepting a leading '+' as strtod does.
double parse_coordinate(const std::string& path, long line, std::string_view token) {
  std::string_view digits = token;
  if (digits.size() > 1 && digits[0] == '+') digits.remove_prefix(1);
  double value = 0;
  const auto [end, ec] = std::from_chars(digits.data(), digits.data() + digits.size(), value);
  if (ec == std::errc::result_out_of_range)
    throw format_error(path, line,
                       fmt::format("vertex coordinate '{}' is not representable as a double", token));
  if (ec != std::errc() || end != digits.data() + digits.size())
    throw format_error(path, line, fmt::format("cannot parse vertex coordinate '{}'", token));
  return value;
}

/// Statements of the OBJ format (Wavefront, "Object Files (.obj)", Appendix B1 of the Advanced Visualizer
/// manual): geometry, free-form, grouping and display records. Only v and f carry the mesh; the rest are
/// read past.
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
/// "F 1 2 3", "vx 0 0 1"): tinyobjloader would skip it silently, and the missing vertex would surface later
/// as a confusing index error.
void check_obj_keyword(const std::string& path, long line, const std::vector<std::string_view>& tokens) {
  const std::string_view word = tokens[0];
  if (word[0] == '#' || is_obj_keyword(word)) return;
  std::string lower(word);
  std::transform(lower.begin(), lower.end(), lower.begin(), [](unsigned char c) { return std::tolower(c); });
  if (is_obj_keyword(lower))
    throw format_error(
        path, line, fmt::format("unknown statement '{}': OBJ keywords are lower case ('{}')", word, lower));
  if (tokens.size() > 1 && std::all_of(tokens.begin() + 1, tokens.end(), looks_numeric))
    throw format_error(
        path, line,
        fmt::format("unknown statement '{}' followed by numbers: a vertex is 'v x y z', a face "
                    "'f i j k'",
                    word));
}

/// What tinyobjloader reports through its callbacks, collected for checking after the parse.
struct ObjFaces {
  long vertex_count = 0;  ///< vertices seen so far (resolves negative, relative indices)
  const std::vector<long>* face_lines = nullptr;
  const std::string* path = nullptr;
  std::vector<std::vector<long>> polygons;
  std::string first_error;
};

void obj_vertex(void* user, tinyobj::real_t, tinyobj::real_t, tinyobj::real_t, tinyobj::real_t) {
  ++static_cast<ObjFaces*>(user)->vertex_count;
}

void obj_face(void* user, tinyobj::index_t* indices, int count) {
  auto& state = *static_cast<ObjFaces*>(user);
  const size_t face = state.polygons.size();
  const long line = face < state.face_lines->size() ? (*state.face_lines)[face] : 0;
  std::vector<long> polygon;
  polygon.reserve(static_cast<size_t>(count));
  for (int k = 0; k < count; ++k) {
    const long raw = indices[k].vertex_index;
    // OBJ indices are one-based; negative ones count back from the latest vertex; 0 marks a bad token.
    const long index = raw > 0 ? raw - 1 : state.vertex_count + raw;
    if (state.first_error.empty() && (raw == 0 || index < 0 || index >= state.vertex_count)) {
      state.first_error =
          format_error(*state.path, line,
                       raw == 0 ? fmt::format("face {} has a missing or non-numeric vertex index", face + 1)
                                : fmt::format("face {} refers to vertex {}, but only {} vertices are defined "
                                              "before it",
                                              face + 1, raw, state.vertex_count))
              .what();
    }
    polygon.push_back(index);
  }
  state.polygons.push_back(std::move(polygon));
}

/// OBJ: tinyobjloader reads the face records (index syntax v/vt/vn, relative indices). Its number parser
/// is not correctly rounded (about half of all shortest-form doubles come back one ulp off) and turns
/// "nan" into 0, so the coordinates are read here with std::from_chars, which also gives line numbers.
Soup parse_obj(const std::string& path, const std::string& bytes) {
  Soup soup;
  std::vector<long> face_lines;
  long line_number = 0;
  for (size_t pos = 0; pos < bytes.size();) {
    size_t end = bytes.find('\n', pos);
    if (end == std::string::npos) end = bytes.size();
    std::string_view line(bytes.data() + pos, end - pos);
    pos = end + 1;
    ++line_number;
    if (!line.empty() && line.back() == '\r') line.remove_suffix(1);
    const auto tokens = split_whitespace(line);
    if (tokens.empty()) continue;
    check_obj_keyword(path, line_number, tokens);
    if (tokens[0] == "v") {
      if (tokens.size() < 4)
        throw format_error(path, line_number,
                           fmt::format("vertex {} has {} coordinates, expected 3", soup.points.size() + 1,
                                       tokens.size() - 1));
      Point p;
      for (int k = 0; k < 3; ++k) p[k] = parse_coordinate(path, line_number, tokens[k + 1]);
      if (!p.allFinite())
        throw format_error(path, line_number,
                           fmt::format("vertex {} has a non-finite coordinate ({} {} {})",
                                       soup.points.size() + 1, tokens[1], tokens[2], tokens[3]));
      soup.points.push_back(p);
    } else if (tokens[0] == "f") {
      if (tokens.size() < 4)
        throw format_error(path, line_number,
                           fmt::format("face {} has {} vertices, a face needs at least 3",
                                       face_lines.size() + 1, tokens.size() - 1));
      face_lines.push_back(line_number);
    }
  }

  ObjFaces faces;
  faces.face_lines = &face_lines;
  faces.path = &path;
  tinyobj::callback_t callbacks;
  callbacks.vertex_cb = obj_vertex;
  callbacks.index_cb = obj_face;
  std::istringstream in(bytes);
  std::string warnings, errors;
  if (!tinyobj::LoadObjWithCallback(in, callbacks, &faces, nullptr, &warnings, &errors)) {
    const std::string first = errors.substr(0, errors.find('\n'));
    throw format_error(path, 0, "cannot parse OBJ: " + first);
  }
  if (!faces.first_error.empty()) throw FormatError(faces.first_error);
  if (faces.vertex_count != static_cast<long>(soup.points.size()) ||
      faces.polygons.size() != face_lines.size())
    throw format_error(path, 0,
                       "OBJ records could not be matched to lines (line continuations and lone carriage "
                       "returns as line ends are not supported)");
  soup.polygons = std::move(faces.polygons);
  soup.raw_vertex_entries = static_cast<long>(soup.points.size());
  return soup;
}

/// Binary STL stores float triples, which CGAL welds in a std::map; NaN keys break its ordering, so
/// non-finite values are refused first. Recognised by the exact size 84 + 50 * facets.
void check_binary_stl_finite(const std::string& path, const std::string& bytes) {
  if (bytes.size() < 84) return;
  std::uint32_t facets = 0;
  std::memcpy(&facets, bytes.data() + 80, 4);
  if (bytes.size() != 84 + 50 * static_cast<std::uint64_t>(facets)) return;
  for (std::uint32_t f = 0; f < facets; ++f) {
    for (int k = 0; k < 9; ++k) {
      float value;
      std::memcpy(&value, bytes.data() + 84 + 50 * static_cast<size_t>(f) + 12 + 4 * k, 4);
      if (!std::isfinite(value))
        throw format_error(path, 0,
                           fmt::format("facet {} of {} has a non-finite vertex coordinate", f + 1, facets));
    }
  }
}

/// OFF, PLY and STL through CGAL's polygon-soup readers (which do not say where parsing failed).
Soup parse_with_cgal(const std::string& path, const std::string& bytes, const std::string& ext) {
  using Kernel = CGAL::Exact_predicates_inexact_constructions_kernel;
  std::vector<Kernel::Point_3> points;
  std::vector<std::vector<std::size_t>> polygons;
  std::istringstream in(bytes, std::ios::in | std::ios::binary);
  bool ok = false;
  std::string format;
  if (ext == ".off") {
    format = "OFF";
    ok = CGAL::IO::read_OFF(in, points, polygons, CGAL::parameters::verbose(false));
  } else if (ext == ".ply") {
    format = "PLY";
    CGAL::IO::set_mode(in,
                       CGAL::IO::BINARY);  // as CGAL's own file overload does; the header picks ascii/binary
    ok = CGAL::IO::read_PLY(in, points, polygons, CGAL::parameters::verbose(false));
  } else {
    format = "STL";
    check_binary_stl_finite(path, bytes);
    ok = CGAL::IO::read_STL(in, points, polygons, CGAL::parameters::verbose(false));
  }
  if (!ok)
    throw format_error(
        path, 0,
        "cannot parse " + format +
            " data (malformed header or counts, a non-numeric value, or a vertex index out of range)");
  Soup soup;
  soup.points.reserve(points.size());
  for (const auto& p : points) soup.points.emplace_back(p.x(), p.y(), p.z());
  soup.polygons.reserve(polygons.size());
  for (const auto& polygon : polygons) soup.polygons.emplace_back(polygon.begin(), polygon.end());
  // CGAL's STL reader already welds exact duplicates; the file held three vertex records per facet.
  soup.raw_vertex_entries =
      format == "STL" ? 3 * static_cast<long>(polygons.size()) : static_cast<long>(points.size());
  return soup;
}

void check_soup(const std::string& path, const Soup& soup) {
  const long n = static_cast<long>(soup.points.size());
  for (long i = 0; i < n; ++i) {
    const Point& p = soup.points[static_cast<size_t>(i)];
    if (!p.allFinite())
      throw format_error(path, 0,
                         fmt::format("vertex {} of {} has a non-finite coordinate ({}, {}, {})", i + 1, n,
                                     p.x(), p.y(), p.z()));
  }
  const size_t faces = soup.polygons.size();
  for (size_t f = 0; f < faces; ++f) {
    const auto& polygon = soup.polygons[f];
    if (polygon.size() < 3)
      throw format_error(path, 0,
                         fmt::format("face {} of {} has {} vertices, a face needs at least 3", f + 1, faces,
                                     polygon.size()));
    for (long index : polygon)
      if (index < 0 || index >= n)
        throw format_error(
            path, 0,
            fmt::format("face {} of {} refers to vertex index {}, but the file has {} vertices", f + 1, faces,
                        index, n));
  }
}

/// Splits a polygon into triangles by ear clipping in 2-D, projected along the dominant axis of its
/// Newell normal (which also fixes the polygon's winding there). An ear must turn strictly left and
/// contain no other polygon vertex (boundary included), so no zero-area triangles are made.
/// Returns false if no such decomposition is found (self-overlapping or degenerate polygon).
/// O(n^3) worst case in the polygon size, which is fine for the small polygons of shape files.
bool ear_clip(const std::vector<Point>& points, const std::vector<long>& polygon,
              std::vector<Triangle>& out) {
  const size_t n = polygon.size();
  Point normal = Point::Zero();
  for (size_t i = 0; i < n; ++i) {
    const Point& a = points[static_cast<size_t>(polygon[i])];
    const Point& b = points[static_cast<size_t>(polygon[(i + 1) % n])];
    normal += a.cross(b);
  }
  Eigen::Index axis;
  const double dominant = normal.cwiseAbs().maxCoeff(&axis);
  if (!(dominant > 0)) return false;
  // (u, v) axes chosen so that the polygon runs counter-clockwise in the projection.
  int u = (static_cast<int>(axis) + 1) % 3, v = (static_cast<int>(axis) + 2) % 3;
  if (normal[axis] < 0) std::swap(u, v);
  std::vector<std::array<double, 2>> q(n);
  for (size_t i = 0; i < n; ++i) {
    const Point& p = points[static_cast<size_t>(polygon[i])];
    q[i] = {p[u], p[v]};
  }
  auto cross = [&](size_t o, size_t a, size_t b) {
    return (q[a][0] - q[o][0]) * (q[b][1] - q[o][1]) - (q[a][1] - q[o][1]) * (q[b][0] - q[o][0]);
  };
  std::vector<size_t> ring(n);
  for (size_t i = 0; i < n; ++i) ring[i] = i;
  while (ring.size() > 3) {
    bool clipped = false;
    for (size_t k = 0; k < ring.size() && !clipped; ++k) {
      const size_t a = ring[(k + ring.size() - 1) % ring.size()], b = ring[k],
                   c = ring[(k + 1) % ring.size()];
      if (!(cross(a, b, c) > 0)) continue;
      bool empty = true;
      for (size_t other : ring) {
        if (other == a || other == b || other == c) continue;
        if (cross(a, b, other) >= 0 && cross(b, c, other) >= 0 && cross(c, a, other) >= 0) {
          empty = false;
          break;
        }
      }
      if (!empty) continue;
      out.push_back({polygon[a], polygon[b], polygon[c]});
      ring.erase(ring.begin() + static_cast<std::ptrdiff_t>(k));
      clipped = true;
    }
    if (!clipped) return false;
  }
  if (!(cross(ring[0], ring[1], ring[2]) > 0)) return false;
  out.push_back({polygon[ring[0]], polygon[ring[1]], polygon[ring[2]]});
  return true;
}

/// Maps every point to a kept point: the first earlier kept point at distance <= tolerance, else itself.
/// Exact (bitwise, with -0 == +0) for tolerance 0; otherwise a uniform grid with cell size = tolerance.
std::vector<long> weld(const std::vector<Point>& points, double tolerance, std::vector<Point>& kept) {
  std::vector<long> map(points.size());
  kept.clear();
  struct KeyHash {
    size_t operator()(const std::array<double, 3>& k) const {
      size_t h = 0;
      for (double x : k) h = h * 1000003u ^ std::hash<double>()(x);
      return h;
    }
  };
  struct CellHash {
    size_t operator()(const std::array<std::int64_t, 3>& k) const {
      return static_cast<size_t>(k[0] * 73856093 ^ k[1] * 19349663 ^ k[2] * 83492791);
    }
  };
  if (tolerance <= 0) {
    std::unordered_map<std::array<double, 3>, long, KeyHash> index;
    index.reserve(points.size());
    for (size_t i = 0; i < points.size(); ++i) {
      const Point& p = points[i];
      const std::array<double, 3> key{p.x() + 0.0, p.y() + 0.0, p.z() + 0.0};  // + 0.0 turns -0 into +0
      const auto [it, inserted] = index.emplace(key, static_cast<long>(kept.size()));
      if (inserted) kept.push_back(p);
      map[i] = it->second;
    }
    return map;
  }
  auto cell_of = [&](const Point& p) {
    std::array<std::int64_t, 3> cell;
    for (int k = 0; k < 3; ++k)
      cell[k] = static_cast<std::int64_t>(std::clamp(std::floor(p[k] / tolerance), -4.0e18, 4.0e18));
    return cell;
  };
  std::unordered_map<std::array<std::int64_t, 3>, std::vector<long>, CellHash> grid;
  for (size_t i = 0; i < points.size(); ++i) {
    const Point& p = points[i];
    const auto cell = cell_of(p);
    long best = -1;
    for (int dx = -1; dx <= 1; ++dx)
      for (int dy = -1; dy <= 1; ++dy)
        for (int dz = -1; dz <= 1; ++dz) {
          const auto it = grid.find({cell[0] + dx, cell[1] + dy, cell[2] + dz});
          if (it == grid.end()) continue;
          for (long candidate : it->second)
            if ((best < 0 || candidate < best) &&
                (kept[static_cast<size_t>(candidate)] - p).norm() <= tolerance)
              best = candidate;
        }
    if (best < 0) {
      best = static_cast<long>(kept.size());
      kept.push_back(p);
      grid[cell].push_back(best);
    }
    map[i] = best;
  }
  return map;
}

bool has_repeated_vertex(const Triangle& t) { return t[0] == t[1] || t[1] == t[2] || t[2] == t[0]; }

std::string plural(long n, const std::string& singular, const std::string& plural_form) {
  return fmt::format("{} {}", n, n == 1 ? singular : plural_form);
}

Mesh build_mesh(const std::string& path, const Soup& soup, const MeshReadOptions& options) {
  Mesh mesh;
  std::vector<Triangle> triangles;
  triangles.reserve(soup.polygons.size());
  long split = 0;
  for (size_t f = 0; f < soup.polygons.size(); ++f) {
    const auto& polygon = soup.polygons[f];
    if (polygon.size() == 3) {
      triangles.push_back({polygon[0], polygon[1], polygon[2]});
      continue;
    }
    if (!ear_clip(soup.points, polygon, triangles))
      throw mesh_error(
          path, fmt::format("face {} ({} vertices) cannot be split into triangles: it is degenerate or "
                            "overlaps itself",
                            f + 1, polygon.size()));
    ++split;
  }
  if (split > 0)
    mesh.notices.push_back(fmt::format("split {} into triangles", plural(split, "polygon", "polygons")));

  const std::string unit = to_string(options.unit);
  std::vector<Point> exact, welded;
  const std::vector<long> exact_map = weld(soup.points, 0.0, exact);
  std::vector<long> tolerance_map(exact.size());
  if (options.merge_tolerance > 0) {
    tolerance_map = weld(exact, options.merge_tolerance, welded);
  } else {
    for (size_t i = 0; i < exact.size(); ++i) tolerance_map[i] = static_cast<long>(i);
    welded = exact;
  }
  const long merged = soup.raw_vertex_entries - static_cast<long>(welded.size());
  if (merged > 0)
    mesh.notices.push_back(fmt::format("merged {} (tolerance {} {})",
                                       plural(merged, "duplicate vertex", "duplicate vertices"),
                                       options.merge_tolerance, unit));

  // A face that only the positive tolerance collapsed is a sliver the user asked to weld away; a face that
  // is degenerate as written is left for mesh_check to report.
  std::vector<Triangle> kept_faces;
  kept_faces.reserve(triangles.size());
  long collapsed = 0;
  for (const Triangle& t : triangles) {
    Triangle e, w;
    for (int k = 0; k < 3; ++k) {
      e[k] = exact_map[static_cast<size_t>(t[k])];
      w[k] = tolerance_map[static_cast<size_t>(e[k])];
    }
    if (has_repeated_vertex(w) && !has_repeated_vertex(e)) {
      ++collapsed;
      continue;
    }
    kept_faces.push_back(w);
  }
  if (collapsed > 0)
    mesh.notices.push_back(fmt::format("dropped {} collapsed by merging vertices within {} {}",
                                       plural(collapsed, "face", "faces"), options.merge_tolerance, unit));
  if (kept_faces.empty()) throw mesh_error(path, "no faces found");

  // Kept vertices stay in file order, so a welded file reads back with its own numbering.
  std::vector<long> renumber(welded.size(), -1);
  for (const Triangle& t : kept_faces)
    for (long v : t) renumber[static_cast<size_t>(v)] = 0;
  long used = 0;
  for (long& r : renumber)
    if (r == 0) r = used++;
  const long unused = static_cast<long>(welded.size()) - used;
  if (unused > 0)
    mesh.notices.push_back(
        fmt::format("dropped {} not used by any face", plural(unused, "vertex", "vertices")));

  const double scale = meters_per(options.unit);
  mesh.vertices.resize(used, 3);
  for (size_t i = 0; i < welded.size(); ++i)
    if (renumber[i] >= 0) mesh.vertices.row(renumber[i]) = scale * welded[i].transpose();
  mesh.faces.resize(static_cast<Eigen::Index>(kept_faces.size()), 3);
  for (size_t f = 0; f < kept_faces.size(); ++f)
    for (int k = 0; k < 3; ++k)
      mesh.faces(static_cast<Eigen::Index>(f), k) =
          static_cast<int>(renumber[static_cast<size_t>(kept_faces[f][k])]);
  return mesh;
}

}  // namespace

Mesh read_mesh(const std::string& path, const MeshReadOptions& options) {
  if (!(options.merge_tolerance >= 0) || !std::isfinite(options.merge_tolerance))
    throw ConventionError(
        fmt::format("merge tolerance must be finite and >= 0, got {}", options.merge_tolerance));
  check_file_read_budget(path);
  const std::string bytes = read_file(path);
  const std::string ext = lower_extension(path);
  if (ext != ".obj" && ext != ".off" && ext != ".ply" && ext != ".stl")
    throw mesh_error(path, "unknown mesh format '" + ext + "' (expected .obj, .off, .ply or .stl)");
  if (bytes.find_first_not_of(" \t\r\n") == std::string::npos) throw mesh_error(path, "file is empty");
  // The CGAL readers size arrays from declared counts before reading them: a lying file is refused here.
  check_mesh_file(path, bytes, ext);

  const Soup soup = ext == ".obj" ? parse_obj(path, bytes) : parse_with_cgal(path, bytes, ext);
  check_soup(path, soup);
  if (soup.polygons.empty()) throw mesh_error(path, "no faces found");
  if (soup.points.size() > static_cast<size_t>(std::numeric_limits<int>::max()))
    throw ResourceError(path + ": more vertices than a 32-bit face index can address");

  Mesh mesh = build_mesh(path, soup, options);
  mesh.source = path;
  mesh.unit = options.unit;
  mesh.checksum = sha256_hex(bytes);
  return mesh;
}

void write_obj(const Mesh& mesh, const std::string& path, LengthUnit unit) {
  const double scale = 1.0 / meters_per(unit);
  fmt::memory_buffer text;
  fmt::format_to(std::back_inserter(text), "# {} vertices ({}), {} triangles\n", mesh.vertices.rows(),
                 to_string(unit), mesh.faces.rows());
  for (Eigen::Index i = 0; i < mesh.vertices.rows(); ++i)
    fmt::format_to(std::back_inserter(text), "v {} {} {}\n", mesh.vertices(i, 0) * scale,
                   mesh.vertices(i, 1) * scale, mesh.vertices(i, 2) * scale);
  for (Eigen::Index f = 0; f < mesh.faces.rows(); ++f)
    fmt::format_to(std::back_inserter(text), "f {} {} {}\n", mesh.faces(f, 0) + 1, mesh.faces(f, 1) + 1,
                   mesh.faces(f, 2) + 1);

  write_file_atomically(path, fmt::to_string(text));
}

std::string sha256_file_hex(const std::string& path) { return sha256_hex(read_file(path)); }

}  // namespace polystokes
