#include "polystokes/io/mesh_io.h"

#include <fmt/format.h>
#include <fmt/ranges.h>
#include <openssl/evp.h>

#include <Eigen/Geometry>
#include <algorithm>
#include <array>
#include <cmath>
#include <cstdint>
#include <cstring>
#include <filesystem>
#include <limits>
#include <string_view>
#include <unordered_map>

#include "internal/memory_budget.h"
#include "io/file_bytes.h"
#include "io/mesh_format_registry.h"
#include "polystokes/core/errors.h"
#include "polystokes/io/output_file.h"

namespace polystokes {

namespace {

using Point = Eigen::Vector3d;
using Triangle = std::array<int, 3>;

}  // namespace

std::string sha256_hex(std::string_view bytes) {
  unsigned char digest[EVP_MAX_MD_SIZE];
  unsigned int length = 0;
  if (EVP_Digest(bytes.data(), bytes.size(), digest, &length, EVP_sha256(), nullptr) != 1)
    throw ResourceError("OpenSSL SHA-256 digest failed");
  std::string hex;
  hex.reserve(2 * length);
  for (unsigned int i = 0; i < length; ++i) hex += fmt::format("{:02x}", digest[i]);
  return hex;
}

namespace {

std::string lower_extension(const std::string& path) {
  std::string ext = std::filesystem::path(path).extension().string();
  std::transform(ext.begin(), ext.end(), ext.begin(), [](unsigned char c) { return std::tolower(c); });
  return ext;
}

/// Refuses what no reader may hand on: a non-finite coordinate (binary formats store them) or a polygon of
/// fewer than three corners.
void check_soup(const std::string& path, const PolygonSoup& soup) {
  const std::int64_t n = soup.vertex_count();
  for (std::int64_t i = 0; i < n; ++i) {
    const double* p = &soup.coordinates[static_cast<size_t>(3 * i)];
    if (!std::isfinite(p[0]) || !std::isfinite(p[1]) || !std::isfinite(p[2]))
      throw format_error(path, 0,
                         fmt::format("vertex {} of {} has a non-finite coordinate ({}, {}, {})", i + 1, n,
                                     p[0], p[1], p[2]));
  }
  const std::int64_t faces = soup.polygon_count();
  for (std::int64_t f = 0; f < faces; ++f) {
    const std::int64_t size = soup.offsets[static_cast<size_t>(f + 1)] - soup.offsets[static_cast<size_t>(f)];
    if (size < 3)
      throw format_error(
          path, 0, fmt::format("face {} of {} has {} vertices, a face needs at least 3", f + 1, faces, size));
  }
}

/// Splits polygon `corners` (vertex numbers into `xyz`) into triangles by ear clipping in 2-D, projected
/// along the dominant axis of its Newell normal (which also fixes the polygon's winding there). An ear must
/// turn strictly left and contain no other polygon vertex (boundary included), so no zero-area triangles are
/// made. Returns false if no such decomposition is found (self-overlapping or degenerate polygon). O(n^3)
/// worst case in the polygon size, which is fine for the small polygons of shape files.
bool ear_clip(const std::vector<double>& xyz, const int* corners, size_t n, std::vector<Triangle>& out) {
  auto point = [&](size_t i) { return Point(xyz.data() + 3 * static_cast<size_t>(corners[i])); };
  Point normal = Point::Zero();
  for (size_t i = 0; i < n; ++i) normal += point(i).cross(point((i + 1) % n));
  Eigen::Index axis;
  const double dominant = normal.cwiseAbs().maxCoeff(&axis);
  if (!(dominant > 0)) return false;
  // (u, v) axes chosen so that the polygon runs counter-clockwise in the projection.
  int u = (static_cast<int>(axis) + 1) % 3, v = (static_cast<int>(axis) + 2) % 3;
  if (normal[axis] < 0) std::swap(u, v);
  std::vector<std::array<double, 2>> q(n);
  for (size_t i = 0; i < n; ++i) q[i] = {point(i)[u], point(i)[v]};
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
      out.push_back({corners[a], corners[b], corners[c]});
      ring.erase(ring.begin() + static_cast<std::ptrdiff_t>(k));
      clipped = true;
    }
    if (!clipped) return false;
  }
  if (!(cross(ring[0], ring[1], ring[2]) > 0)) return false;
  out.push_back({corners[ring[0]], corners[ring[1]], corners[ring[2]]});
  return true;
}

std::uint64_t mix(std::uint64_t h) {  // the splitmix64 finaliser (Steele, Lea, Flood 2014)
  h ^= h >> 30;
  h *= 0xbf58476d1ce4e5b9ULL;
  h ^= h >> 27;
  h *= 0x94d049bb133111ebULL;
  return h ^ (h >> 31);
}

/// Maps every point of `xyz` to the first point bitwise equal to it (with -0 == +0) and lists those first
/// points in file order in `kept`. Open addressing over a power-of-two table at most half full: O(n).
std::vector<int> weld_exact(const std::vector<double>& xyz, std::vector<int>& kept) {
  const size_t n = xyz.size() / 3;
  std::vector<int> map(n);
  size_t slots = 16;
  while (slots < 2 * n) slots *= 2;
  std::vector<int> table(slots, -1);
  kept.clear();
  auto bits = [&](size_t i, int k) {
    const double x = xyz[3 * i + static_cast<size_t>(k)] + 0.0;  // + 0.0 turns -0 into +0
    std::uint64_t b;
    std::memcpy(&b, &x, 8);
    return b;
  };
  for (size_t i = 0; i < n; ++i) {
    const std::uint64_t key[3] = {bits(i, 0), bits(i, 1), bits(i, 2)};
    size_t slot = mix(key[0] ^ mix(key[1] ^ mix(key[2]))) & (slots - 1);
    for (;; slot = (slot + 1) & (slots - 1)) {
      const int held = table[slot];
      if (held < 0) {
        table[slot] = static_cast<int>(kept.size());
        map[i] = static_cast<int>(kept.size());
        kept.push_back(static_cast<int>(i));
        break;
      }
      const size_t j = static_cast<size_t>(kept[static_cast<size_t>(held)]);
      if (bits(j, 0) == key[0] && bits(j, 1) == key[1] && bits(j, 2) == key[2]) {
        map[i] = held;
        break;
      }
    }
  }
  return map;
}

/// Maps every point to a kept point: the first earlier kept point at distance <= tolerance, else itself;
/// a uniform grid with cell size = tolerance.
std::vector<int> weld_within(const std::vector<Point>& points, double tolerance, std::vector<Point>& kept) {
  std::vector<int> map(points.size());
  kept.clear();
  struct CellHash {
    size_t operator()(const std::array<std::int64_t, 3>& k) const {
      return static_cast<size_t>(
          mix(static_cast<std::uint64_t>(k[0]) ^
              mix(static_cast<std::uint64_t>(k[1]) ^ mix(static_cast<std::uint64_t>(k[2])))));
    }
  };
  auto cell_of = [&](const Point& p) {
    std::array<std::int64_t, 3> cell;
    for (int k = 0; k < 3; ++k)
      cell[k] = static_cast<std::int64_t>(std::clamp(std::floor(p[k] / tolerance), -4.0e18, 4.0e18));
    return cell;
  };
  std::unordered_map<std::array<std::int64_t, 3>, std::vector<int>, CellHash> grid;
  for (size_t i = 0; i < points.size(); ++i) {
    const Point& p = points[i];
    const auto cell = cell_of(p);
    int best = -1;
    for (int dx = -1; dx <= 1; ++dx)
      for (int dy = -1; dy <= 1; ++dy)
        for (int dz = -1; dz <= 1; ++dz) {
          const auto it = grid.find({cell[0] + dx, cell[1] + dy, cell[2] + dz});
          if (it == grid.end()) continue;
          for (int candidate : it->second)
            if ((best < 0 || candidate < best) &&
                (kept[static_cast<size_t>(candidate)] - p).norm() <= tolerance)
              best = candidate;
        }
    if (best < 0) {
      best = static_cast<int>(kept.size());
      kept.push_back(p);
      grid[cell].push_back(best);
    }
    map[i] = best;
  }
  return map;
}

bool has_repeated_vertex(const Triangle& t) { return t[0] == t[1] || t[1] == t[2] || t[2] == t[0]; }

std::string plural(std::int64_t n, const std::string& singular, const std::string& plural_form) {
  return fmt::format("{} {}", n, n == 1 ? singular : plural_form);
}

Mesh build_mesh(const std::string& path, const PolygonSoup& soup, const MeshReadOptions& options) {
  Mesh mesh;
  std::vector<Triangle> triangles;
  triangles.reserve(static_cast<size_t>(soup.polygon_count()));
  std::int64_t split = 0;
  for (std::int64_t f = 0; f < soup.polygon_count(); ++f) {
    const size_t begin = static_cast<size_t>(soup.offsets[static_cast<size_t>(f)]);
    const size_t size = static_cast<size_t>(soup.offsets[static_cast<size_t>(f + 1)]) - begin;
    const int* corners = soup.corners.data() + begin;
    if (size == 3) {
      triangles.push_back({corners[0], corners[1], corners[2]});
      continue;
    }
    if (!ear_clip(soup.coordinates, corners, size, triangles))
      throw mesh_error(path,
                       fmt::format("face {} ({} vertices) cannot be split into triangles: it is degenerate "
                                   "or overlaps itself",
                                   f + 1, size));
    ++split;
  }
  if (split > 0)
    mesh.notices.push_back(fmt::format("split {} into triangles", plural(split, "polygon", "polygons")));

  const std::string unit = to_string(options.unit);
  std::vector<int> first;  // the file's point number of each exactly welded point
  const std::vector<int> exact_map = weld_exact(soup.coordinates, first);
  std::vector<Point> exact(first.size()), welded;
  for (size_t i = 0; i < first.size(); ++i) exact[i] = Point(soup.coordinates.data() + 3 * size_t(first[i]));
  std::vector<int> tolerance_map;
  if (options.merge_tolerance > 0)
    tolerance_map = weld_within(exact, options.merge_tolerance, welded);
  else
    welded = std::move(exact);
  const std::int64_t merged = soup.vertex_count() - static_cast<std::int64_t>(welded.size());
  if (merged > 0)
    mesh.notices.push_back(fmt::format("merged {} (tolerance {} {})",
                                       plural(merged, "duplicate vertex", "duplicate vertices"),
                                       options.merge_tolerance, unit));

  // A face that only the positive tolerance collapsed is a sliver the user asked to weld away; a face that
  // is degenerate as written is left for mesh_check to report.
  size_t kept_faces = 0;
  std::int64_t collapsed = 0;
  for (const Triangle& t : triangles) {
    Triangle e, w;
    for (int k = 0; k < 3; ++k) {
      e[k] = exact_map[static_cast<size_t>(t[k])];
      w[k] = tolerance_map.empty() ? e[k] : tolerance_map[static_cast<size_t>(e[k])];
    }
    if (has_repeated_vertex(w) && !has_repeated_vertex(e)) {
      ++collapsed;
      continue;
    }
    triangles[kept_faces++] = w;
  }
  triangles.resize(kept_faces);
  if (collapsed > 0)
    mesh.notices.push_back(fmt::format("dropped {} collapsed by merging vertices within {} {}",
                                       plural(collapsed, "face", "faces"), options.merge_tolerance, unit));
  if (triangles.empty()) throw mesh_error(path, "no faces found");

  // Kept vertices stay in file order, so a welded file reads back with its own numbering.
  std::vector<int> renumber(welded.size(), -1);
  for (const Triangle& t : triangles)
    for (int v : t) renumber[static_cast<size_t>(v)] = 0;
  int used = 0;
  for (int& r : renumber)
    if (r == 0) r = used++;
  const std::int64_t unused = static_cast<std::int64_t>(welded.size()) - used;
  if (unused > 0)
    mesh.notices.push_back(
        fmt::format("dropped {} not used by any face", plural(unused, "vertex", "vertices")));

  const double scale = meters_per(options.unit);
  mesh.vertices.resize(used, 3);
  for (size_t i = 0; i < welded.size(); ++i)
    if (renumber[i] >= 0) mesh.vertices.row(renumber[i]) = scale * welded[i].transpose();
  mesh.faces.resize(static_cast<Eigen::Index>(triangles.size()), 3);
  for (size_t f = 0; f < triangles.size(); ++f)
    for (int k = 0; k < 3; ++k)
      mesh.faces(static_cast<Eigen::Index>(f), k) = renumber[static_cast<size_t>(triangles[f][k])];
  return mesh;
}

const MeshFormatEntry& format_entry(const std::string& path, const std::string& requested) {
  const auto& table = mesh_format_table();
  if (!requested.empty()) {
    for (const auto& entry : table)
      if (requested == entry.name) return entry;
    throw ConventionError(
        fmt::format("unknown mesh format '{}' (known: {})", requested, fmt::join(mesh_format_names(), ", ")));
  }
  const std::string ext = lower_extension(path);
  for (const auto& entry : table) {
    std::string_view extensions = entry.extensions;
    while (!ext.empty() && !extensions.empty()) {
      const size_t blank = std::min(extensions.find(' '), extensions.size());
      if (extensions.substr(0, blank) == std::string_view(ext).substr(1)) return entry;
      extensions.remove_prefix(std::min(blank + 1, extensions.size()));
    }
  }
  throw mesh_error(path, fmt::format("unknown mesh format '{}': give the format with --format ({})", ext,
                                     fmt::join(mesh_format_names(), ", ")));
}

}  // namespace

std::vector<std::string> mesh_format_names() {
  std::vector<std::string> names;
  for (const auto& entry : mesh_format_table()) names.emplace_back(entry.name);
  return names;
}

std::string mesh_format_of(const std::string& path, const std::string& requested) {
  return format_entry(path, requested).name;
}

Mesh read_mesh(const std::string& path, const MeshReadOptions& options) {
  if (!(options.merge_tolerance >= 0) || !std::isfinite(options.merge_tolerance))
    throw ConventionError(
        fmt::format("merge tolerance must be finite and >= 0, got {}", options.merge_tolerance));
  // A file that cannot be read says so first, whatever its name, as every other input of every command does.
  check_file_read_budget(path);
  FileBytes file(path);
  const std::string_view bytes = file.view();
  const MeshFormatEntry& format = format_entry(path, options.format);
  if (bytes.find_first_not_of(" \t\r\n") == std::string_view::npos) throw mesh_error(path, "file is empty");
  const std::string checksum = sha256_hex(bytes);
  const size_t file_size = bytes.size();

  PolygonSoup soup;
  format.read(path, bytes, soup);
  // The file's bytes are not needed once parsed; releasing them before welding lowers the peak by the
  // file's size.
  file.release();
  check_soup(path, soup);
  if (soup.polygon_count() == 0) throw mesh_error(path, "no faces found");
  require_memory(mesh_read_bytes(static_cast<double>(file_size), static_cast<double>(soup.vertex_count()),
                                 static_cast<double>(soup.polygon_count())),
                 fmt::format("{}: reading and checking {} faces", path, soup.polygon_count()));

  Mesh mesh = build_mesh(path, soup, options);
  mesh.source = path;
  mesh.unit = options.unit;
  mesh.format = format.name;
  mesh.checksum = checksum;
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

std::string sha256_file_hex(const std::string& path) { return sha256_hex(FileBytes(path).view()); }

}  // namespace polystokes
