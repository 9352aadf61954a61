#include "polystokes/mesh/mass_properties.h"

#include <Eigen/Dense>
#include <algorithm>
#include <cmath>

#include "internal/parallel.h"
#include "polystokes/core/constants.h"
#include "polystokes/core/errors.h"
#include "polystokes/mesh/geometry.h"

namespace polystokes {

namespace {

// range(begin, end) for fixed chunks of [0, count), split over `threads`, results in chunk order: the
// chunks do not depend on the thread count, so neither does anything summed from them in that order.
template <class Result, class Range>
std::vector<Result> chunk_results(Eigen::Index count, int threads, Range&& range) {
  constexpr Eigen::Index chunk = 1 << 16;
  const long chunks = long((count + chunk - 1) / chunk);
  std::vector<Result> results(static_cast<size_t>(chunks));
  parallel_for(size_t(chunks), threads, [&](size_t i) {
    results[i] = range(Eigen::Index(i) * chunk, std::min(count, Eigen::Index(i + 1) * chunk));
  });
  return results;
}

// Moments of faces [begin, end). The second moment keeps its six distinct entries: per face,
//   int x x^T dV = V/20 (sum_k v_k v_k^T + s s^T), s = a + b + c
// (Tonon 2004, "Explicit exact formulas for the 3-D tetrahedron inertia tensor in terms of its vertex
// coordinates", J. Math. Stat. 1(1); equivalent covariance form of the uniform simplex), the fourth vertex
// being the origin, whose centroid is the mean of the four vertices.
VolumeMoments face_range_moments(const Mesh& mesh, Eigen::Index begin, Eigen::Index end) {
  double six_volume = 0;
  Eigen::Vector3d first = Eigen::Vector3d::Zero();
  Eigen::Vector3d diagonal = Eigen::Vector3d::Zero(), off = Eigen::Vector3d::Zero();  // xx yy zz; xy xz yz
  for (Eigen::Index f = begin; f < end; ++f) {
    const Eigen::Vector3d a = mesh.vertices.row(mesh.faces(f, 0)).transpose();
    const Eigen::Vector3d b = mesh.vertices.row(mesh.faces(f, 1)).transpose();
    const Eigen::Vector3d c = mesh.vertices.row(mesh.faces(f, 2)).transpose();
    const double w = a.dot(b.cross(c));  // 6 V
    const Eigen::Vector3d s = a + b + c;
    six_volume += w;
    first += w * s;
    diagonal += w * (a.cwiseAbs2() + b.cwiseAbs2() + c.cwiseAbs2() + s.cwiseAbs2());
    const Eigen::Vector3d ra(a.x(), a.x(), a.y()), rb(b.x(), b.x(), b.y()), rc(c.x(), c.x(), c.y());
    const Eigen::Vector3d rs(s.x(), s.x(), s.y());
    const Eigen::Vector3d ca(a.y(), a.z(), a.z()), cb(b.y(), b.z(), b.z()), cc(c.y(), c.z(), c.z());
    const Eigen::Vector3d cs(s.y(), s.z(), s.z());
    off += w * (ra.cwiseProduct(ca) + rb.cwiseProduct(cb) + rc.cwiseProduct(cc) + rs.cwiseProduct(cs));
  }
  VolumeMoments moments;
  moments.volume = six_volume / 6.0;
  moments.first = first / 24.0;
  moments.second.diagonal() = diagonal / 120.0;
  moments.second(0, 1) = moments.second(1, 0) = off[0] / 120.0;
  moments.second(0, 2) = moments.second(2, 0) = off[1] / 120.0;
  moments.second(1, 2) = moments.second(2, 1) = off[2] / 120.0;
  return moments;
}

}  // namespace

VolumeMoments volume_moments(const Mesh& mesh, int threads) {
  VolumeMoments moments;
  for (const auto& p : chunk_results<VolumeMoments>(
           mesh.faces.rows(), threads,
           [&](Eigen::Index begin, Eigen::Index end) { return face_range_moments(mesh, begin, end); })) {
    moments.volume += p.volume;
    moments.first += p.first;
    moments.second += p.second;
  }
  return moments;
}

double region_mass(const DensityRegion& region, const Eigen::Vector3d& origin) {
  return region.density.constant() * signed_volume(region.mesh, origin);
}

MassProperties mass_properties(const std::vector<DensityRegion>& regions, int threads) {
  MassProperties props;
  Eigen::Vector3d first = Eigen::Vector3d::Zero();
  Eigen::Matrix3d second = Eigen::Matrix3d::Zero();
  for (const auto& region : regions) {
    const VolumeMoments m = volume_moments(region.mesh, threads);
    props.region_volumes.push_back(m.volume);
    // A constant density scales the volume moments (the one case of density.h so far).
    const double rho = region.density.constant();
    if (rho > 0) props.volume += m.volume;
    props.mass += rho * m.volume;
    first += rho * m.first;
    second += rho * m.second;
  }
  if (!(props.mass > 0))
    throw ConventionError("total mass is not positive; check densities and region meshes");
  props.center_of_mass = first / props.mass;
  const Eigen::Matrix3d J = second - props.mass * props.center_of_mass * props.center_of_mass.transpose();
  props.inertia = J.trace() * Eigen::Matrix3d::Identity() - J;

  Eigen::SelfAdjointEigenSolver<Eigen::Matrix3d> solver(props.inertia);
  props.principal_moments = solver.eigenvalues();  // ascending
  props.principal_axes = with_axis_sign_rule(solver.eigenvectors());
  return props;
}

double max_vertex_distance(const Mesh& mesh, const Eigen::Vector3d& origin, int threads) {
  double radius = 0;  // a maximum is exact in any order
  for (double r :
       chunk_results<double>(mesh.vertices.rows(), threads, [&](Eigen::Index begin, Eigen::Index end) {
         double largest = 0;
         for (Eigen::Index v = begin; v < end; ++v)
           largest = std::max(largest, (mesh.vertices.row(v).transpose() - origin).squaredNorm());
         return largest;
       }))
    radius = std::max(radius, r);
  return std::sqrt(radius);
}

double brillouin_radius(const std::vector<DensityRegion>& regions, const Eigen::Vector3d& origin,
                        int threads) {
  double radius = 0;
  for (const auto& region : regions)
    radius = std::max(radius, max_vertex_distance(region.mesh, origin, threads));
  return radius;
}

DensityChoice density_for_set_mesh(const CoefficientSet& set, const Mesh& mesh, double given) {
  if (given > 0) return {given, "given"};
  if (set.regions.size() == 1 && set.regions[0].density > 0)
    return {set.regions[0].density, "the set's region density"};
  const double mass = set.mass > 0 ? set.mass : set.gm / gravitational_constant;
  return {mass / volume_moments(mesh).volume,
          set.mass > 0 ? "the set's mass over the mesh volume" : "GM / G over the mesh volume"};
}

}  // namespace polystokes
