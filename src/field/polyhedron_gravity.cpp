#include "polystokes/field/polyhedron_gravity.h"

#include <fmt/format.h>

#include <Eigen/Dense>
#include <cmath>
#include <limits>
#include <string>

#include "field/triangle_rule.h"
#include "internal/parallel.h"
#include "polystokes/core/constants.h"
#include "polystokes/core/errors.h"
#include "polystokes/mesh/geometry.h"

namespace polystokes {

namespace {

// The closed form of a face integral carries a rounding error of about (distance / face radius) * epsilon
// relative to the integral (cancellation between its edge and solid-angle terms), and the face integrals
// themselves cancel in the sums by about distance / region radius more. Faces use the closed form while the
// product of the two ratios is below kClosedFormLimit (error <~ 2e-14 relative to the field), and otherwise
// the quadrature, with its order chosen for a per-face error of kBudget (scaled like the reduced integrals).
constexpr double kClosedFormLimit = 64.0;
constexpr double kBudget = 2e-15;
constexpr int kMaxRule = 12;

// The q x q Gauss product rule on the triangle collapsed at v0 (Duffy): y = v0 + s(1-t) e1 + s t e2, dA = 2A
// s ds dt, exact for polynomials of degree 2q - 2. For 1/|x - y| at `ratio` face radii its relative error was
// measured (all directions, equilateral and skinny faces) to stay below 0.4 (2.5 ratio)^-(2q-1). Rule q
// therefore meets `tolerance` from ratio (0.4 / tolerance)^(1/(2q-1)) / 2.5 on; these thresholds are computed
// once per point.
struct RuleThresholds {
  explicit RuleThresholds(double tolerance) {
    const double log_needed = std::log(0.4 / tolerance);
    for (int q = 1; q <= kMaxRule; ++q) ratio[q] = std::exp(log_needed / (2.0 * q - 1.0)) / 2.5;
  }
  // Smallest order whose threshold `ratio` reaches (the largest order if none).
  int order(double face_ratio) const {
    int q = 1;
    while (q < kMaxRule && face_ratio < ratio[q]) ++q;
    return q;
  }
  double ratio[kMaxRule + 1] = {};
};

// ln((r_i + r_j + e)/(r_i + r_j - e)) = asinh(s_j/rho) - asinh(s_i/rho) with s the signed projections of the
// endpoints on the edge line (s_j = s_i + e) and rho the distance from the line. Mirrored so that
// s_i + s_j >= 0, it is log1p(e (1 + w) / d_i) with w = (s_i + s_j)/(r_i + r_j) and d_i = r_i + s_i formed
// as rho^2 / (r_i - s_i) when s_i < 0: no difference of nearly equal numbers in any regime. Infinite on the
// segment itself.
double edge_factor(const Eigen::Vector3d& ri, double norm_i, double norm_j, const Eigen::Vector3d& unit,
                   double length) {
  double si = ri.dot(unit), sj = si + length, ni = norm_i, nj = norm_j;
  if (si + sj < 0) {
    const double t = si;
    si = -sj;
    sj = -t;
    std::swap(ni, nj);
  }
  const double w = (si + sj) / (ni + nj);
  const double di = si >= 0 ? ni + si : ri.cross(unit).squaredNorm() / (ni - si);
  if (!(di > 0)) return std::numeric_limits<double>::infinity();
  return std::log1p(length * (1.0 + w) / di);
}

}  // namespace

PolyhedronGravity::PolyhedronGravity(const std::vector<DensityRegion>& regions) {
  if (regions.empty()) throw ConventionError("no density region given");
  for (const auto& input : regions) {
    const Mesh& mesh = input.mesh;
    if (!std::isfinite(input.density.constant()))
      throw ConventionError(fmt::format("{}: density is not finite", mesh.source));
    Region region;
    region.density = input.density.constant();
    // Centre of the face data: the volume centroid keeps the stored coordinates as small as possible.
    const VolumeMoments moments = volume_moments(mesh);
    region.center = std::abs(moments.volume) > 0
                        ? Eigen::Vector3d(moments.first / moments.volume)
                        : Eigen::Vector3d(mesh.vertices.colwise().mean().transpose());
    for (Eigen::Index f = 0; f < mesh.faces.rows(); ++f) {
      Face face;
      for (int k = 0; k < 3; ++k) {
        const int vertex = mesh.faces(f, k);
        if (vertex < 0 || vertex >= mesh.vertices.rows())
          throw MeshError(
              fmt::format("{}: face {} names vertex {} that does not exist", mesh.source, f, vertex));
        face.v[k] = mesh.vertices.row(vertex).transpose() - region.center;
        region.radius = std::max(region.radius, face.v[k].norm());
      }
      face.double_area_normal = (face.v[1] - face.v[0]).cross(face.v[2] - face.v[0]);
      const double double_area = face.double_area_normal.norm();
      if (!(double_area > 0)) continue;
      face.area = 0.5 * double_area;
      face.normal = face.double_area_normal / double_area;
      face.plane = face.normal.dot((face.v[0] + face.v[1] + face.v[2]) / 3.0);
      face.centroid = (face.v[0] + face.v[1] + face.v[2]) / 3.0;
      face.radius = 0;
      for (int k = 0; k < 3; ++k) {
        const Eigen::Vector3d edge = face.v[(k + 1) % 3] - face.v[k];
        face.edge_length[k] = edge.norm();
        face.edge_unit[k] = edge / face.edge_length[k];
        face.edge_normal[k] = face.edge_unit[k].cross(face.normal);
        face.radius = std::max(face.radius, (face.v[k] - face.centroid).norm());
      }
      region.plane_area_sum += face.plane * face.area;
      region.faces.push_back(face);
    }
    regions_.push_back(std::move(region));
  }
  rules_.resize(kMaxRule + 1);
  for (int q = 1; q <= kMaxRule; ++q)
    for (const TriangleNode& node : collapsed_triangle_rule(q)) rules_[size_t(q)].push_back({node.a, node.b, node.weight});
}

size_t PolyhedronGravity::face_count() const {
  size_t count = 0;
  for (const auto& region : regions_) count += region.faces.size();
  return count;
}

// The direct sum and the fast field's near part (fast_field.cpp) both take a face's terms from here.
PolyhedronGravity::FaceTerms PolyhedronGravity::face_terms(const Face& face, const Eigen::Vector3d& x, int rule_order,
                                                         double reduced_distance) const {
  const bool reduced = reduced_distance > 0;
  const double inv_d = reduced ? 1.0 / reduced_distance : 0.0, inv_d3 = inv_d * inv_d * inv_d;
  double integral = 0;                               // I~_f
  Eigen::Vector3d vector = Eigen::Vector3d::Zero();  // v~_f = -grad of I~_f
  if (rule_order == 0) {
    // Closed form (Werner & Scheeres 1997).
    Eigen::Vector3d r[3];
    double norm[3];
    for (int k = 0; k < 3; ++k) {
      r[k] = face.v[k] - x;
      norm[k] = r[k].norm();
    }
    for (int k = 0; k < 3; ++k) {
      const int j = (k + 1) % 3;
      const double factor = edge_factor(r[k], norm[k], norm[j], face.edge_unit[k], face.edge_length[k]);
      const double height = face.edge_normal[k].dot(r[k]);
      // On the edge's line height -> 0 faster than the factor grows (height ln(1/height) -> 0): at a vertex
      // the rounded height of an incident edge is a few 1e-16, not 0, and must not meet the infinite factor.
      if (height != 0 && std::isfinite(factor)) integral += height * factor;
      vector += face.edge_normal[k] * factor;
    }
    const double triple = r[0].dot(face.double_area_normal);
    const double omega = solid_angle(r, norm, triple);
    integral -= triple / (2.0 * face.area) * omega;  // (n_f . r_f) omega_f
    vector -= face.normal * omega;
    if (reduced) {
      integral -= face.area * inv_d;
      vector -= face.area * inv_d3 * x;
    }
  } else {
    const auto& rule = rules_[size_t(rule_order)];
    const Eigen::Vector3d e1 = face.v[1] - face.v[0], e2 = face.v[2] - face.v[0];
    if (!reduced) {
      for (const auto& node : rule) {
        const Eigen::Vector3d u = face.v[0] + node.a * e1 + node.b * e2 - x;
        const double a2 = u.squaredNorm(), inv_a = 1.0 / std::sqrt(a2);
        integral += node.weight * inv_a;
        vector -= (node.weight * inv_a * inv_a * inv_a) * u;
      }
    } else {
      // With a = |y - x|, b = |x|: 1/a - 1/b = (b^2 - a^2)/(a b (a + b)) with b^2 - a^2 = 2 x.y - y.y
      // formed from the small y (no cancellation), and (y - x)/a^3 + x/b^3 = y/a^3 - x (b^2 - a^2)(a^2 + ab
      // + b^2) /
      // ((a + b) a^3 b^3).
      const double b = reduced_distance;
      double along_x = 0;
      Eigen::Vector3d along_y = Eigen::Vector3d::Zero();
      for (const auto& node : rule) {
        const Eigen::Vector3d y = face.v[0] + node.a * e1 + node.b * e2;
        const double a2 = (y - x).squaredNorm(), a = std::sqrt(a2);
        const double difference = 2.0 * x.dot(y) - y.squaredNorm();
        const double inv = 1.0 / (a * (a + b));  // 1/(a (a + b)); 1/a = (a + b) inv
        const double inv_a = (a + b) * inv, inv_a3 = inv_a * inv_a * inv_a;
        integral += node.weight * difference * inv / b;
        along_y += (node.weight * inv_a3) * y;
        along_x += node.weight * difference * (a2 + a * b + b * b) * a * inv * inv_a3;
      }
      vector = along_x * inv_d3 * x - along_y;
    }
    integral *= face.area;
    vector *= face.area;
  }
  return {integral, vector};
}

PolyhedronGravity::FaceTerms PolyhedronGravity::near_face_terms(const Face& face,
                                                              const Eigen::Vector3d& x) const {
  static const RuleThresholds rules(kBudget);
  const double ratio = (face.centroid - x).norm() / face.radius;
  return face_terms(face, x, ratio < kClosedFormLimit ? 0 : rules.order(ratio), 0);
}

FieldValue PolyhedronGravity::evaluate_region(const Region& region, const Eigen::Vector3d& point) const {
  const Eigen::Vector3d x = point - region.center;
  const double distance = x.norm();
  // Far from the region, every face integral is taken relative to the value seen from the centre:
  // I_f - A_f / |x| and v_f - A_f x / |x|^3, whose subtracted parts sum to zero (sum_f A_f n_f = 0).
  const bool reduced = distance > 2.0 * region.radius;
  const double inv_d = reduced ? 1.0 / distance : 0.0;
  // Reduced integrals are smaller than the plain ones by ~radius/distance, so the budget shrinks with it.
  const RuleThresholds rules(kBudget * std::min(1.0, region.radius / distance));

  double sum_plane = 0;                                  // sum_f plane_f I~_f
  Eigen::Vector3d sum_normal = Eigen::Vector3d::Zero();  // sum_f n_f I~_f
  Eigen::Matrix3d sum_dyad = Eigen::Matrix3d::Zero();    // sum_f n_f v~_f^T
  for (const Face& face : region.faces) {
    const double ratio = (face.centroid - x).norm() / face.radius;
    const bool closed_form = ratio * std::max(1.0, distance / region.radius) < kClosedFormLimit;
    const FaceTerms terms = face_terms(face, x, closed_form ? 0 : rules.order(ratio), reduced ? distance : 0);
    sum_plane += face.plane * terms.integral;
    sum_normal += face.normal * terms.integral;
    sum_dyad += face.normal * terms.vector.transpose();
  }
  const double g_rho = gravitational_constant * region.density;
  FieldValue value;
  // U = (G rho/2) sum_f (n_f . r_f) I_f with n_f . r_f = plane_f - n_f . x, and I_f = I~_f + A_f/|x|.
  value.potential = 0.5 * g_rho * (sum_plane + region.plane_area_sum * inv_d - x.dot(sum_normal));
  value.acceleration = -g_rho * sum_normal;
  value.gradient = 0.5 * g_rho * (sum_dyad + sum_dyad.transpose());
  return value;
}

FieldValue PolyhedronGravity::evaluate(const Eigen::Vector3d& point) const {
  if (!point.allFinite())
    throw ConventionError(
        fmt::format("field point ({}, {}, {}) is not finite", point.x(), point.y(), point.z()));
  FieldValue total;
  for (const auto& region : regions_) {
    const FieldValue part = evaluate_region(region, point);
    total.potential += part.potential;
    total.acceleration += part.acceleration;
    total.gradient += part.gradient;
  }
  return total;
}

std::vector<FieldValue> PolyhedronGravity::evaluate(const Points& points, int threads) const {
  std::vector<FieldValue> out(size_t(points.rows()));
  parallel_for(size_t(points.rows()), threads, [&](size_t i) {
    const Eigen::Vector3d p = points.row(Eigen::Index(i)).transpose();
    if (!p.allFinite()) throw ConventionError(fmt::format("point {} is not finite", i + 1));
    out[i] = evaluate(p);
  });
  return out;
}

double PolyhedronGravity::winding_number(const Eigen::Vector3d& point, size_t index) const {
  if (index >= regions_.size()) throw ConventionError(fmt::format("no region {}", index));
  const Region& region = regions_[index];
  const Eigen::Vector3d x = point - region.center;
  double sum = 0;
  for (const Face& face : region.faces) {
    Eigen::Vector3d r[3];
    double norm[3];
    for (int k = 0; k < 3; ++k) {
      r[k] = face.v[k] - x;
      norm[k] = r[k].norm();
    }
    sum += solid_angle(r, norm, r[0].dot(face.double_area_normal));
  }
  return sum / (4.0 * M_PI);
}

double PolyhedronGravity::density_at(const Eigen::Vector3d& point) const {
  double density = 0;
  for (size_t r = 0; r < regions_.size(); ++r)
    density += regions_[r].density * std::round(2.0 * winding_number(point, r)) / 2.0;
  return density;
}

}  // namespace polystokes
