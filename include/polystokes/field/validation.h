// Where a truncated Stokes series can be trusted: the series at every degree compared with the exact
// polyhedron gravity on spheres about the expansion origin and on shells at given altitudes above the
// surface.
#pragma once

#include <Eigen/Core>
#include <string>
#include <vector>

#include "polystokes/core/coefficient_set.h"
#include "polystokes/core/field_value.h"
#include "polystokes/mesh/mass_properties.h"

namespace polystokes {

struct ValidationOptions {
  /// Sphere radii as multiples of the Brillouin radius (about the set's expansion origin).
  std::vector<double> radius_factors = {1.0, 1.25, 1.5, 2.0, 3.0};
  /// Altitudes (m) above the surface, measured radially from the expansion origin: each sample direction
  /// u gives the point origin + (t_max + h) u, t_max the outermost crossing of the ray with the mesh.
  std::vector<double> altitudes;
  int samples = 200;     ///< points per sphere or shell (Fibonacci lattice directions, deterministic)
  double target = 1e-6;  ///< relative acceleration error the recommended degree must meet
  int threads = 0;       ///< 0 = all hardware threads; results do not depend on it
  /// The exact field by the direct sum (else the fast multipole method of fast_field.h at `accuracy`).
  bool direct = false;
  double accuracy = 1e-10;  ///< of the fast field, relative to max(|a|, GM/R_B^2)
};

/// Results on one sphere or altitude shell. Errors are relative acceleration errors
/// |a_series(L) - a_exact| / |a_exact| with the series truncated at degree L.
struct ShellResult {
  std::string label;                      ///< "1.25 R_B" or "h = 500 m"
  bool altitude = false;                  ///< an altitude shell (else a sphere)
  double value = 0;                       ///< radius factor or altitude (m)
  double radius_min = 0, radius_max = 0;  ///< distance of its points from the expansion origin, m
  long points = 0;
  long inside_brillouin = 0;      ///< points with r < Brillouin radius (the series may diverge there)
  std::vector<double> max_error;  ///< index L = 0..degree: largest error over the points
  std::vector<double> rms_error;  ///< index L: root mean square error over the points
  int recommended_degree = -1;    ///< lowest L with max_error[L] <= target; -1 if none
  int best_degree = 0;            ///< L with the smallest max_error
};

struct ValidationReport {
  int degree = 0;
  double target = 0;
  double brillouin_radius = 0;     ///< m, of the mesh(es) about the set's expansion origin
  double reference_radius = 0;     ///< m
  double gm_set = 0, gm_mesh = 0;  ///< m^3 s^-2; gm_mesh = G * sum(rho V)
  /// m^3 s^-2: the set's GM times its C00 (4pi-normalized), the total GM its series carries; equals gm_set
  /// unless the set was rescaled to another GM (convert --to-gm), where C00 carries the ratio.
  double gm_field = 0;
  long faces = 0;
  int samples = 0;
  std::vector<ShellResult> shells;    ///< spheres in the given order, then altitude shells
  std::vector<std::string> warnings;  ///< plain sentences: Brillouin sphere, GM / origin / mesh mismatches
  std::vector<std::string> notes;     ///< true and harmless: e.g. a GM label that C00 compensates
  /// How the exact field was evaluated: empty for the direct sum, else the fast field's accuracy and the
  /// result of its run-time check against the direct sum (one sentence).
  std::string exact_method;
};

/// Compares the series of `set` (any convention, its own origin and axes) with the exact field of the
/// regions (mesh frame). A set about the centre of mass that does not record its mesh-frame place is taken
/// about the mesh's centre of mass (with a note). Cost: samples * shells * (faces + degree^2). Throws
/// ConventionError for bad options (no shells, samples < 1, non-positive factors, negative altitudes,
/// target <= 0), and UnplacedSetError (series.h) for a set whose axes, or origin (other than the centre of
/// mass), are unknown.
ValidationReport validate_series(const std::vector<DensityRegion>& regions, const CoefficientSet& set,
                                 const ValidationOptions& options);

/// n nearly uniform unit vectors: the Fibonacci (golden-angle) lattice (Gonzalez 2010, Math. Geosci. 42,
/// 49-64).
std::vector<Eigen::Vector3d> fibonacci_directions(int n);

/// The series' error at the surface, facet by facet: where a team needs the exact field instead.
struct SurfaceSeriesError {
  int degree = 0;                  ///< the series' truncation degree
  double target = 0;               ///< relative error a facet must meet to count as good
  Points centroid;                 ///< facet centroids, mesh frame, m
  Eigen::VectorXd radius;          ///< distance from the set's expansion origin, m
  Eigen::VectorXd inside;          ///< 1 where the centroid lies inside the Brillouin sphere, else 0
  Points exact, series;            ///< accelerations, mesh frame, m s^-2
  Eigen::VectorXd relative_error;  ///< |a_series - a_exact| / |a_exact|
  double area_above_target = 0;    ///< fraction of the surface area whose error exceeds `target`
  double max_error = 0;
  std::string exact_method;  ///< how the exact field was evaluated (exact_field)
};

/// The series of `set` truncated at `degree` (-1: the set's degree) against the exact field of the regions
/// at every facet centroid of the first region's mesh (the outer surface). The set is placed as in
/// validate_series; the exact field comes from exact_field (the direct sum, or the fast multipole method to
/// 1e-10 of the scale for large meshes, far below any target). Throws as validate_series.
SurfaceSeriesError series_error_at_surface(const std::vector<DensityRegion>& regions,
                                           const CoefficientSet& set, int degree, double target,
                                           int threads = 0);

}  // namespace polystokes
