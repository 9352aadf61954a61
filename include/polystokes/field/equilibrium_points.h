// Equilibrium points of a uniformly rotating body: where gravity and the centrifugal acceleration cancel
// outside the body, with their linear stability in the rotating frame and their Jacobi constant.
#pragma once

#include <Eigen/Core>
#include <complex>
#include <functional>
#include <string>
#include <vector>

#include "polystokes/core/field_value.h"
#include "polystokes/core/mesh.h"
#include "polystokes/field/surface_environment.h"
#include "polystokes/mesh/mass_properties.h"

namespace polystokes {

/// The field of a whole body at many points (mesh frame, m): potential, acceleration and gradient tensor,
/// e.g. PolyhedronGravity::evaluate.
using FieldFunction = std::function<std::vector<FieldValue>(const Points&)>;

/// How the linearised motion about a point behaves, from the eigenvalues of the 6 x 6 matrix of
/// d/dt (dx, dv) = [[0, I], [H, -2 [omega]x]] dx (rotating frame; H the Hessian of U + 1/2 omega^2 d^2).
struct LinearStability {
  std::vector<std::complex<double>> eigenvalues;  ///< s^-1, sorted by real part, then imaginary part
  int imaginary_pairs = 0;                        ///< +-i b: oscillation
  int real_pairs = 0;                             ///< +-a: exponential departure (and approach)
  int complex_quartets = 0;                       ///< +-a +-i b: spiralling departure
  bool stable() const { return real_pairs == 0 && complex_quartets == 0; }
  /// "linearly stable (3 imaginary pairs)" or "unstable (1 real pair, 2 imaginary pairs)".
  std::string describe() const;
};

/// The eigenvalue structure of the linearised motion with effective-potential Hessian `hessian` (s^-2) and
/// angular velocity `omega` (rad s^-1). An eigenvalue counts as imaginary when its real part is below
/// 1e-6 of its modulus. O(1).
LinearStability linear_stability(const Eigen::Matrix3d& hessian, const Eigen::Vector3d& omega);

struct EquilibriumPoint {
  Eigen::Vector3d position = Eigen::Vector3d::Zero();  ///< mesh frame, m
  double distance_from_axis = 0;                       ///< m
  double azimuth = 0;   ///< degrees, about the spin axis from the frame's first axis projected on the plane
  double residual = 0;  ///< |effective acceleration| left at the point, m s^-2
  /// Jacobi constant of a particle at rest there, C = -U - 1/2 omega^2 d^2 (J kg^-1; the energy integral of
  /// the rotating frame, in the sign of the effective potential W of surface_environment).
  double jacobi = 0;
  LinearStability stability;
};

/// How the search runs. It looks in the plane through the spin centre normal to the axis, where the points
/// of a rotating body lie when it is near-symmetric about that plane, on a polar grid of `azimuths` by
/// `radii` points from `inner` to `outer` (geometric spacing; grid points inside the body are skipped).
/// Along each azimuth, the radii of least |effective acceleration| (where its radial part nearly vanishes,
/// the curve every equilibrium lies on) start a damped Newton iteration in three dimensions on the effective
/// acceleration with the gradient tensor as its Jacobian. Converged points outside the body are kept once
/// (points closer than 1e-6 of the outer radius are the same), in the order of their seeds.
struct EquilibriumSearch {
  int azimuths = 72;
  int radii = 32;
  double inner = 0;  ///< m; 0: half the largest vertex distance from the spin centre
  double outer =
      0;  ///< m; 0: 2.5 times the larger of that distance and the synchronous radius (GM/omega^2)^(1/3)
  double tolerance = 1e-11;  ///< convergence: |acceleration| below this times GM / r^2 at the point
  int max_iterations = 60;
};

struct EquilibriumResult {
  std::vector<EquilibriumPoint> points;  ///< sorted by azimuth
  EquilibriumSearch search;              ///< with the radii filled in
  long evaluations = 0;                  ///< field evaluations used
};

/// Equilibrium points outside `surface` (the body's closed outer mesh) of the body whose field is `field`,
/// rotating with `spin`; `gm` (m^3 s^-2) sets the synchronous radius and the convergence scale. Throws
/// ConventionError for bad settings. O((azimuths x radii + Newton steps) x field cost).
EquilibriumResult equilibrium_points(const Mesh& surface, const FieldFunction& field, double gm,
                                     const Spin& spin, const EquilibriumSearch& search = {});

/// Equilibrium points of a body of several regions (the first region's mesh is the outer surface), with the
/// exact polyhedron gravity of all regions and GM from their mass; `spin.center` should be the centre of
/// mass. `threads` as PolyhedronGravity::evaluate.
EquilibriumResult equilibrium_points(const std::vector<DensityRegion>& regions, const Spin& spin,
                                     const EquilibriumSearch& search = {}, int threads = 0);

}  // namespace polystokes
