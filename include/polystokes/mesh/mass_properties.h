// Volume, centre of mass, inertia and principal axes of a constant-density polyhedron or of several
// density regions superposed. Exact for the polyhedron (signed tetrahedra from the mesh origin to each face).
#pragma once

#include <Eigen/Core>
#include <vector>

#include "polystokes/core/coefficient_set.h"
#include "polystokes/core/density.h"
#include "polystokes/core/mesh.h"

namespace polystokes {

/// One piece of a body: a checked closed mesh and what fills it (density.h; today a constant in kg/m^3).
/// A negative density is a contrast: a void or lighter inclusion nested in another region.
struct DensityRegion {
  Mesh mesh;
  Density density;
};

/// Raw volume moments of one closed mesh about the mesh origin (m^3, m^4, m^5).
struct VolumeMoments {
  double volume = 0;                                 ///< integral of dV
  Eigen::Vector3d first = Eigen::Vector3d::Zero();   ///< integral of x dV
  Eigen::Matrix3d second = Eigen::Matrix3d::Zero();  ///< integral of x x^T dV
};

/// Exact moments by signed tetrahedra (origin, a, b, c); valid for any closed outward mesh. O(F), split over
/// `threads` (0 = all hardware threads); the result does not depend on the thread count.
VolumeMoments volume_moments(const Mesh& mesh, int threads = 1);

/// Mass properties of the superposed regions, about the centre of mass, mesh frame.
struct MassProperties {
  double volume = 0;                                         ///< m^3, sum of region volumes with density > 0
  double mass = 0;                                           ///< kg, sum of density * volume
  Eigen::Vector3d center_of_mass = Eigen::Vector3d::Zero();  ///< m, mesh frame
  Eigen::Matrix3d inertia =
      Eigen::Matrix3d::Zero();  ///< kg m^2 about the COM: I = tr(J) 1 - J, J = int (x-c)(x-c)^T dm
  Eigen::Vector3d principal_moments = Eigen::Vector3d::Zero();  ///< kg m^2, ascending A <= B <= C
  /// Columns are the principal axes (mesh frame) in the order of principal_moments. Sign rule: the first two
  /// axes have their largest-magnitude component positive; the third is their cross product (right-handed).
  Eigen::Matrix3d principal_axes = Eigen::Matrix3d::Identity();
  std::vector<double> region_volumes;  ///< m^3, volume of each region's mesh, in the order given
};

/// Throws ConventionError if the total mass is not positive. O(total F), split over `threads` (0 = all
/// hardware threads) with a result that does not depend on the thread count.
MassProperties mass_properties(const std::vector<DensityRegion>& regions, int threads = 1);

/// The mass of one region (kg): its density integrated over its mesh's volume, by signed tetrahedra from
/// `origin` (mesh frame, m), which changes only the rounding (put it near the region). O(F), one thread.
double region_mass(const DensityRegion& region, const Eigen::Vector3d& origin = Eigen::Vector3d::Zero());

/// The density of a set's shape mesh, and where it comes from.
struct DensityChoice {
  double density = 0;  ///< kg m^-3
  std::string source;  ///< "given", "the set's region density", ...
};

/// The density to fill `mesh` with beside `set` (report, surface maps): `given` when positive; else the set's
/// region density when it records exactly one region; else the set's mass (or GM / G) over the mesh volume.
DensityChoice density_for_set_mesh(const CoefficientSet& set, const Mesh& mesh, double given = 0);

/// Largest vertex distance from `origin` over all regions (m): the radius of the Brillouin sphere. O(V) split
/// over `threads` (0 = all hardware threads).
double brillouin_radius(const std::vector<DensityRegion>& regions, const Eigen::Vector3d& origin,
                        int threads = 1);

/// Largest vertex distance from `origin` (m) of one mesh. O(V) split over `threads` (0 = all).
double max_vertex_distance(const Mesh& mesh, const Eigen::Vector3d& origin, int threads = 1);

}  // namespace polystokes
