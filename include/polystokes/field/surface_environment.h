// The environment at the surface of a uniformly rotating body: gravity plus centrifugal acceleration at every
// facet, slope, dynamic height and launch speed, with their area-weighted statistics.
#pragma once

#include <Eigen/Core>
#include <string>
#include <vector>

#include "polystokes/core/field_value.h"
#include "polystokes/core/mesh.h"
#include "polystokes/mesh/mass_properties.h"

namespace polystokes {

/// A uniform rotation about a fixed axis, right-handed about `axis`.
struct Spin {
  double period = 0;                                ///< s, > 0
  Eigen::Vector3d axis = Eigen::Vector3d::UnitZ();  ///< unit vector, mesh frame
  Eigen::Vector3d center =
      Eigen::Vector3d::Zero();  ///< a point of the axis (the centre of mass), mesh frame, m
  /// omega = 2 pi / period along the axis, rad s^-1.
  Eigen::Vector3d angular_velocity() const;
  /// omega x (omega x (x - center)) with the opposite sign: the centrifugal acceleration at x, m s^-2.
  Eigen::Vector3d centrifugal(const Eigen::Vector3d& x) const;
  /// 1/2 omega^2 d^2, d the distance of x from the axis: the centrifugal potential, m^2 s^-2.
  double centrifugal_potential(const Eigen::Vector3d& x) const;
};

/// Facet centroids of `mesh`, one per row, mesh frame, m: where the surface quantities are evaluated.
Points facet_centroids(const Mesh& mesh);

/// Area-weighted statistics of one quantity over the surface.
struct AreaStatistics {
  double mean = 0, minimum = 0, maximum = 0;  ///< area-weighted mean; extremes over the facets
  std::vector<double> edges;                  ///< histogram bin edges, ascending (bins + 1 values)
  std::vector<double> area_fraction;          ///< fraction of the surface area in each bin (sums to 1)
};

/// Area-weighted statistics of `values` (one per facet) with `bins` equal bins from `low` to `high`; values
/// outside go to the first or last bin. O(F).
AreaStatistics area_statistics(const Eigen::VectorXd& values, const Eigen::VectorXd& area, double low,
                               double high, int bins);

/// Per-facet results, one row per facet in the mesh's face order. Potentials in the geodesy sign convention
/// of FieldValue (U > 0); the effective potential is W = -U - 1/2 omega^2 d^2, the potential energy per unit
/// mass in the rotating frame (J kg^-1), which is lower where a particle at rest would go.
struct SurfaceFacets {
  Points centroid;               ///< m
  Points normal;                 ///< unit outward normal
  Eigen::VectorXd area;          ///< m^2
  Points gravity;                ///< gravitational acceleration, m s^-2
  Points centrifugal;            ///< centrifugal acceleration, m s^-2
  Points total;                  ///< their sum, m s^-2
  Eigen::VectorXd potential;     ///< gravitational potential U, m^2 s^-2
  Eigen::VectorXd effective;     ///< W = -U - 1/2 omega^2 d^2, J kg^-1
  Eigen::VectorXd slope;         ///< degrees, 0 to 180: angle between the total acceleration and -normal
  Eigen::VectorXd height;        ///< dynamic height (W - W_ref) / g_ref, m
  Eigen::VectorXd launch_speed;  ///< m s^-1, see surface_environment
};

/// Everything `surface` reports.
struct SurfaceEnvironment {
  Spin spin;
  double reference_potential = 0;  ///< W_ref, J kg^-1: area-weighted mean of W over the surface
  double reference_gravity = 0;    ///< g_ref, m s^-2: area-weighted mean of |total acceleration|
  double total_area = 0;           ///< m^2
  SurfaceFacets facets;
  AreaStatistics slope;         ///< degrees, bins of 5 degrees from 0 to 90 (steeper in the last)
  AreaStatistics height;        ///< m, 20 bins between the extremes
  AreaStatistics launch_speed;  ///< m s^-1, 20 bins between the extremes
  long overhanging = 0;         ///< facets whose total acceleration points away from the body (slope > 90)
  std::string gravity_method;   ///< how the gravity was evaluated (exact_field), when this module did it
};

/// The surface environment of the outer surface `surface` (closed, outward-oriented) rotating with `spin`,
/// from the gravitational field at its facet centroids (`gravity[i]` at facet_centroids(surface) row i, from
/// any model of the whole body, e.g. PolyhedronGravity).
///  - slope: the angle between the total acceleration and the inward normal (common practice), so 0 is
///    level and above 90 the surface overhangs;
///  - dynamic height: (W - W_ref) / g_ref with W_ref and g_ref the area-weighted surface means (common
///    practice); higher means uphill in the rotating frame;
///  - launch speed: the speed along the outward normal, relative to the rotating surface, that gives a
///    particle the local escape energy in the inertial frame: with w = omega x r the surface velocity and
///    n the normal, v solves |v n + w|^2 = 2 U, so v = -(n.w) + sqrt((n.w)^2 - |w|^2 + 2 U). It assumes the
///    particle escapes once its energy is positive: it ignores re-impact and the changing field on the way,
///    so it is a lower bound on the speed needed to leave for good from most places.
/// Throws ConventionError for a non-positive period, a zero axis, or a gravity list of the wrong length.
/// O(F).
SurfaceEnvironment surface_environment(const Mesh& surface, const std::vector<FieldValue>& gravity,
                                       const Spin& spin);

/// The surface environment of a body of several regions: the first region's mesh is the outer surface, the
/// field is the exact polyhedron gravity of all regions at its facet centroids (exact_field: the direct sum,
/// or the fast multipole method to 1e-10 for large meshes), and the spin axis passes through the body's
/// centre of mass (spin.center is replaced by it). `threads`: 0 = all cores.
SurfaceEnvironment surface_environment(const std::vector<DensityRegion>& regions, Spin spin, int threads = 0);

}  // namespace polystokes
