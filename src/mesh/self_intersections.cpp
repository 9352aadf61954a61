#include "mesh/self_intersections.h"

#include <CGAL/Exact_predicates_inexact_constructions_kernel.h>
#include <CGAL/intersections.h>

#include <Eigen/Geometry>
#include <algorithm>
#include <array>
#include <cmath>
#include <cstdint>
#include <cstring>
#include <limits>
#include <vector>

#include "internal/parallel.h"
#include "mesh/face_order.h"

namespace polystokes {

namespace {

using Kernel = CGAL::Exact_predicates_inexact_constructions_kernel;
using Point3 = Kernel::Point_3;

/// Closed axis-aligned box in single precision, rounded outward so that it contains the exact box of its
/// face: the filter may propose more pairs than the double boxes would, never fewer.
struct Box {
  std::array<float, 3> lo{std::numeric_limits<float>::infinity(), std::numeric_limits<float>::infinity(),
                          std::numeric_limits<float>::infinity()};
  std::array<float, 3> hi{-std::numeric_limits<float>::infinity(), -std::numeric_limits<float>::infinity(),
                          -std::numeric_limits<float>::infinity()};

  void extend(const Box& other) {
    for (int c = 0; c < 3; ++c) {
      lo[c] = std::min(lo[c], other.lo[c]);
      hi[c] = std::max(hi[c], other.hi[c]);
    }
  }
};

bool overlap(const Box& a, const Box& b) {
  return a.lo[0] <= b.hi[0] && b.lo[0] <= a.hi[0] && a.lo[1] <= b.hi[1] && b.lo[1] <= a.hi[1] &&
         a.lo[2] <= b.hi[2] && b.lo[2] <= a.hi[2];
}

/// The next float towards minus infinity (finite f).
float float_below(float f) {
  if (f == 0) return -std::numeric_limits<float>::denorm_min();
  std::uint32_t bits;
  std::memcpy(&bits, &f, sizeof bits);
  bits = f > 0 ? bits - 1 : bits + 1;
  std::memcpy(&f, &bits, sizeof f);
  return f;
}

float round_down(double x) {
  const auto f = static_cast<float>(x);
  return static_cast<double>(f) > x ? float_below(f) : f;
}

float round_up(double x) { return -round_down(-x); }

/// Lowest intersecting pair and count of one task, merged by sum and minimum (order-free, so the result
/// does not depend on the thread count).
struct Found {
  long count = 0;
  std::uint64_t first = std::numeric_limits<std::uint64_t>::max();  // first << 32 | second
  void add(int f, int g) {
    ++count;
    const auto lo = static_cast<std::uint64_t>(std::min(f, g)),
               hi = static_cast<std::uint64_t>(std::max(f, g));
    first = std::min(first, lo << 32 | hi);
  }
};

class Search {
 public:
  explicit Search(const Mesh& mesh) : mesh_(mesh) {
    sort_faces();
    build_tree();
  }

  FacePairs run() {
    // The descent to kTaskDepth is done here; what lies below each node (pair) there is one task.
    std::vector<Task> tasks;
    if (!order_.empty()) self(1, 0, nullptr, &tasks);
    std::vector<Found> found(tasks.size());
    parallel_for(tasks.size(), 0, [&](size_t t) {
      const Task& task = tasks[t];
      if (task.self)
        self(task.a, kTaskDepth, &found[t], nullptr);
      else
        cross(task.a, task.b, kTaskDepth, &found[t], nullptr);
    });
    Found all;
    for (const Found& part : found) {
      all.count += part.count;
      all.first = std::min(all.first, part.first);
    }
    if (all.count == 0) return {};
    return {all.count, static_cast<int>(all.first >> 32), static_cast<int>(all.first & 0xffffffffu)};
  }

 private:
  static constexpr int kLeafFaces = 8;
  static constexpr int kTaskDepth = 6;  ///< tree depth at which the work is split into parallel tasks

  /// Pairs under one node (self) or under two nodes of the same depth (cross).
  struct Task {
    bool self;
    size_t a, b;
  };

  Point3 point(int v) const {
    return Point3(mesh_.vertices(v, 0), mesh_.vertices(v, 1), mesh_.vertices(v, 2));
  }

  /// False when the corners of a face are certainly not collinear: a component of the edge cross product,
  /// computed in double, exceeds its rounding error bound (well below 1e-14 L^2 for coordinate
  /// differences up to L); the rare faces left get CGAL's exact test.
  bool maybe_collinear(int a, int b, int c) const {
    const Eigen::Vector3d p = mesh_.vertices.row(a).transpose();
    const Eigen::Vector3d u = mesh_.vertices.row(b).transpose() - p,
                          v = mesh_.vertices.row(c).transpose() - p;
    const double scale = std::max(u.cwiseAbs().maxCoeff(), v.cwiseAbs().maxCoeff());
    return !(u.cross(v).cwiseAbs().maxCoeff() > 1e-14 * scale * scale);
  }

  /// Non-collinear faces in Morton order of their centroids (face_order.h): neighbours in this order are
  /// neighbours in space, so consecutive runs make tight leaves.
  void sort_faces() {
    const auto faces = static_cast<int>(mesh_.faces.rows());
    std::vector<char> collinear(static_cast<size_t>(faces), 0);
    parallel_for(chunks(static_cast<size_t>(faces)), 0, [&](size_t chunk) {
      for (int f = static_cast<int>(chunk * kChunk);
           f < std::min(faces, static_cast<int>((chunk + 1) * kChunk)); ++f) {
        const int a = mesh_.faces(f, 0), b = mesh_.faces(f, 1), c = mesh_.faces(f, 2);
        collinear[static_cast<size_t>(f)] =
            maybe_collinear(a, b, c) && CGAL::collinear(point(a), point(b), point(c));
      }
    });
    order_ = morton_face_order(mesh_, collinear);
    collinear = {};
    boxes_.resize(order_.size());
    parallel_for(chunks(order_.size()), 0, [&](size_t chunk) {
      for (size_t i = chunk * kChunk; i < std::min(order_.size(), (chunk + 1) * kChunk); ++i) {
        const int f = order_[i];
        Box& box = boxes_[i];
        for (int axis = 0; axis < 3; ++axis) {
          const double x = mesh_.vertices(mesh_.faces(f, 0), axis),
                       y = mesh_.vertices(mesh_.faces(f, 1), axis),
                       z = mesh_.vertices(mesh_.faces(f, 2), axis);
          box.lo[axis] = round_down(std::min({x, y, z}));
          box.hi[axis] = round_up(std::max({x, y, z}));
        }
      }
    });
  }

  static constexpr size_t kChunk = 4096;  ///< faces per parallel work item of the per-face loops
  static size_t chunks(size_t count) { return (count + kChunk - 1) / kChunk; }

  /// A complete binary tree in heap layout (root 1, children 2i and 2i+1) over leaves of kLeafFaces
  /// consecutive faces; leaves past the last face hold empty boxes, which overlap nothing.
  void build_tree() {
    const size_t leaves = (order_.size() + kLeafFaces - 1) / kLeafFaces;
    first_leaf_ = 1;
    while (first_leaf_ < leaves) first_leaf_ *= 2;
    nodes_.assign(2 * first_leaf_, Box{});
    for (size_t i = 0; i < order_.size(); ++i) nodes_[first_leaf_ + i / kLeafFaces].extend(boxes_[i]);
    for (size_t node = first_leaf_ - 1; node >= 1; --node) {
      nodes_[node] = nodes_[2 * node];
      nodes_[node].extend(nodes_[2 * node + 1]);
    }
  }

  bool is_leaf(size_t node) const { return node >= first_leaf_; }

  /// Positions [begin, end) in the sorted order covered by a leaf.
  std::pair<size_t, size_t> leaf_range(size_t node) const {
    const size_t begin = (node - first_leaf_) * kLeafFaces;
    return {std::min(begin, order_.size()), std::min(begin + kLeafFaces, order_.size())};
  }

  /// Pairs within the subtree of `node`: into `found`, or, at kTaskDepth when `tasks` is given, listed there
  /// as a task.
  void self(size_t node, int depth, Found* found, std::vector<Task>* tasks) {
    if (tasks != nullptr && (depth == kTaskDepth || is_leaf(node))) {
      tasks->push_back({true, node, node});
      return;
    }
    if (is_leaf(node)) {
      const auto [begin, end] = leaf_range(node);
      for (size_t i = begin; i < end; ++i)
        for (size_t j = i + 1; j < end; ++j) test(i, j, *found);
      return;
    }
    self(2 * node, depth + 1, found, tasks);
    self(2 * node + 1, depth + 1, found, tasks);
    cross(2 * node, 2 * node + 1, depth + 1, found, tasks);
  }

  /// Pairs with one face under `a` and one under `b` (disjoint subtrees of the same depth), as self.
  void cross(size_t a, size_t b, int depth, Found* found, std::vector<Task>* tasks) {
    if (!overlap(nodes_[a], nodes_[b])) return;
    if (tasks != nullptr && (depth == kTaskDepth || is_leaf(a))) {
      tasks->push_back({false, a, b});
      return;
    }
    if (is_leaf(a)) {
      const size_t b_begin = leaf_range(b).first, b_end = leaf_range(b).second;
      for (size_t i = leaf_range(a).first; i < leaf_range(a).second; ++i)
        if (overlap(boxes_[i], nodes_[b]))
          for (size_t j = b_begin; j < b_end; ++j) test(i, j, *found);
      return;
    }
    for (const size_t x : {2 * a, 2 * a + 1})
      for (const size_t y : {2 * b, 2 * b + 1}) cross(x, y, depth + 1, found, tasks);
  }

  void test(size_t i, size_t j, Found& found) const {
    if (!overlap(boxes_[i], boxes_[j])) return;
    if (faces_meet(order_[i], order_[j])) found.add(order_[i], order_[j]);
  }

  /// Whether faces f and g meet in more than what they share. Shared elements are found by vertex index,
  /// as the halfedge structure of CGAL's own self-intersection test finds them, with the same geometric
  /// tests (Polygon_mesh_processing/self_intersections.h, CGAL 5.5); the triangle tests are Guigue &
  /// Devillers (2003), "Fast and robust triangle-triangle overlap test using orientation predicates",
  /// J. Graphics Tools 8(1), on exact orientation predicates.
  bool faces_meet(int f, int g) const {
    const std::array<int, 3> a{mesh_.faces(f, 0), mesh_.faces(f, 1), mesh_.faces(f, 2)};
    const std::array<int, 3> b{mesh_.faces(g, 0), mesh_.faces(g, 1), mesh_.faces(g, 2)};
    auto in_b = [&](int v) { return v == b[0] || v == b[1] || v == b[2]; };
    const int shared = int(in_b(a[0])) + int(in_b(a[1])) + int(in_b(a[2]));
    if (shared >= 2) {
      // The shared edge (p, q); r and s the corners off it. Two triangles on one edge meet elsewhere only
      // if they lie in one plane with r and s on the same side of the edge.
      int i = 0;
      while (!(in_b(a[i]) && in_b(a[(i + 1) % 3]))) ++i;
      const int p = a[i], q = a[(i + 1) % 3], r = a[(i + 2) % 3];
      int k = 0;
      while (b[k] == p || b[k] == q) ++k;
      if (Plane(*this, p, q, r).side(b[k]) != CGAL::COPLANAR) return false;
      return CGAL::coplanar_orientation(point(p), point(q), point(r), point(b[k])) == CGAL::POSITIVE;
    }
    if (shared == 1) {
      // The intersection of two triangles is convex: it holds more than the shared vertex exactly when an
      // edge opposite that vertex meets the other triangle. Most such pairs are neighbours around a vertex
      // whose opposite edge lies strictly on one side of the other triangle's plane.
      int i = 0, j = 0;
      while (!in_b(a[i])) ++i;
      while (b[j] != a[i]) ++j;
      auto edge_meets = [&](const std::array<int, 3>& t, int x, int y) {
        const Plane plane(*this, t[0], t[1], t[2]);
        const CGAL::Orientation side = plane.side(x);
        if (side != CGAL::COPLANAR && side == plane.side(y)) return false;
        return CGAL::do_intersect(Kernel::Triangle_3(point(t[0]), point(t[1]), point(t[2])),
                                  Kernel::Segment_3(point(x), point(y)));
      };
      return edge_meets(a, b[(j + 1) % 3], b[(j + 2) % 3]) || edge_meets(b, a[(i + 1) % 3], a[(i + 2) % 3]);
    }
    return CGAL::do_intersect(Kernel::Triangle_3(point(a[0]), point(a[1]), point(a[2])),
                              Kernel::Triangle_3(point(b[0]), point(b[1]), point(b[2])));
  }

  /// The plane through vertices p, q, r, for the side of further vertices as CGAL::orientation gives it:
  /// the determinant evaluated in double (normal once, then one dot product per vertex) and trusted when it
  /// exceeds Shewchuk's bound on its rounding error (Shewchuk 1997, "Adaptive precision floating-point
  /// arithmetic and fast robust geometric predicates", Discrete Comput. Geom. 18, o3derrboundA, which holds
  /// for any order of the determinant's rows since the permanent does not depend on it); otherwise CGAL's
  /// exact predicate decides.
  class Plane {
   public:
    Plane(const Search& search, int p, int q, int r) : search_(search), p_(p), q_(q), r_(r) {
      const double* o = &search.mesh_.vertices(p, 0);
      const double* x = &search.mesh_.vertices(q, 0);
      const double* y = &search.mesh_.vertices(r, 0);
      const double ax = x[0] - o[0], ay = x[1] - o[1], az = x[2] - o[2];
      const double bx = y[0] - o[0], by = y[1] - o[1], bz = y[2] - o[2];
      const double aybz = ay * bz, azby = az * by, azbx = az * bx, axbz = ax * bz, axby = ax * by,
                   aybx = ay * bx;
      normal_ = {aybz - azby, azbx - axbz, axby - aybx};
      permanent_ = {std::abs(aybz) + std::abs(azby), std::abs(azbx) + std::abs(axbz),
                    std::abs(axby) + std::abs(aybx)};
      origin_ = o;
    }

    CGAL::Orientation side(int s) const {
      const double* z = &search_.mesh_.vertices(s, 0);
      const double dx = z[0] - origin_[0], dy = z[1] - origin_[1], dz = z[2] - origin_[2];
      const double det = dx * normal_[0] + dy * normal_[1] + dz * normal_[2];
      const double bound =
          7.7715611723761027e-16 *  // (7 + 56 eps) eps, eps = 2^-53
          (std::abs(dx) * permanent_[0] + std::abs(dy) * permanent_[1] + std::abs(dz) * permanent_[2]);
      if (det > bound) return CGAL::POSITIVE;
      if (det < -bound) return CGAL::NEGATIVE;
      return CGAL::orientation(search_.point(p_), search_.point(q_), search_.point(r_), search_.point(s));
    }

   private:
    const Search& search_;
    int p_, q_, r_;
    const double* origin_;
    std::array<double, 3> normal_, permanent_;
  };

  const Mesh& mesh_;
  std::vector<int> order_;  ///< face numbers in Morton order
  std::vector<Box> boxes_;  ///< box of order_[i]
  std::vector<Box> nodes_;  ///< tree nodes, heap layout
  size_t first_leaf_ = 1;
};

}  // namespace

FacePairs self_intersecting_pairs(const Mesh& mesh) { return Search(mesh).run(); }

}  // namespace polystokes
