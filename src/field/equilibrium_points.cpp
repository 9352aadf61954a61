#include "polystokes/field/equilibrium_points.h"

#include <fmt/format.h>

#include <Eigen/Eigenvalues>
#include <Eigen/Geometry>
#include <Eigen/LU>
#include <algorithm>
#include <atomic>
#include <cmath>
#include <limits>
#include <optional>

#include "internal/parallel.h"
#include "polystokes/core/constants.h"
#include "polystokes/core/errors.h"
#include "polystokes/field/polyhedron_gravity.h"
#include "polystokes/mesh/geometry.h"

namespace polystokes {
namespace {

Eigen::Matrix3d cross_matrix(const Eigen::Vector3d& w) {
  Eigen::Matrix3d m;
  m << 0, -w.z(), w.y(), w.z(), 0, -w.x(), -w.y(), w.x(), 0;
  return m;
}

/// Effective acceleration (gravity plus centrifugal) and its Jacobian at one point.
struct Effective {
  FieldValue field;
  Eigen::Vector3d acceleration;
  Eigen::Matrix3d hessian;
};

class Evaluator {
 public:
  Evaluator(const FieldFunction& field, const Spin& spin) : field_(field), spin_(spin) {
    const Eigen::Vector3d omega = spin.angular_velocity();
    centrifugal_hessian_ = omega.squaredNorm() * Eigen::Matrix3d::Identity() - omega * omega.transpose();
  }

  std::vector<Effective> at(const Points& points) {
    evaluations += long(points.rows());
    const std::vector<FieldValue> values = field_(points);
    std::vector<Effective> out(values.size());
    for (size_t i = 0; i < values.size(); ++i) {
      const Eigen::Vector3d x = points.row(Eigen::Index(i)).transpose();
      out[i] = {values[i], values[i].acceleration + spin_.centrifugal(x),
                values[i].gradient + centrifugal_hessian_};
    }
    return out;
  }

  Effective at(const Eigen::Vector3d& x) {
    Points one(1, 3);
    one.row(0) = x.transpose();
    return at(one).front();
  }

  std::atomic<long> evaluations{0};

 private:
  const FieldFunction& field_;
  const Spin& spin_;
  Eigen::Matrix3d centrifugal_hessian_;
};

}  // namespace

std::string LinearStability::describe() const {
  std::vector<std::string> parts;
  auto add = [&](int count, const char* one, const char* many) {
    if (count > 0) parts.push_back(fmt::format("{} {}", count, count == 1 ? one : many));
  };
  add(real_pairs, "real pair", "real pairs");
  add(complex_quartets, "complex quartet", "complex quartets");
  add(imaginary_pairs, "imaginary pair", "imaginary pairs");
  return fmt::format("{} ({})", stable() ? "linearly stable" : "unstable", fmt::join(parts, ", "));
}

LinearStability linear_stability(const Eigen::Matrix3d& hessian, const Eigen::Vector3d& omega) {
  Eigen::Matrix<double, 6, 6> a = Eigen::Matrix<double, 6, 6>::Zero();
  a.block<3, 3>(0, 3) = Eigen::Matrix3d::Identity();
  a.block<3, 3>(3, 0) = 0.5 * (hessian + hessian.transpose());
  a.block<3, 3>(3, 3) = -2.0 * cross_matrix(omega);
  const Eigen::EigenSolver<Eigen::Matrix<double, 6, 6>> solver(a, false);
  LinearStability out;
  for (int k = 0; k < 6; ++k) out.eigenvalues.push_back(solver.eigenvalues()[k]);
  std::sort(out.eigenvalues.begin(), out.eigenvalues.end(),
            [](auto x, auto y) { return x.real() != y.real() ? x.real() < y.real() : x.imag() < y.imag(); });
  // The spectrum of a Hamiltonian system is symmetric under lambda -> -lambda and conjugation, so the
  // eigenvalues with a positive real part (or, when imaginary, a positive imaginary part) name the kinds.
  for (const auto& lambda : out.eigenvalues) {
    const double modulus = std::abs(lambda);
    const bool imaginary = std::abs(lambda.real()) <= 1e-6 * modulus;
    const bool real = std::abs(lambda.imag()) <= 1e-6 * modulus;
    if (imaginary) {
      if (lambda.imag() >= 0) ++out.imaginary_pairs;
    } else if (real) {
      if (lambda.real() > 0) ++out.real_pairs;
    } else if (lambda.real() > 0 && lambda.imag() > 0) {
      ++out.complex_quartets;
    }
  }
  return out;
}

EquilibriumResult equilibrium_points(const Mesh& surface, const FieldFunction& field, double gm,
                                     const Spin& spin, const EquilibriumSearch& settings) {
  if (!(gm > 0)) throw ConventionError(fmt::format("equilibrium search: GM must be positive, got {}", gm));
  if (settings.azimuths < 8 || settings.radii < 4)
    throw ConventionError("equilibrium search: at least 8 azimuths and 4 radii");
  const Eigen::Vector3d axis = spin.axis.normalized();
  const double omega = spin.angular_velocity().norm();
  double reach = 0;
  for (Eigen::Index v = 0; v < surface.vertices.rows(); ++v)
    reach = std::max(reach, (surface.vertices.row(v).transpose() - spin.center).norm());
  EquilibriumResult result;
  result.search = settings;
  EquilibriumSearch& s = result.search;
  const double synchronous = std::cbrt(gm / (omega * omega));
  if (s.inner == 0) s.inner = 0.5 * reach;
  if (s.outer == 0) s.outer = 2.5 * std::max(reach, synchronous);
  if (!(s.inner > 0) || !(s.outer > s.inner))
    throw ConventionError(fmt::format(
        "equilibrium search: radii must satisfy 0 < inner < outer, got {} and {} m", s.inner, s.outer));

  // The plane's axes: the mesh x axis projected on the plane (or y when x is along the spin axis).
  Eigen::Vector3d e1 = Eigen::Vector3d::UnitX() - axis.x() * axis;
  if (e1.norm() < 1e-6) e1 = Eigen::Vector3d::UnitY() - axis.y() * axis;
  e1.normalize();
  const Eigen::Vector3d e2 = axis.cross(e1);
  const int na = s.azimuths, nr = s.radii;
  auto grid_point = [&](int i, int j) {
    const double angle = 2.0 * M_PI * i / na;
    const double r = s.inner * std::pow(s.outer / s.inner, double(j) / (nr - 1));
    return Eigen::Vector3d(spin.center + r * (std::cos(angle) * e1 + std::sin(angle) * e2));
  };
  auto outside = [&](const Eigen::Vector3d& x) { return winding_number(surface, x) < 0.5; };

  std::vector<int> outer_index;
  std::vector<double> residual(size_t(na * nr), std::numeric_limits<double>::infinity());
  Points grid(0, 3);
  std::vector<Eigen::Vector3d> kept;
  for (int i = 0; i < na; ++i)
    for (int j = 0; j < nr; ++j) {
      const Eigen::Vector3d x = grid_point(i, j);
      if (!outside(x)) continue;
      kept.push_back(x);
      outer_index.push_back(i * nr + j);
    }
  grid.resize(Eigen::Index(kept.size()), 3);
  for (size_t k = 0; k < kept.size(); ++k) grid.row(Eigen::Index(k)) = kept[k].transpose();
  Evaluator effective(field, spin);
  const std::vector<Effective> values = effective.at(grid);
  for (size_t k = 0; k < values.size(); ++k) {
    const double r = (kept[k] - spin.center).norm();
    residual[size_t(outer_index[k])] = values[k].acceleration.norm() / (gm / (r * r));
  }

  // Seeds: along each azimuth, the radii where |a| is least. Every equilibrium of the plane lies on the
  // curve where the radial part of a vanishes, and a seed on that curve at the nearest azimuth leads Newton
  // to it; a 2-D minimum of |a| on the grid would miss the saddles, where |a| can grow along the circle.
  std::vector<Eigen::Vector3d> seeds;
  for (int i = 0; i < na; ++i)
    for (int j = 0; j < nr; ++j) {
      const double here = residual[size_t(i * nr + j)];
      const bool below = j == 0 || residual[size_t(i * nr + j - 1)] >= here;
      const bool above = j + 1 == nr || residual[size_t(i * nr + j + 1)] > here;
      if (std::isfinite(here) && below && above) seeds.push_back(grid_point(i, j));
    }

  // Damped Newton on the effective acceleration from every seed, in parallel; kept in seed order.
  std::vector<std::optional<Effective>> ends(seeds.size());
  std::vector<Eigen::Vector3d> positions(seeds.size());
  parallel_for(seeds.size(), 0, [&](size_t k) {
    Eigen::Vector3d x = seeds[k];
    Effective e = effective.at(x);
    for (int iteration = 0; iteration < s.max_iterations; ++iteration) {
      const double r = (x - spin.center).norm();
      if (e.acceleration.norm() < s.tolerance * gm / (r * r)) {
        ends[k] = e;
        positions[k] = x;
        return;
      }
      const Eigen::Vector3d step = -e.hessian.fullPivLu().solve(e.acceleration);
      if (!step.allFinite()) return;
      double scale = 1.0;
      bool improved = false;
      for (int halving = 0; halving < 30 && !improved; ++halving, scale *= 0.5) {
        const Eigen::Vector3d trial = x + scale * step;
        const Effective t = effective.at(trial);
        if (t.acceleration.norm() < e.acceleration.norm()) {
          x = trial;
          e = t;
          improved = true;
        }
      }
      if (!improved) return;
    }
  });

  for (size_t k = 0; k < seeds.size(); ++k) {
    if (!ends[k] || !outside(positions[k])) continue;
    const Eigen::Vector3d& x = positions[k];
    const bool known = std::any_of(result.points.begin(), result.points.end(),
                                   [&](const auto& p) { return (p.position - x).norm() < 1e-6 * s.outer; });
    if (known) continue;
    const Effective& e = *ends[k];
    EquilibriumPoint point;
    point.position = x;
    const Eigen::Vector3d d = x - spin.center;
    point.distance_from_axis = (d - d.dot(axis) * axis).norm();
    point.azimuth = std::atan2(d.dot(e2), d.dot(e1)) * 180.0 / M_PI;
    if (point.azimuth < 0) point.azimuth += 360.0;
    point.residual = e.acceleration.norm();
    point.jacobi = -e.field.potential - spin.centrifugal_potential(x);
    point.stability = linear_stability(e.hessian, spin.angular_velocity());
    result.points.push_back(point);
  }
  std::sort(result.points.begin(), result.points.end(),
            [](const auto& a, const auto& b) { return a.azimuth < b.azimuth; });
  result.evaluations = effective.evaluations;
  return result;
}

EquilibriumResult equilibrium_points(const std::vector<DensityRegion>& regions, const Spin& spin,
                                     const EquilibriumSearch& search, int threads) {
  if (regions.empty()) throw ConventionError("the equilibrium search needs at least one region");
  const PolyhedronGravity gravity(regions);
  const FieldFunction field = [&](const Points& points) { return gravity.evaluate(points, threads); };
  const double gm = gravitational_constant * mass_properties(regions, threads).mass;
  return equilibrium_points(regions.front().mesh, field, gm, spin, search);
}

}  // namespace polystokes
