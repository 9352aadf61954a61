#include "polystokes/field/fast_field.h"

#include <fmt/format.h>

#include <algorithm>
#include <cmath>
#include <limits>
#include <numeric>

#include "field/solid_harmonics.h"
#include "internal/parallel.h"
#include "polystokes/core/constants.h"
#include "polystokes/core/errors.h"

namespace polystokes {

namespace {

// Channel 0 carries G rho n_f . (y - c), channels 1-3 carry G rho n_f (the four single-layer densities).
constexpr int kChannels = 4;
// Accepted pairs keep x = (r_A + r_B)/d below this, so that the (1 - x) factors of the bounds stay tame.
constexpr double kMaxOpening = 0.75;
constexpr int kSourceLeaf = 16;  // faces per source leaf at most
constexpr int kTargetLeaf = 32;  // points per target leaf at most
constexpr int kMaxDepth = 40;    // coincident points stop the halving here

struct Cell {
  Eigen::Vector3d center = Eigen::Vector3d::Zero();  // of the cube
  double radius = 0;                                 // covers every item with its extent
  int begin = 0, end = 0;                            // items order[begin, end)
  int parent = -1, depth = 0;
  int children[8] = {};
  int child_count = 0;
  bool leaf() const { return child_count == 0; }
  int count() const { return end - begin; }
};

// Octree over items (face centroids with their radius, or points with none): cubes halved until a cell holds
// at most leaf_size items. Parents precede their children; levels[d] lists the cells of depth d.
struct Tree {
  std::vector<Cell> cells;
  std::vector<int> order;
  std::vector<std::vector<int>> levels;
  std::vector<int> leaves;

  Tree(const std::vector<Eigen::Vector3d>& positions, const std::vector<double>& extents, int leaf_size) {
    order.resize(positions.size());
    std::iota(order.begin(), order.end(), 0);
    Eigen::Vector3d lo = Eigen::Vector3d::Constant(std::numeric_limits<double>::infinity()), hi = -lo;
    for (const auto& p : positions) {
      lo = lo.cwiseMin(p);
      hi = hi.cwiseMax(p);
    }
    Cell root;
    root.end = int(positions.size());
    cells.push_back(root);
    split(positions, extents, leaf_size, 0, (lo + hi) / 2, (hi - lo).maxCoeff() / 2);
    for (int c = 0; c < int(cells.size()); ++c) {
      if (size_t(cells[size_t(c)].depth) >= levels.size()) levels.resize(size_t(cells[size_t(c)].depth) + 1);
      levels[size_t(cells[size_t(c)].depth)].push_back(c);
      if (cells[size_t(c)].leaf()) leaves.push_back(c);
    }
  }

 private:
  void split(const std::vector<Eigen::Vector3d>& positions, const std::vector<double>& extents, int leaf_size,
             int index, const Eigen::Vector3d& center, double half) {
    Cell& cell = cells[size_t(index)];
    cell.center = center;
    for (int i = cell.begin; i < cell.end; ++i) {
      const int item = order[size_t(i)];
      cell.radius = std::max(cell.radius, (positions[size_t(item)] - center).norm() + extents[size_t(item)]);
    }
    if (cell.count() <= leaf_size || cell.depth >= kMaxDepth) return;
    const auto octant = [&](int item) {
      const Eigen::Vector3d& p = positions[size_t(item)];
      return int(p.x() > center.x()) | int(p.y() > center.y()) << 1 | int(p.z() > center.z()) << 2;
    };
    // Stable counting sort of the cell's items by octant keeps the order deterministic.
    int counts[8] = {};
    for (int i = cell.begin; i < cell.end; ++i) ++counts[octant(order[size_t(i)])];
    std::vector<int> sorted(size_t(cell.count()));
    int starts[8], next[8];
    for (int o = 0, at = 0; o < 8; ++o) {
      starts[o] = next[o] = at;
      at += counts[o];
    }
    for (int i = cell.begin; i < cell.end; ++i)
      sorted[size_t(next[octant(order[size_t(i)])]++)] = order[size_t(i)];
    std::copy(sorted.begin(), sorted.end(), order.begin() + cell.begin);
    const int begin = cell.begin, depth = cell.depth;
    std::vector<std::pair<int, int>> made;  // (cell, octant)
    for (int o = 0; o < 8; ++o) {
      if (counts[o] == 0) continue;
      Cell child;
      child.begin = begin + starts[o];
      child.end = child.begin + counts[o];
      child.parent = index;
      child.depth = depth + 1;
      cells[size_t(index)].children[cells[size_t(index)].child_count++] = int(cells.size());
      made.emplace_back(int(cells.size()), o);
      cells.push_back(child);
    }
    for (const auto& [child, o] : made) {
      const Eigen::Vector3d offset((o & 1) ? 1 : -1, (o & 2) ? 1 : -1, (o & 4) ? 1 : -1);
      split(positions, extents, leaf_size, child, center + offset * (half / 2), half / 2);
    }
  }
};

// The expansion order the accuracy calls for: the accepted pairs then have x of about 0.3 to 0.5.
int order_for(double accuracy) { return std::clamp(int(std::ceil(2.0 - 2.2 * std::log10(accuracy))), 4, 36); }

}  // namespace

struct FastPolyhedronField::Sources {
  struct Item {
    int region, face;
  };
  std::vector<Item> items;
  std::unique_ptr<Tree> tree;
  ExpansionShape shape;
  std::vector<double> multipoles;  // cell after cell, unfolded (unfold_multipole)
  size_t unfolded = 0;             // values per cell
  std::vector<double> charge;      // per cell: sum of |G rho| area over its faces
  Eigen::Vector3d center = Eigen::Vector3d::Zero();
  double radius = 0, gm = 0;
  double accept_acceleration = 0, accept_potential = 0;  // remainder limits per unit charge
};

FastPolyhedronField::~FastPolyhedronField() = default;

FastPolyhedronField::FastPolyhedronField(const std::vector<DensityRegion>& regions,
                                         const FastFieldOptions& options)
    : direct_(regions), options_(options), sources_(std::make_unique<Sources>()) {
  if (!(options.accuracy > 1e-15 && options.accuracy < 1))
    throw ConventionError(fmt::format("accuracy must lie between 1e-15 and 1, got {}", options.accuracy));
  if (options.order != 0 && (options.order < 2 || options.order > 40))
    throw ConventionError(fmt::format("expansion order must lie between 2 and 40, got {}", options.order));
  if (options.checks < 0) throw ConventionError(fmt::format("checks must be >= 0, got {}", options.checks));
  Sources& s = *sources_;
  s.shape = {options.order > 0 ? options.order : order_for(options.accuracy), kChannels};

  // The centre and the scales.
  double weight = 0, gm_abs = 0;
  Eigen::Vector3d weighted = Eigen::Vector3d::Zero();
  for (const auto& region : direct_.regions_) {
    const double volume = region.plane_area_sum / 3.0, w = std::abs(region.density * volume);
    weight += w;
    weighted += w * region.center;
    s.gm += gravitational_constant * region.density * volume;
    gm_abs += gravitational_constant * w;
  }
  s.center = weight > 0 ? Eigen::Vector3d(weighted / weight) : direct_.regions_.front().center;
  if (!(s.gm > 0)) s.gm = gm_abs;
  std::vector<Eigen::Vector3d> positions;
  std::vector<double> extents;
  double total_charge = 0;
  for (int r = 0; r < int(direct_.regions_.size()); ++r) {
    const auto& region = direct_.regions_[size_t(r)];
    for (int f = 0; f < int(region.faces.size()); ++f) {
      const auto& face = region.faces[size_t(f)];
      s.items.push_back({r, f});
      positions.push_back(region.center + face.centroid);
      extents.push_back(face.radius);
      for (const auto& v : face.v) s.radius = std::max(s.radius, (region.center + v - s.center).norm());
      total_charge += std::abs(gravitational_constant * region.density) * face.area;
    }
  }
  if (s.items.empty()) throw ConventionError("the regions have no face of positive area");
  // Bounds of accepted pairs sum to at most accuracy * scale (see the header); a body of zero density
  // accepts every pair.
  const double per_charge = total_charge > 0 ? options.accuracy / total_charge : 0;
  s.accept_acceleration =
      total_charge > 0 ? per_charge * s.gm / (s.radius * s.radius) : std::numeric_limits<double>::infinity();
  s.accept_potential =
      total_charge > 0 ? per_charge * s.gm / s.radius : std::numeric_limits<double>::infinity();

  s.tree = std::make_unique<Tree>(positions, extents, kSourceLeaf);
  const Tree& tree = *s.tree;
  const size_t size = size_t(s.shape.size());
  std::vector<Complex> multipoles(tree.cells.size() * size, Complex(0));
  s.charge.assign(tree.cells.size(), 0.0);

  // Moments of each leaf's faces, exact (add_triangle_multipole).
  parallel_for(tree.leaves.size(), options.threads, [&](size_t l) {
    const int index = tree.leaves[l];
    const Cell& cell = tree.cells[size_t(index)];
    Complex* multipole = multipoles.data() + size_t(index) * size;
    std::vector<Complex> scratch(3 * size_t(s.shape.count()));
    for (int i = cell.begin; i < cell.end; ++i) {
      const Sources::Item item = s.items[size_t(tree.order[size_t(i)])];
      const auto& region = direct_.regions_[size_t(item.region)];
      const auto& face = region.faces[size_t(item.face)];
      const double g_rho = gravitational_constant * region.density;
      Eigen::Vector3d vertex[3];
      for (int k = 0; k < 3; ++k) vertex[k] = region.center + face.v[k] - cell.center;
      const double densities[kChannels] = {g_rho * face.normal.dot(region.center + face.v[0] - s.center),
                                           g_rho * face.normal.x(), g_rho * face.normal.y(),
                                           g_rho * face.normal.z()};
      add_triangle_multipole(s.shape, vertex, face.area, densities, multipole, scratch.data());
      s.charge[size_t(index)] += std::abs(g_rho) * face.area;
    }
  });
  // Parents from their children, deepest level first, children in their fixed order.
  for (size_t depth = tree.levels.size(); depth-- > 0;) {
    const std::vector<int>& level = tree.levels[depth];
    parallel_for(level.size(), options.threads, [&](size_t i) {
      const int index = level[i];
      const Cell& cell = tree.cells[size_t(index)];
      std::vector<Complex> scratch(size_t(s.shape.count()));
      for (int c = 0; c < cell.child_count; ++c) {
        const int child = cell.children[c];
        translate_multipole(s.shape, tree.cells[size_t(child)].center - cell.center,
                            multipoles.data() + size_t(child) * size,
                            multipoles.data() + size_t(index) * size, scratch.data());
        s.charge[size_t(index)] += s.charge[size_t(child)];
      }
    });
  }
  s.unfolded = 2 * size_t(kChannels) * size_t((s.shape.order + 1) * (s.shape.order + 1));
  s.multipoles.resize(tree.cells.size() * s.unfolded);
  parallel_for(tree.cells.size(), options.threads, [&](size_t c) {
    unfold_multipole(s.shape, multipoles.data() + c * size, s.multipoles.data() + c * s.unfolded);
  });
}

FastFieldResult FastPolyhedronField::evaluate(const Points& points) const {
  const Sources& s = *sources_;
  const Tree& sources = *s.tree;
  const int p = s.shape.order;
  const size_t size = size_t(s.shape.size());
  FastFieldResult result;
  FastFieldReport& report = result.report;
  report.order = p;
  report.accuracy = options_.accuracy;
  report.faces = long(s.items.size());
  report.points = long(points.rows());
  report.source_cells = long(sources.cells.size());
  report.potential_scale = s.gm / s.radius;
  report.acceleration_scale = s.gm / (s.radius * s.radius);
  if (points.rows() == 0) return result;
  std::vector<Eigen::Vector3d> positions(size_t(points.rows()));
  for (Eigen::Index i = 0; i < points.rows(); ++i) {
    positions[size_t(i)] = points.row(i).transpose();
    if (!positions[size_t(i)].allFinite())
      throw ConventionError(fmt::format("point {} is not finite", i + 1));
  }
  const Tree targets(positions, std::vector<double>(positions.size(), 0.0), kTargetLeaf);
  report.target_cells = long(targets.cells.size());

  // Dual tree traversal: each target cell gets its far source cells (multipole-to-local, or
  // multipole-to-point when the cell holds few points) and, for leaves, its near source leaves.
  struct Lists {
    std::vector<int> local, point, near;
    double bound_potential = 0, bound_acceleration = 0;  // of these far pairs, absolute
  };
  // Operation counts per channel: M2L ~ sum_n (n + 1)(p - n + 1)^2, M2P ~ 3 (p + 1)^2 per point.
  double local_cost = 0;
  for (int n = 0; n <= p; ++n) local_cost += (n + 1.0) * (p - n + 1.0) * (p - n + 1.0);
  const double point_cost = 3.0 * (p + 1.0) * (p + 1.0);
  std::vector<Lists> lists;        // per target cell
  std::vector<Lists> point_lists;  // per point, for points of leaves too wide to meet sources as a whole
  std::vector<double> bound_potential, bound_acceleration;  // per target cell, its ancestors' pairs included
  // A pair may spend accuracy * scale * (Q_B / Q_total) * (R_B / (d - r_A - r_B)) / spread: near cells get
  // less, and sum_B Q_B R_B / (Q_total (d - r_A - r_B)) over the far cells of a point stays of order one
  // (a single-layer potential of the surface). The bounds of each point are summed exactly after the
  // traversal; where they exceed the accuracy, the traversal is repeated with a larger spread.
  for (double spread = 1;; spread *= 4) {
    lists.assign(targets.cells.size(), Lists());
    point_lists.assign(positions.size(), Lists());
    report.multipole_to_local = report.multipole_to_point = report.near_pairs = 0;
    report.opening = 0;
    const double limit_acceleration = s.accept_acceleration * s.radius / spread,
                 limit_potential = s.accept_potential * s.radius / spread;
    // Accepts source cell B for targets within `radius` of `center`: adds its bounds to `list`.
    const auto accept = [&](const Eigen::Vector3d& center, double radius, int b, Lists& list) {
      const Cell& B = sources.cells[size_t(b)];
      const double d = (center - B.center).norm(), rho = radius + B.radius;
      if (!(rho < kMaxOpening * d)) return false;
      const double x = rho / d, power = std::pow(x, p + 1), remainder = power / (d - rho);
      const double lever = 0.5 * (s.radius + (center - s.center).norm() + radius);
      if (power > limit_acceleration || power * lever > limit_potential) return false;
      list.bound_acceleration += s.charge[size_t(b)] * remainder;
      list.bound_potential += s.charge[size_t(b)] * remainder * lever;
      report.opening = std::max(report.opening, x);
      return true;
    };
    const auto point_interact = [&](const auto& self, int i, int b) -> void {
      const Cell& B = sources.cells[size_t(b)];
      Lists& list = point_lists[size_t(i)];
      if (accept(positions[size_t(i)], 0.0, b, list)) {
        list.point.push_back(b);
        report.multipole_to_point += 1;
      } else if (B.leaf()) {
        list.near.push_back(b);
        report.near_pairs += B.count();
      } else {
        for (int c = 0; c < B.child_count; ++c) self(self, i, B.children[c]);
      }
    };
    const auto interact = [&](const auto& self, int a, int b) -> void {
      const Cell& A = targets.cells[size_t(a)];
      const Cell& B = sources.cells[size_t(b)];
      Lists& list = lists[size_t(a)];
      if (accept(A.center, A.radius, b, list)) {
        if (A.leaf() && A.count() * point_cost < local_cost) {
          list.point.push_back(b);
          report.multipole_to_point += A.count();
        } else {
          list.local.push_back(b);
          report.multipole_to_local += 1;
        }
      } else if (A.leaf() && B.leaf()) {
        list.near.push_back(b);
        report.near_pairs += long(A.count()) * B.count();
      } else if (A.leaf() && A.radius > B.radius) {
        for (int i = A.begin; i < A.end; ++i) point_interact(point_interact, targets.order[size_t(i)], b);
      } else if (B.leaf() || (!A.leaf() && A.radius >= B.radius)) {
        for (int c = 0; c < A.child_count; ++c) self(self, A.children[c], b);
      } else {
        for (int c = 0; c < B.child_count; ++c) self(self, a, B.children[c]);
      }
    };
    interact(interact, 0, 0);
    bound_potential.assign(targets.cells.size(), 0.0);
    bound_acceleration.assign(targets.cells.size(), 0.0);
    double worst = 0;
    for (size_t c = 0; c < targets.cells.size(); ++c) {  // parents precede their children
      const int parent = targets.cells[c].parent;
      bound_potential[c] = lists[c].bound_potential + (parent >= 0 ? bound_potential[size_t(parent)] : 0);
      bound_acceleration[c] =
          lists[c].bound_acceleration + (parent >= 0 ? bound_acceleration[size_t(parent)] : 0);
    }
    for (const int leaf : targets.leaves)
      for (int i = targets.cells[size_t(leaf)].begin; i < targets.cells[size_t(leaf)].end; ++i) {
        Lists& own = point_lists[size_t(targets.order[size_t(i)])];
        own.bound_potential += bound_potential[size_t(leaf)];
        own.bound_acceleration += bound_acceleration[size_t(leaf)];
        worst = std::max({worst, own.bound_potential / report.potential_scale,
                          own.bound_acceleration / report.acceleration_scale});
      }
    if (worst <= options_.accuracy) break;
  }

  // Local expansions: each cell's own multipole-to-local sums, then its parent's expansion shifted to it.
  std::vector<Complex> locals(targets.cells.size() * size, Complex(0));
  std::vector<char> has_local(targets.cells.size(), 0);
  for (size_t c = 0; c < targets.cells.size(); ++c) has_local[c] = !lists[c].local.empty();
  parallel_for(targets.cells.size(), options_.threads, [&](size_t c) {
    std::vector<Complex> scratch(size_t(harmonic_count(p)));
    for (const int b : lists[c].local)
      multipole_to_local(s.shape, targets.cells[c].center - sources.cells[size_t(b)].center, p, p,
                         s.multipoles.data() + size_t(b) * s.unfolded, locals.data() + c * size,
                         scratch.data());
  });
  for (size_t depth = 0; depth < targets.levels.size(); ++depth) {
    const std::vector<int>& level = targets.levels[depth];
    for (const int c : level) {
      const int parent = targets.cells[size_t(c)].parent;
      if (parent >= 0 && has_local[size_t(parent)]) has_local[size_t(c)] = 1;
    }
    parallel_for(level.size(), options_.threads, [&](size_t i) {
      const size_t c = size_t(level[i]);
      const int parent = targets.cells[c].parent;
      if (parent < 0 || !has_local[size_t(parent)]) return;
      std::vector<Complex> scratch(size_t(harmonic_count(p)));
      translate_local(s.shape, targets.cells[c].center - targets.cells[size_t(parent)].center, p,
                      locals.data() + size_t(parent) * size, locals.data() + c * size, scratch.data());
    });
  }

  // Each point: its leaf's local expansion, its multipole-to-point cells and its near faces, in fixed order.
  result.values.resize(positions.size());
  const int small = harmonic_count(1);
  parallel_for(targets.leaves.size(), options_.threads, [&](size_t l) {
    const size_t leaf = size_t(targets.leaves[l]);
    const Cell& A = targets.cells[leaf];
    std::vector<Complex> scratch(size_t(harmonic_count(p + 1)));
    std::vector<Complex> at_point(size_t(kChannels * small));
    for (int i = A.begin; i < A.end; ++i) {
      const size_t index = size_t(targets.order[size_t(i)]);
      const Eigen::Vector3d& x = positions[index];
      std::fill(at_point.begin(), at_point.end(), Complex(0));
      if (has_local[leaf])
        translate_local(s.shape, x - A.center, 1, locals.data() + leaf * size, at_point.data(),
                        scratch.data());
      const Lists& cell = lists[leaf];
      const Lists& own = point_lists[index];
      for (const std::vector<int>* far : {&cell.point, &own.point})
        for (const int b : *far)
          multipole_to_local(s.shape, x - sources.cells[size_t(b)].center, 1, p + 1,
                             s.multipoles.data() + size_t(b) * s.unfolded, at_point.data(), scratch.data());
      double phi[kChannels];
      Eigen::Vector3d grad[kChannels];
      for (int c = 0; c < kChannels; ++c) local_value_gradient(at_point.data() + c * small, phi[c], grad[c]);
      const Eigen::Vector3d field(phi[1], phi[2], phi[3]);
      FieldValue value;
      value.potential = 0.5 * (phi[0] - (x - s.center).dot(field));
      value.acceleration = -field;
      Eigen::Matrix3d gradient;
      for (int k = 0; k < 3; ++k) gradient.row(k) = -grad[k + 1].transpose();
      for (const std::vector<int>* near : {&cell.near, &own.near})
        for (const int b : *near) {
          const Cell& B = sources.cells[size_t(b)];
          for (int j = B.begin; j < B.end; ++j) {
            const Sources::Item item = s.items[size_t(sources.order[size_t(j)])];
            const auto& region = direct_.regions_[size_t(item.region)];
            const auto& face = region.faces[size_t(item.face)];
            const Eigen::Vector3d local = x - region.center;
            const PolyhedronGravity::FaceTerms terms = direct_.near_face_terms(face, local);
            const double g_rho = gravitational_constant * region.density;
            value.potential += 0.5 * g_rho * (face.plane - face.normal.dot(local)) * terms.integral;
            value.acceleration -= g_rho * terms.integral * face.normal;
            gradient += g_rho * face.normal * terms.vector.transpose();
          }
        }
      value.gradient = 0.5 * (gradient + gradient.transpose());
      result.values[index] = value;
    }
  });
  for (size_t i = 0; i < positions.size(); ++i) {
    report.bound_potential =
        std::max(report.bound_potential, point_lists[i].bound_potential / report.potential_scale);
    report.bound_acceleration =
        std::max(report.bound_acceleration,
                 point_lists[i].bound_acceleration /
                     std::max(result.values[i].acceleration.norm(), report.acceleration_scale));
  }

  // Run-time check against the direct sum on points spread evenly over the list.
  const size_t checks = std::min(positions.size(), size_t(options_.checks));
  std::vector<double> errors(checks * 3, 0.0);
  parallel_for(checks, options_.threads, [&](size_t k) {
    const size_t index = k * positions.size() / checks;
    const FieldValue exact = direct_.evaluate(positions[index]);
    const FieldValue& fast = result.values[index];
    const double gradient_scale = report.acceleration_scale / s.radius;
    errors[3 * k] = std::abs(fast.potential - exact.potential) / report.potential_scale;
    errors[3 * k + 1] = (fast.acceleration - exact.acceleration).norm() /
                        std::max(exact.acceleration.norm(), report.acceleration_scale);
    errors[3 * k + 2] = exact.gradient.allFinite() ? (fast.gradient - exact.gradient).norm() /
                                                         std::max(exact.gradient.norm(), gradient_scale)
                                                   : 0.0;
  });
  report.checked = long(checks);
  for (size_t k = 0; k < checks; ++k) {
    report.checked_potential = std::max(report.checked_potential, errors[3 * k]);
    report.checked_acceleration = std::max(report.checked_acceleration, errors[3 * k + 1]);
    report.checked_gradient = std::max(report.checked_gradient, errors[3 * k + 2]);
  }
  return result;
}

std::vector<FieldValue> exact_field(const std::vector<DensityRegion>& regions, const Points& points,
                                    const FastFieldOptions& options, std::string* method) {
  const PolyhedronGravity direct(regions);
  const double pairs = double(direct.face_count()) * double(points.rows());
  if (pairs < options.direct_pairs) {
    if (method != nullptr)
      *method = fmt::format(
          "direct sum over {} faces at {} points (below {:g} face-point pairs the direct sum "
          "is the faster exact method)",
          direct.face_count(), points.rows(), options.direct_pairs);
    return direct.evaluate(points, options.threads);
  }
  FastFieldResult result = FastPolyhedronField(regions, options).evaluate(points);
  if (method != nullptr)
    *method = fmt::format(
        "fast multipole method (order {}) over {} faces at {} points, accuracy {:.1e} by an a-priori bound; "
        "checked against the direct sum on {} points: largest error {:.1e} (acceleration)",
        result.report.order, result.report.faces, result.report.points, options.accuracy,
        result.report.checked, result.report.checked_acceleration);
  return std::move(result.values);
}

}  // namespace polystokes
