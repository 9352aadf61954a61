#include "polystokes/field/series.h"

#include <fmt/format.h>

#include <Eigen/Dense>
#include <algorithm>
#include <cmath>

#include "internal/parallel.h"
#include "polystokes/core/errors.h"
#include "polystokes/sets/conventions.h"

namespace polystokes {

namespace {

size_t index(int n, int m) { return size_t(n) * size_t(n + 1) / 2 + size_t(m); }
size_t triangle_size(int top) { return index(top + 1, 0); }

enum Axis { axis_x, axis_y, axis_z };

// Ladder relations of the fully normalized exterior harmonics Ibar_nm = (R/r)^(n+1) Pbar_nm e^(i m lon)
// (no Condon-Shortley phase). For the unnormalized I_nm = P_nm e^(i m lon) / r^(n+1) (Hobson 1931, The Theory
// of Spherical and Ellipsoidal Harmonics, ch. III; the real form is Cunningham 1970, eqs. for V_nm, W_nm):
//   d/dz I_nm = -(n-m+1) I_(n+1)m,  (d/dx + i d/dy) I_nm = -I_(n+1)(m+1),
//   (d/dx - i d/dy) I_nm = (n-m+1)(n-m+2) I_(n+1)(m-1) for m >= 1, the conjugate of the + relation for m = 0.
// Dividing by the normalizations gives the bounded factors alpha, beta, gamma below (times 1/R).
// A real field f = Re sum B_nm Ibar_nm then has derivative coefficients B' on degree n+1; for m = 0 only
// Re B_n0 matters, which is how the conjugate relation folds back onto m = 1.
std::vector<std::complex<double>> derive(const std::vector<std::complex<double>>& in, int top, Axis axis,
                                         double radius) {
  std::vector<std::complex<double>> out(triangle_size(top + 1), 0.0);
  const std::complex<double> i_unit(0.0, 1.0);
  for (int n = 0; n <= top; ++n) {
    const double ratio = (2.0 * n + 1.0) / (2.0 * n + 3.0);
    for (int m = 0; m <= n; ++m) {
      const std::complex<double> b = in[index(n, m)] / radius;
      if (b == 0.0) continue;
      if (axis == axis_z) {
        const double alpha = std::sqrt(ratio * (n - m + 1.0) * (n + m + 1.0));
        out[index(n + 1, m)] -= alpha * b;
        continue;
      }
      const double beta = std::sqrt((m == 0 ? 0.5 : 1.0) * ratio * (n + m + 1.0) * (n + m + 2.0));
      if (m == 0) {
        // d/dx = (d+ + d-)/2, d/dy = (d+ - d-)/(2i); here d- is the conjugate of d+.
        if (axis == axis_x)
          out[index(n + 1, 1)] -= beta * b.real();
        else
          out[index(n + 1, 1)] += i_unit * (beta * b.real());
        continue;
      }
      const double gamma = std::sqrt((m == 1 ? 2.0 : 1.0) * ratio * (n - m + 1.0) * (n - m + 2.0));
      if (axis == axis_x) {
        out[index(n + 1, m + 1)] -= 0.5 * beta * b;
        out[index(n + 1, m - 1)] += 0.5 * gamma * b;
      } else {
        out[index(n + 1, m + 1)] += 0.5 * beta * i_unit * b;
        out[index(n + 1, m - 1)] += 0.5 * gamma * i_unit * b;
      }
    }
  }
  return out;
}

// Quantities are ordered potential, x, y, z, xx, xy, xz, yy, yz, zz; derivative order of each.
constexpr int kOrder[10] = {0, 1, 1, 1, 2, 2, 2, 2, 2, 2};

FieldValue assemble(const double (&q)[10], double scale) {
  FieldValue value;
  value.potential = scale * q[0];
  value.acceleration = scale * Eigen::Vector3d(q[1], q[2], q[3]);
  value.gradient << q[4], q[5], q[6], q[5], q[7], q[8], q[6], q[8], q[9];
  value.gradient *= scale;
  return value;
}

}  // namespace

SeriesModel::SeriesModel(const CoefficientSet& input, int max_degree) {
  if (input.degree < 0) throw ConventionError(fmt::format("degree must be >= 0, got {}", input.degree));
  if (input.C.rows() < input.degree + 1 || input.C.cols() < input.degree + 1 ||
      input.S.rows() < input.degree + 1 || input.S.cols() < input.degree + 1)
    throw ConventionError(
        fmt::format("coefficient matrices are smaller than degree {} requires", input.degree));
  if (!(input.reference_radius > 0) || !std::isfinite(input.reference_radius))
    throw ConventionError(fmt::format("reference radius must be positive, got {}", input.reference_radius));
  if (!std::isfinite(input.gm)) throw ConventionError("GM is not finite");
  degree_ = max_degree < 0 ? input.degree : std::min(max_degree, input.degree);
  radius_ = input.reference_radius;
  gm_ = input.gm;

  const Convention internal;  // fully normalized, no phase, C_n0
  const bool convert = input.convention.normalization != internal.normalization ||
                       input.convention.condon_shortley != internal.condon_shortley ||
                       input.convention.zonal_as_j != internal.zonal_as_j;
  Triangle& b = coefficients_[0];
  b.assign(triangle_size(degree_), 0.0);
  for (int n = 0; n <= degree_; ++n) {
    for (int m = 0; m <= n; ++m) {
      double c = input.C(n, m), s = m == 0 ? 0.0 : input.S(n, m);
      if (convert) {
        c *= zonal_sign(input.convention, n, m);
        const double factor = coefficient_factor(input.convention, internal, n, m);
        c *= factor;
        s *= factor;
      }
      if (!std::isfinite(c) || !std::isfinite(s))
        throw ConventionError(fmt::format("coefficient (n = {}, m = {}) is not finite", n, m));
      b[index(n, m)] = {c, -s};  // Re[(C - iS) e^(i m lon)] = C cos + S sin
    }
  }
  for (int k = 0; k < 3; ++k) coefficients_[1 + k] = derive(b, degree_, Axis(k), radius_);
  coefficients_[4] = derive(coefficients_[1], degree_ + 1, axis_x, radius_);
  coefficients_[5] = derive(coefficients_[1], degree_ + 1, axis_y, radius_);
  coefficients_[6] = derive(coefficients_[1], degree_ + 1, axis_z, radius_);
  coefficients_[7] = derive(coefficients_[2], degree_ + 1, axis_y, radius_);
  coefficients_[8] = derive(coefficients_[2], degree_ + 1, axis_z, radius_);
  coefficients_[9] = derive(coefficients_[3], degree_ + 1, axis_z, radius_);

  // The solid harmonics run the one Legendre recursion (legendre.h) to degree + 2.
  recursion_ = LegendreRecursion(degree_ + 2);
}

void SeriesModel::solid_harmonics(const Eigen::Vector3d& point, int top,
                                  std::vector<std::complex<double>>& table) const {
  const double r = point.norm();
  if (!(r > 0) || !std::isfinite(r))
    throw ConventionError(fmt::format("series evaluated at ({}, {}, {}): the origin or a non-finite point",
                                      point.x(), point.y(), point.z()));
  table.assign(triangle_size(top), 0.0);
  const double s = radius_ / r, t = point.z() / r;
  const std::complex<double> w(point.x() / r, point.y() / r);  // cos(lat) e^(i lon), regular at the poles
  // Degrees whose factor (R/r)^(n+1) is below ~1e-290 are left zero instead of running into subnormals.
  int effective = top;
  if (s < 1) {
    const double limit = -667.0 / std::log(s) - 1.0;
    if (limit < top) effective = std::max(0, int(limit));
  }
  table[0] = s;
  for (int m = 1; m <= effective; ++m)
    table[index(m, m)] = recursion_.sectorial(m) * s * w * table[index(m - 1, m - 1)];
  const double s2 = s * s;
  for (int m = 0; m < effective; ++m) {
    table[index(m + 1, m)] = recursion_.first_step(m) * t * s * table[index(m, m)];
    for (int n = m + 2; n <= effective; ++n)
      table[index(n, m)] = recursion_.a(n, m) * t * s * table[index(n - 1, m)] -
                           recursion_.b(n, m) * s2 * table[index(n - 2, m)];
  }
}

std::vector<FieldValue> SeriesModel::sums_by_degree(const Eigen::Vector3d& point, bool cumulative) const {
  std::vector<std::complex<double>> table;
  solid_harmonics(point, degree_ + 2, table);
  // per_degree[q][k]: contribution of output degree k to quantity q.
  const int levels = degree_ + 3;
  std::vector<double> per_degree(size_t(10 * levels), 0.0);
  for (int q = 0; q < 10; ++q) {
    const int top = degree_ + kOrder[q];
    const auto& b = coefficients_[q];
    for (int k = 0; k <= top; ++k) {
      double sum = 0;
      for (int m = 0; m <= k; ++m) {
        const size_t i = index(k, m);
        sum += b[i].real() * table[i].real() - b[i].imag() * table[i].imag();
      }
      per_degree[size_t(q * levels + k)] = sum;
    }
  }
  const double scale = gm_ / radius_;
  std::vector<FieldValue> out;
  double q[10] = {};
  if (!cumulative) {
    for (int j = 0; j < 10; ++j)
      for (int k = 0; k <= degree_ + kOrder[j]; ++k) q[j] += per_degree[size_t(j * levels + k)];
    out.push_back(assemble(q, scale));
    return out;
  }
  // Truncation at degree L keeps source degrees <= L, i.e. output degrees <= L + derivative order.
  for (int j = 0; j < 10; ++j)
    for (int k = 0; k < kOrder[j]; ++k) q[j] += per_degree[size_t(j * levels + k)];
  for (int L = 0; L <= degree_; ++L) {
    for (int j = 0; j < 10; ++j) q[j] += per_degree[size_t(j * levels + L + kOrder[j])];
    out.push_back(assemble(q, scale));
  }
  return out;
}

FieldValue SeriesModel::evaluate(const Eigen::Vector3d& point) const {
  return sums_by_degree(point, false).front();
}

std::vector<FieldValue> SeriesModel::partial_sums(const Eigen::Vector3d& point) const {
  return sums_by_degree(point, true);
}

std::vector<FieldValue> SeriesModel::evaluate(const Points& points, int threads) const {
  std::vector<FieldValue> out(size_t(points.rows()));
  parallel_for(size_t(points.rows()), threads, [&](size_t i) {
    try {
      out[i] = evaluate(Eigen::Vector3d(points.row(Eigen::Index(i)).transpose()));
    } catch (const Error& e) {
      throw ConventionError(fmt::format("point {}: {}", i + 1, e.what()));
    }
  });
  return out;
}

FieldValue evaluate_series(const CoefficientSet& set, const Eigen::Vector3d& point, int max_degree) {
  return SeriesModel(set, max_degree).evaluate(point);
}

namespace {

// Mesh-frame points need the set's origin and axes in the mesh frame; an imported table may not know them.
void require_placed(const CoefficientSet& set) {
  if (!set.origin_known || !set.axes_known)
    throw UnplacedSetError(
        fmt::format(
            "the set '{}' does not know its {} in the mesh frame (origin '{}', axes '{}'): give points "
            "in the set's own frame about its origin",
            set.body,
            !set.origin_known && !set.axes_known ? "origin and axes"
            : !set.origin_known                  ? "origin"
                                                 : "axes",
            to_string(set.origin), frame_label(set)),
        !set.origin_known, !set.axes_known);
}

}  // namespace

Eigen::Vector3d to_set_frame(const CoefficientSet& set, const Eigen::Vector3d& mesh_point) {
  require_placed(set);
  return set.axes_in_mesh * (mesh_point - set.origin_in_mesh);
}

FieldValue to_mesh_frame(const CoefficientSet& set, const FieldValue& set_value) {
  require_placed(set);
  FieldValue out;
  out.potential = set_value.potential;
  out.acceleration = set.axes_in_mesh.transpose() * set_value.acceleration;
  out.gradient = set.axes_in_mesh.transpose() * set_value.gradient * set.axes_in_mesh;
  return out;
}

}  // namespace polystokes
