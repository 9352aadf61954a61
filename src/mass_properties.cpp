#include "mass_properties.h"

#include <Eigen/Dense>
#include <algorithm>
#include <cmath>

#include "errors.h"

namespace polystokes {

VolumeMoments volume_moments(const Mesh& mesh) {
  VolumeMoments moments;
  for (Eigen::Index f = 0; f < mesh.faces.rows(); ++f) {
    const Eigen::Vector3d a = mesh.vertices.row(mesh.faces(f, 0)).transpose();
    const Eigen::Vector3d b = mesh.vertices.row(mesh.faces(f, 1)).transpose();
    const Eigen::Vector3d c = mesh.vertices.row(mesh.faces(f, 2)).transpose();
    const double tet_volume = a.dot(b.cross(c)) / 6.0;
    const Eigen::Vector3d sum = a + b + c;  // the fourth vertex is the origin
    moments.volume += tet_volume;
    // Centroid of a tetrahedron is the mean of its four vertices.
    moments.first += tet_volume * sum / 4.0;
    // Second moment of a simplex: int x x^T dV = V/20 (sum_k v_k v_k^T + s s^T), s = sum of vertices
    // (Tonon 2004, "Explicit exact formulas for the 3-D tetrahedron inertia tensor in terms of its vertex
    // coordinates", J. Math. Stat. 1(1); equivalent covariance form of the uniform simplex).
    moments.second += tet_volume / 20.0 * (a * a.transpose() + b * b.transpose() + c * c.transpose() + sum * sum.transpose());
  }
  return moments;
}

MassProperties mass_properties(const std::vector<DensityRegion>& regions) {
  MassProperties props;
  Eigen::Vector3d first = Eigen::Vector3d::Zero();
  Eigen::Matrix3d second = Eigen::Matrix3d::Zero();
  for (const auto& region : regions) {
    const VolumeMoments m = volume_moments(region.mesh);
    if (region.density > 0) props.volume += m.volume;
    props.mass += region.density * m.volume;
    first += region.density * m.first;
    second += region.density * m.second;
  }
  if (!(props.mass > 0)) throw ConventionError("total mass is not positive; check densities and region meshes");
  props.center_of_mass = first / props.mass;
  const Eigen::Matrix3d J = second - props.mass * props.center_of_mass * props.center_of_mass.transpose();
  props.inertia = J.trace() * Eigen::Matrix3d::Identity() - J;

  Eigen::SelfAdjointEigenSolver<Eigen::Matrix3d> solver(props.inertia);
  props.principal_moments = solver.eigenvalues();  // ascending
  Eigen::Matrix3d axes = solver.eigenvectors();
  for (int k = 0; k < 2; ++k) {
    Eigen::Index largest;
    axes.col(k).cwiseAbs().maxCoeff(&largest);
    if (axes(largest, k) < 0) axes.col(k) = -axes.col(k);
  }
  axes.col(2) = axes.col(0).cross(axes.col(1));
  props.principal_axes = axes;
  return props;
}

double max_vertex_distance(const Mesh& mesh, const Eigen::Vector3d& origin) {
  double radius = 0;
  for (Eigen::Index i = 0; i < mesh.vertices.rows(); ++i)
    radius = std::max(radius, (mesh.vertices.row(i).transpose() - origin).norm());
  return radius;
}

double brillouin_radius(const std::vector<DensityRegion>& regions, const Eigen::Vector3d& origin) {
  double radius = 0;
  for (const auto& region : regions) radius = std::max(radius, max_vertex_distance(region.mesh, origin));
  return radius;
}

}  // namespace polystokes
