#include "polystokes/field/surface_environment.h"

#include <fmt/format.h>

#include <Eigen/Geometry>
#include <algorithm>
#include <cmath>

#include "polystokes/core/errors.h"
#include "polystokes/field/fast_field.h"

namespace polystokes {

Eigen::Vector3d Spin::angular_velocity() const { return (2.0 * M_PI / period) * axis.normalized(); }

Eigen::Vector3d Spin::centrifugal(const Eigen::Vector3d& x) const {
  const Eigen::Vector3d omega = angular_velocity();
  return -omega.cross(omega.cross(x - center));
}

double Spin::centrifugal_potential(const Eigen::Vector3d& x) const {
  return 0.5 * angular_velocity().cross(x - center).squaredNorm();
}

Points facet_centroids(const Mesh& mesh) {
  Points centroids(mesh.faces.rows(), 3);
  for (Eigen::Index f = 0; f < mesh.faces.rows(); ++f)
    centroids.row(f) = (mesh.vertices.row(mesh.faces(f, 0)) + mesh.vertices.row(mesh.faces(f, 1)) +
                        mesh.vertices.row(mesh.faces(f, 2))) /
                       3.0;
  return centroids;
}

AreaStatistics area_statistics(const Eigen::VectorXd& values, const Eigen::VectorXd& area, double low,
                               double high, int bins) {
  AreaStatistics stats;
  const double total = area.sum();
  if (values.size() == 0 || !(total > 0)) return stats;
  stats.mean = values.dot(area) / total;
  stats.minimum = values.minCoeff();
  stats.maximum = values.maxCoeff();
  // Equal extremes (a perfectly level sphere): one bin of zero width would divide by zero.
  if (!(high > low)) high = low + 1.0;
  stats.edges.resize(size_t(bins) + 1);
  for (int k = 0; k <= bins; ++k) stats.edges[size_t(k)] = low + (high - low) * k / bins;
  stats.area_fraction.assign(size_t(bins), 0.0);
  for (Eigen::Index i = 0; i < values.size(); ++i) {
    const int bin = std::clamp(int(std::floor((values[i] - low) / (high - low) * bins)), 0, bins - 1);
    stats.area_fraction[size_t(bin)] += area[i] / total;
  }
  return stats;
}

SurfaceEnvironment surface_environment(const Mesh& surface, const std::vector<FieldValue>& gravity,
                                       const Spin& spin) {
  if (!(spin.period > 0) || !std::isfinite(spin.period))
    throw ConventionError(fmt::format("the spin period must be positive and finite, got {} s", spin.period));
  if (!(spin.axis.norm() > 0) || !spin.axis.allFinite())
    throw ConventionError("the spin axis must be a non-zero finite vector");
  const Eigen::Index faces = surface.faces.rows();
  if (Eigen::Index(gravity.size()) != faces)
    throw ConventionError(
        fmt::format("{} gravity values for {} facets of {}", gravity.size(), faces, surface.source));

  SurfaceEnvironment env;
  env.spin = spin;
  env.spin.axis = spin.axis.normalized();
  SurfaceFacets& out = env.facets;
  out.centroid = facet_centroids(surface);
  out.normal.resize(faces, 3);
  out.gravity.resize(faces, 3);
  out.centrifugal.resize(faces, 3);
  out.total.resize(faces, 3);
  out.area.resize(faces);
  out.potential.resize(faces);
  out.effective.resize(faces);
  out.slope.resize(faces);
  out.launch_speed.resize(faces);
  const Eigen::Vector3d omega = env.spin.angular_velocity();
  for (Eigen::Index f = 0; f < faces; ++f) {
    const Eigen::Vector3d a = surface.vertices.row(surface.faces(f, 0)).transpose();
    const Eigen::Vector3d b = surface.vertices.row(surface.faces(f, 1)).transpose();
    const Eigen::Vector3d c = surface.vertices.row(surface.faces(f, 2)).transpose();
    const Eigen::Vector3d doubled = (b - a).cross(c - a);
    const Eigen::Vector3d n = doubled.normalized();
    const Eigen::Vector3d x = out.centroid.row(f).transpose();
    const FieldValue& field = gravity[size_t(f)];
    const Eigen::Vector3d centrifugal = env.spin.centrifugal(x);
    const Eigen::Vector3d total = field.acceleration + centrifugal;
    out.normal.row(f) = n.transpose();
    out.area[f] = 0.5 * doubled.norm();
    out.gravity.row(f) = field.acceleration.transpose();
    out.centrifugal.row(f) = centrifugal.transpose();
    out.total.row(f) = total.transpose();
    out.potential[f] = field.potential;
    out.effective[f] = -field.potential - env.spin.centrifugal_potential(x);
    // atan2 of the parts across and along -n keeps the angle accurate near 0 and 180 degrees.
    out.slope[f] = std::atan2(total.cross(-n).norm(), total.dot(-n)) * 180.0 / M_PI;
    const Eigen::Vector3d w = omega.cross(x - env.spin.center);
    const double along = n.dot(w);
    out.launch_speed[f] =
        -along + std::sqrt(std::max(0.0, along * along - w.squaredNorm() + 2.0 * field.potential));
    if (out.slope[f] > 90.0) ++env.overhanging;
  }
  env.total_area = out.area.sum();
  if (!(env.total_area > 0)) throw ConventionError(surface.source + ": the surface has no area");
  env.reference_potential = out.effective.dot(out.area) / env.total_area;
  double g = 0;
  for (Eigen::Index f = 0; f < faces; ++f) g += out.total.row(f).norm() * out.area[f];
  env.reference_gravity = g / env.total_area;
  out.height = (out.effective.array() - env.reference_potential) / env.reference_gravity;

  env.slope = area_statistics(out.slope, out.area, 0.0, 90.0, 18);
  env.height = area_statistics(out.height, out.area, out.height.minCoeff(), out.height.maxCoeff(), 20);
  env.launch_speed = area_statistics(out.launch_speed, out.area, out.launch_speed.minCoeff(),
                                     out.launch_speed.maxCoeff(), 20);
  return env;
}

SurfaceEnvironment surface_environment(const std::vector<DensityRegion>& regions, Spin spin, int threads) {
  if (regions.empty()) throw ConventionError("the surface environment needs at least one region");
  spin.center = mass_properties(regions, threads).center_of_mass;
  const Mesh& surface = regions.front().mesh;
  FastFieldOptions options;
  options.threads = threads;
  std::string method;
  const std::vector<FieldValue> gravity = exact_field(regions, facet_centroids(surface), options, &method);
  SurfaceEnvironment env = surface_environment(surface, gravity, spin);
  env.gravity_method = method;
  return env;
}

}  // namespace polystokes
