#include "polystokes/mesh/mesh_check.h"

#include <CGAL/Exact_predicates_inexact_constructions_kernel.h>
#include <CGAL/box_intersection_d.h>
#include <fmt/format.h>

#include <Eigen/Geometry>
#include <algorithm>
#include <climits>
#include <cmath>
#include <cstdint>
#include <numeric>
#include <optional>

#include "internal/disjoint_sets.h"
#include "internal/parallel.h"
#include "mesh/self_intersections.h"
#include "polystokes/core/errors.h"
#include "polystokes/mesh/geometry.h"
#include "polystokes/mesh/mass_properties.h"
#include "polystokes/mesh/mesh_measures.h"

namespace polystokes {

namespace {

using Point = Eigen::Vector3d;

constexpr double kDegenerateAreaTolerance = 1e-12;  ///< relative to (bounding-box diagonal)^2
constexpr double kZeroVolumeTolerance = 1e-12;      ///< relative to (component bounding-box diagonal)^3

/// Counts offenders and keeps the description of the one with the lowest key (face or vertex number).
struct Tally {
  long count = 0;
  long best = LONG_MAX;
  std::string offender;
  template <class Describe>
  void add(long key, Describe describe) {
    ++count;
    if (key < best) {
      best = key;
      offender = describe();
    }
  }
  /// Adds the offenders of a tally over later keys' ranges (ties keep this one's, as one pass would).
  void merge(Tally&& later) {
    count += later.count;
    if (later.best < best) {
      best = later.best;
      offender = std::move(later.offender);
    }
  }
  MeshCheck result(const char* name) const { return {name, count == 0, count, offender, true}; }
};

/// One face's use of an edge: undirected key min/max, direction as the face runs it.
struct EdgeUse {
  std::uint64_t key;
  int face;
  int from, to;
};

/// Shared, lazily built views of the mesh for the individual checks.
class Context {
 public:
  explicit Context(const Mesh& mesh) : mesh(mesh) {}
  const Mesh& mesh;

  Point vertex(int v) const { return mesh.vertices.row(v).transpose(); }
  int corner(int f, int k) const { return mesh.faces(f, k); }
  int face_count() const { return static_cast<int>(mesh.faces.rows()); }

  /// Builds the corner lists (once); the per-vertex walks below need them.
  void prepare() { corners(); }
  int vertex_count() const { return static_cast<int>(offset_.size()) - 1; }

  /// Calls visit(uses, count) for every undirected edge whose lower vertex is `a`, in ascending order of the
  /// higher vertex, with the faces' uses of that edge sorted by face. The edges are gathered from the corners
  /// at `a`, so a walk over all vertices is linear in the faces; `uses` is the caller's scratch.
  template <class Visit>
  void edges_at(int a, std::vector<EdgeUse>& uses, Visit&& visit) const {
    uses.clear();
    for (int i = offset_[static_cast<size_t>(a)]; i < offset_[static_cast<size_t>(a) + 1]; ++i) {
      const int f = corners_[static_cast<size_t>(i)] / 3, k = corners_[static_cast<size_t>(i)] % 3;
      const int next = corner(f, (k + 1) % 3), prev = corner(f, (k + 2) % 3);
      // Each directed edge once: at its lower end, or for a loop (a, a) as it leaves a.
      if (next >= a) uses.push_back({key(a, next), f, a, next});
      if (prev > a) uses.push_back({key(a, prev), f, prev, a});
    }
    std::sort(uses.begin(), uses.end(), [](const EdgeUse& x, const EdgeUse& y) {
      return x.key != y.key ? x.key < y.key : x.face < y.face;
    });
    for (size_t b = 0; b < uses.size();) {
      size_t e = b + 1;
      while (e < uses.size() && uses[e].key == uses[b].key) ++e;
      visit(&uses[b], e - b);
      b = e;
    }
  }

  /// The corners (3 f + k, ascending) at vertex v.
  std::pair<const int*, int> corners_at(int v) const {
    const int first = offset_[static_cast<size_t>(v)];
    return {corners_.data() + first, offset_[static_cast<size_t>(v) + 1] - first};
  }

  /// Frees the corner lists once the topological checks are done.
  void release() {
    offset_ = {};
    corners_ = {};
  }

 private:
  static std::uint64_t key(int a, int b) {
    return static_cast<std::uint64_t>(std::min(a, b)) << 32 | static_cast<std::uint32_t>(std::max(a, b));
  }

  /// The corners at each vertex by a counting sort: 4 bytes per corner and per vertex.
  void corners() {
    if (!offset_.empty()) return;
    offset_.assign(static_cast<size_t>(mesh.vertices.rows()) + 1, 0);
    for (int f = 0; f < face_count(); ++f)
      for (int k = 0; k < 3; ++k) ++offset_[static_cast<size_t>(corner(f, k)) + 1];
    for (size_t v = 1; v < offset_.size(); ++v) offset_[v] += offset_[v - 1];
    corners_.resize(3 * static_cast<size_t>(face_count()));
    std::vector<int> fill(offset_.begin(), offset_.end() - 1);
    for (int f = 0; f < face_count(); ++f)
      for (int k = 0; k < 3; ++k)
        corners_[static_cast<size_t>(fill[static_cast<size_t>(corner(f, k))]++)] = 3 * f + k;
  }

  std::vector<int> offset_;   ///< corners of vertex v: corners_[offset_[v] .. offset_[v + 1])
  std::vector<int> corners_;  ///< 3 f + k, grouped by vertex, ascending within each
};

std::string edge_text(const EdgeUse& e) {
  return fmt::format("edge ({}, {}) of face {}", e.from, e.to, e.face);
}

MeshCheck check_valid_indices(Context& c) {
  const long vertices = c.mesh.vertices.rows();
  if (c.face_count() == 0) return {"valid_indices", false, 0, "the mesh has no faces", true};
  Tally tally;
  for (int f = 0; f < c.face_count(); ++f) {
    for (int k = 0; k < 3; ++k) {
      const int v = c.corner(f, k);
      if (v < 0 || v >= vertices) {
        tally.add(f, [&] { return fmt::format("face {} refers to vertex {} of {}", f, v, vertices); });
        break;
      }
    }
  }
  return tally.result("valid_indices");
}

MeshCheck check_finite(Context& c) {
  Tally tally;
  for (Eigen::Index v = 0; v < c.mesh.vertices.rows(); ++v) {
    if (!c.mesh.vertices.row(v).allFinite())
      tally.add(v, [&] {
        return fmt::format("vertex {} ({}, {}, {})", v, c.mesh.vertices(v, 0), c.mesh.vertices(v, 1),
                           c.mesh.vertices(v, 2));
      });
  }
  return tally.result("finite");
}

/// Zero-area faces, measured against the mesh size so that the test does not depend on the unit; a face
/// this small has a normal dominated by rounding and contributes nothing to volume integrals.
MeshCheck check_degenerate(Context& c) {
  const Point extent = c.mesh.vertices.colwise().maxCoeff() - c.mesh.vertices.colwise().minCoeff();
  const double threshold = kDegenerateAreaTolerance * extent.squaredNorm();
  Tally tally;
  for (int f = 0; f < c.face_count(); ++f) {
    const int a = c.corner(f, 0), b = c.corner(f, 1), d = c.corner(f, 2);
    const double area = 0.5 * (c.vertex(b) - c.vertex(a)).cross(c.vertex(d) - c.vertex(a)).norm();
    if (a == b || b == d || d == a || !(area > threshold))
      tally.add(
          f, [&] { return fmt::format("face {} (vertices {}, {}, {}, area {:.3g} m^2)", f, a, b, d, area); });
  }
  return tally.result("no_degenerate_faces");
}

/// The four topological checks, each a tally over the vertices (edges are visited at their lower vertex).
struct TopologyTallies {
  Tally closed, edge_manifold, vertex_manifold, consistently_oriented;

  void merge(TopologyTallies&& later) {
    closed.merge(std::move(later.closed));
    edge_manifold.merge(std::move(later.edge_manifold));
    vertex_manifold.merge(std::move(later.vertex_manifold));
    consistently_oriented.merge(std::move(later.consistently_oriented));
  }
};

/// Per-thread scratch of the topological walk.
struct TopologyScratch {
  std::vector<EdgeUse> uses;
  std::vector<int> link;
};

/// The edges at vertex a: closed (an edge of one face), edge-manifold (no more than two faces) and
/// consistently oriented (the two faces run their edge in opposite directions).
void tally_edges(const Context& c, int a, TopologyScratch& scratch, TopologyTallies& out) {
  c.edges_at(a, scratch.uses, [&](const EdgeUse* uses, size_t count) {
    if (count == 1) out.closed.add(uses[0].face, [&] { return edge_text(uses[0]); });
    if (count > 2)
      out.edge_manifold.add(uses[0].face, [&] {
        std::string faces;
        for (size_t i = 0; i < count && i < 4; ++i)
          faces += (i > 0 ? ", " : "") + std::to_string(uses[i].face);
        if (count > 4) faces += ", ...";
        return fmt::format("edge ({}, {}) shared by {} faces ({})", uses[0].from, uses[0].to, count, faces);
      });
    if (count == 2 && uses[0].from == uses[1].from)
      out.consistently_oriented.add(uses[0].face, [&] {
        return fmt::format("edge ({}, {}) of faces {} and {}", uses[0].from, uses[0].to, uses[0].face,
                           uses[1].face);
      });
  });
}

/// A vertex is manifold if the opposite edges of its faces (its link) form one connected chain.
void tally_vertex(const Context& c, int v, TopologyScratch& scratch, TopologyTallies& out) {
  const auto [corners, count] = c.corners_at(v);
  if (count == 0) return;
  auto next = [&](int i) { return c.corner(corners[i] / 3, (corners[i] % 3 + 1) % 3); };
  auto prev = [&](int i) { return c.corner(corners[i] / 3, (corners[i] % 3 + 2) % 3); };
  std::vector<int>& link = scratch.link;
  link.clear();
  for (int i = 0; i < count; ++i) {
    link.push_back(next(i));
    link.push_back(prev(i));
  }
  std::sort(link.begin(), link.end());
  link.erase(std::unique(link.begin(), link.end()), link.end());
  DisjointSets sets(link.size());
  auto position = [&](int u) {
    return static_cast<int>(std::lower_bound(link.begin(), link.end(), u) - link.begin());
  };
  for (int i = 0; i < count; ++i) sets.unite(position(next(i)), position(prev(i)));
  int fans = 0;
  for (size_t k = 0; k < link.size(); ++k) fans += sets.find(static_cast<int>(k)) == static_cast<int>(k);
  if (fans > 1)
    out.vertex_manifold.add(
        v, [&] { return fmt::format("vertex {} (its faces form {} separate fans)", v, fans); });
}

/// One walk over the vertices for all four topological checks, in blocks of vertices on the library's
/// threads; the blocks' tallies are merged in vertex order, so counts and named offenders are those of a
/// single pass whatever the thread count. Linear in the faces.
TopologyTallies check_topology(Context& c) {
  c.prepare();
  constexpr int kBlock = 16384;
  const int vertices = c.vertex_count();
  const size_t blocks = static_cast<size_t>((vertices + kBlock - 1) / kBlock);
  TopologyTallies total;
  ordered_blocks<TopologyScratch>(
      blocks, 0, 8,
      [&](size_t b, TopologyScratch& scratch) {
        TopologyTallies part;
        const int end = std::min(vertices, static_cast<int>(b + 1) * kBlock);
        for (int v = static_cast<int>(b) * kBlock; v < end; ++v) {
          tally_edges(c, v, scratch, part);
          tally_vertex(c, v, scratch, part);
        }
        return part;
      },
      [&](size_t, TopologyTallies&& part) { total.merge(std::move(part)); });
  return total;
}

MeshCheck check_self_intersections(Context& c) {
  // A face with a repeated vertex has no triangle to test (no_degenerate_faces names it).
  for (int f = 0; f < c.face_count(); ++f)
    if (c.corner(f, 0) == c.corner(f, 1) || c.corner(f, 1) == c.corner(f, 2) ||
        c.corner(f, 2) == c.corner(f, 0))
      return {"no_self_intersections", false, 0,
              fmt::format("not run: face {} cannot join a surface mesh", f), false};
  c.release();
  const FacePairs pairs = self_intersecting_pairs(c.mesh);
  if (pairs.count == 0) return {"no_self_intersections", true, 0, "", true};
  return {"no_self_intersections", false, pairs.count,
          fmt::format("faces {} and {} intersect", pairs.first, pairs.second), true};
}

struct Component {
  std::vector<int> faces;
  Eigen::AlignedBox3d box;
  double volume = 0;
};

struct OrientationResult {
  MeshCheck check;
  bool whole_mesh_inverted = false;
  double volume = 0;
};

/// Signed volumes (sum of tetrahedra from the component's box centre, which keeps the sum free of
/// cancellation for bodies far from the origin) and, for several components, the winding number of all
/// other components at a vertex of each: a face side is correct when the component's inner side has
/// winding number 1 and its outer side 0 (winding number: sum of solid angles / 4 pi).
OrientationResult check_outward(Context& c) {
  // Pieces joined at a vertex only were refused by vertex_manifold, so these are the edge-connected shells.
  const FaceComponents pieces = face_components(c.mesh);
  std::vector<Component> components(static_cast<size_t>(pieces.count));
  for (int f = 0; f < c.face_count(); ++f) {
    Component& part = components[static_cast<size_t>(pieces.label[static_cast<size_t>(f)])];
    part.faces.push_back(f);
    for (int k = 0; k < 3; ++k) part.box.extend(c.vertex(c.corner(f, k)));
  }
  OrientationResult out;
  for (Component& part : components) {
    part.volume = signed_volume(c.mesh, part.faces, part.box.center());
    out.volume += part.volume;
  }

  Tally tally;
  long inverted = 0;
  for (size_t i = 0; i < components.size(); ++i) {
    const Component& part = components[i];
    const int first = part.faces.front();
    const double diagonal = part.box.diagonal().norm();
    if (!(std::abs(part.volume) > kZeroVolumeTolerance * diagonal * diagonal * diagonal)) {
      tally.add(first, [&] {
        return fmt::format("component containing face {} encloses no volume ({:.6g} m^3)", first,
                           part.volume);
      });
      continue;
    }
    const Point p = c.vertex(c.corner(first, 0));
    double angle = 0;
    for (size_t j = 0; j < components.size(); ++j) {
      // A closed surface has winding number 0 outside its bounding box.
      if (j == i || !components[j].box.contains(p)) continue;
      for (int f : components[j].faces)
        angle += solid_angle(p, c.vertex(c.corner(f, 0)), c.vertex(c.corner(f, 1)), c.vertex(c.corner(f, 2)));
    }
    const long outer = std::lround(angle / (4.0 * std::acos(-1.0)));
    const long inner = outer + (part.volume > 0 ? 1 : -1);
    if (std::min(outer, inner) == 0 && std::max(outer, inner) == 1) continue;
    if (std::min(outer, inner) == -1 && std::max(outer, inner) == 0) ++inverted;
    tally.add(first, [&] {
      if (outer == 0 && inner == -1)
        return fmt::format("component containing face {} is inside-out (signed volume {:.6g} m^3)", first,
                           part.volume);
      if (inner == 2)
        return fmt::format("component containing face {} lies inside another body, so the solids overlap",
                           first);
      return fmt::format("component containing face {} bounds a region covered {} times (expected 0 or 1)",
                         first, inner);
    });
  }
  out.whole_mesh_inverted =
      tally.count > 0 && inverted == tally.count && inverted == static_cast<long>(components.size());
  out.check = tally.result("outward_oriented");
  if (out.whole_mesh_inverted)
    out.check.first_offender =
        fmt::format("the whole mesh is inside-out (signed volume {:.6g} m^3)", out.volume);
  return out;
}

/// Runs the checks in order. With `fix` (check_mesh, validate_mesh) reverses an inside-out mesh in place;
/// with `stop` (validate_mesh) throws at the first failure.
MeshCheckReport run_checks(const Mesh& mesh, Mesh* fix, bool stop) {
  Context context(mesh);
  MeshCheckReport report;
  auto passed = [&](const char* name) {
    for (const auto& check : report.checks)
      if (check.name == name) return check.passed;
    return false;
  };
  auto run = [&](const char* name, std::initializer_list<const char*> needs, auto&& check) {
    for (const char* need : needs)
      if (!passed(need)) {
        report.checks.push_back({name, false, 0, std::string("not run: needs '") + need + "'", false});
        return;
      }
    report.checks.push_back(check());
    const MeshCheck& done = report.checks.back();
    if (stop && !done.passed) throw check_failure(mesh, done);
  };
  run("valid_indices", {}, [&] { return check_valid_indices(context); });
  run("finite", {}, [&] { return check_finite(context); });
  run("no_degenerate_faces", {"valid_indices", "finite"}, [&] { return check_degenerate(context); });
  // The four topological checks share one walk; they are reported (and stop a validation) one by one.
  std::optional<TopologyTallies> topology;
  auto topological = [&](Tally TopologyTallies::*tally, const char* name) {
    if (!topology) topology = check_topology(context);
    return ((*topology).*tally).result(name);
  };
  run("closed", {"valid_indices"}, [&] { return topological(&TopologyTallies::closed, "closed"); });
  run("edge_manifold", {"valid_indices"},
      [&] { return topological(&TopologyTallies::edge_manifold, "edge_manifold"); });
  run("vertex_manifold", {"valid_indices"},
      [&] { return topological(&TopologyTallies::vertex_manifold, "vertex_manifold"); });
  run("consistently_oriented", {"valid_indices"},
      [&] { return topological(&TopologyTallies::consistently_oriented, "consistently_oriented"); });
  run("no_self_intersections", {"finite", "edge_manifold", "vertex_manifold", "consistently_oriented"},
      [&] { return check_self_intersections(context); });
  run("outward_oriented",
      {"finite", "closed", "edge_manifold", "vertex_manifold", "consistently_oriented",
       "no_self_intersections"},
      [&] {
        OrientationResult orientation = check_outward(context);
        report.signed_volume = orientation.volume;
        if (fix != nullptr && orientation.whole_mesh_inverted) {
          fix->faces.col(1).swap(fix->faces.col(2));
          report.flip_notice =
              fmt::format("reversed all {} faces: the mesh was inside-out (signed volume {:.6g} m^3)",
                          fix->faces.rows(), orientation.volume);
          fix->notices.push_back(report.flip_notice);
          report.flipped = true;
          report.signed_volume = -orientation.volume;
          return MeshCheck{"outward_oriented", true, 0, "", true};
        }
        return orientation.check;
      });
  return report;
}

}  // namespace

std::string describe(const MeshCheck& check) {
  if (!check.ran || check.passed || check.count == 0) return check.first_offender;
  struct Noun {
    const char* name;
    const char* one;
    const char* many;
  };
  static const Noun nouns[] = {
      {"valid_indices", "face with an index out of range", "faces with an index out of range"},
      {"finite", "vertex with a non-finite coordinate", "vertices with a non-finite coordinate"},
      {"no_degenerate_faces", "degenerate face", "degenerate faces"},
      {"closed", "border edge", "border edges"},
      {"edge_manifold", "edge shared by more than two faces", "edges shared by more than two faces"},
      {"vertex_manifold", "non-manifold vertex", "non-manifold vertices"},
      {"consistently_oriented", "edge run in the same direction by both its faces",
       "edges run in the same direction by both their faces"},
      {"no_self_intersections", "intersecting face pair", "intersecting face pairs"},
      {"outward_oriented", "wrongly oriented component", "wrongly oriented components"},
  };
  for (const Noun& noun : nouns)
    if (check.name == noun.name)
      return fmt::format("{} {}, first {}", check.count, check.count == 1 ? noun.one : noun.many,
                         check.first_offender);
  return fmt::format("{} offenders, first {}", check.count, check.first_offender);
}

MeshCheckReport inspect_mesh(const Mesh& mesh) { return run_checks(mesh, nullptr, false); }

MeshCheckReport check_mesh(Mesh& mesh) { return run_checks(mesh, &mesh, false); }

MeshCheckReport validate_mesh(Mesh& mesh) { return run_checks(mesh, &mesh, true); }

const MeshCheck* first_failure(const MeshCheckReport& report) {
  for (const auto& check : report.checks)
    if (!check.passed) return &check;
  return nullptr;
}

MeshError check_failure(const Mesh& mesh, const MeshCheck& check) {
  return mesh_error(mesh.source.empty() ? std::string("mesh") : mesh.source,
                    fmt::format("mesh check '{}' failed: {}", check.name, describe(check)));
}

namespace {

/// Face pairs (face of `inner`, face of `outer`) whose closed triangles share a point: CGAL's box
/// intersection filter (Zomorodian & Edelsbrunner 2002, "Fast software for box intersections", Int. J.
/// Comput. Geom. Appl. 12) and the exact triangle-triangle predicate of the EPICK kernel (Guigue & Devillers
/// 2003, "Fast and robust triangle-triangle overlap test using orientation predicates", J. Graphics Tools 8).
/// Returns the count and keeps the pair with the lowest inner face (then outer face).
std::pair<long, std::pair<int, int>> touching_faces(const Mesh& inner, const Mesh& outer) {
  using Kernel = CGAL::Exact_predicates_inexact_constructions_kernel;
  using Box = CGAL::Box_intersection_d::Box_with_info_d<double, 3, int>;
  auto triangle = [](const Mesh& mesh, int f) {
    auto point = [&](int k) {
      const int v = mesh.faces(f, k);
      return Kernel::Point_3(mesh.vertices(v, 0), mesh.vertices(v, 1), mesh.vertices(v, 2));
    };
    return Kernel::Triangle_3(point(0), point(1), point(2));
  };
  auto boxes = [&](const Mesh& mesh) {
    std::vector<Box> out;
    out.reserve(static_cast<size_t>(mesh.faces.rows()));
    for (int f = 0; f < static_cast<int>(mesh.faces.rows()); ++f)
      out.emplace_back(triangle(mesh, f).bbox(), f);
    return out;
  };
  std::vector<Box> inner_boxes = boxes(inner), outer_boxes = boxes(outer);
  long count = 0;
  std::pair<int, int> first{INT_MAX, INT_MAX};
  CGAL::box_intersection_d(inner_boxes.begin(), inner_boxes.end(), outer_boxes.begin(), outer_boxes.end(),
                           [&](const Box& a, const Box& b) {
                             if (!CGAL::do_intersect(triangle(inner, a.info()), triangle(outer, b.info())))
                               return;
                             ++count;
                             first = std::min(first, std::make_pair(a.info(), b.info()));
                           });
  return {count, first};
}

}  // namespace

void check_regions(const std::vector<DensityRegion>& regions) {
  if (regions.empty()) return;
  const Mesh& body = regions.front().mesh;
  if (!(regions.front().density.constant() > 0))
    throw mesh_error(body.source,
                     fmt::format("the first region is the body and needs a positive density, got "
                                 "{} kg/m^3",
                                 regions.front().density.constant()));
  for (size_t r = 1; r < regions.size(); ++r) {
    if (!(regions[r].density.constant() < 0)) continue;
    const Mesh& part = regions[r].mesh;
    const std::string what =
        fmt::format("region {} (density {} kg/m^3) must lie inside the first mesh {}, but", r + 1,
                    regions[r].density.constant(), body.source);
    const auto [count, pair] = touching_faces(part, body);
    if (count > 0)
      throw mesh_error(part.source,
                       fmt::format("{} its face {} touches or crosses face {} of {} ({} face pair{} in all)",
                                   what, pair.first, pair.second, body.source, count, count == 1 ? "" : "s"));
    // The surfaces are apart, so each piece of the region is wholly inside or wholly outside the body.
    const FaceComponents pieces = face_components(part);
    std::vector<bool> tested(static_cast<size_t>(pieces.count), false);
    for (int f = 0; f < static_cast<int>(part.faces.rows()); ++f) {
      const auto piece = static_cast<size_t>(pieces.label[static_cast<size_t>(f)]);
      if (tested[piece]) continue;
      tested[piece] = true;
      const int v = part.faces(f, 0);
      const Eigen::Vector3d p = part.vertices.row(v).transpose();
      if (std::lround(winding_number(body, p)) != 1)
        throw mesh_error(part.source,
                         fmt::format("{} its vertex {} ({:.9g}, {:.9g}, {:.9g}) m lies outside {}", what, v,
                                     p.x(), p.y(), p.z(), body.source));
    }
  }
}

}  // namespace polystokes
