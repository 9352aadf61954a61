// Exact mass-weighted solid-harmonic moments of superposed constant-density polyhedra to any degree, the
// simple reference path they are tested against, and a prepared form for many bodies of one topology.
#pragma once

#include <Eigen/Core>
#include <functional>
#include <memory>
#include <vector>

#include "polystokes/core/coefficient_set.h"
#include "polystokes/mesh/mass_properties.h"

namespace polystokes {

/// Where and how the body is expanded: origin and axes in the mesh frame, and the radius that scales
/// coordinates (kept >= the largest vertex distance so powers of r stay <= 1 and never overflow).
struct HarmonicFrame {
  Eigen::Vector3d origin = Eigen::Vector3d::Zero();    ///< m, mesh frame
  Eigen::Matrix3d axes = Eigen::Matrix3d::Identity();  ///< rows: expansion axes in the mesh frame
  double scale_radius = 1;                             ///< m
};

/// Mass-weighted solid-harmonic moments Q_nm = sum_regions rho int (r/Rs)^n Pnm(sin lat) e^{i m lon} dV (kg),
/// with fully normalized Pnm (legendre.h); re holds the cosine part, im the sine part; (degree+1)^2, lower
/// triangle.
struct HarmonicMoments {
  int degree = 0;
  double scale_radius = 1;  ///< Rs, m
  Eigen::MatrixXd re, im;
};

/// Execution controls for long computations; results do not depend on `threads`.
struct MomentOptions {
  int threads = 0;                       ///< 0 = all hardware threads
  std::function<void(double)> progress;  ///< called with the fraction done (from worker threads,
                                         ///< serialized, at most about 1000 times, last with 1)
};

/// Largest degree the moments accept (the floating-point range of the scaled recursion; higher degrees throw
/// ResourceError).
constexpr int max_moment_degree = 3000;

/// Exact moments, O(F * degree^2). Each signed tetrahedron (origin, a, b, c) contributes through Whittaker's
/// integral representation of solid harmonics and the closed form of a power of a linear form over a simplex.
/// Throws ConventionError for a negative degree or a frame whose scale radius is below the largest vertex
/// distance, ResourceError beyond max_moment_degree or the memory limit, MeshError for a face naming a
/// vertex that does not exist.
HarmonicMoments harmonic_moments(const std::vector<DensityRegion>& regions, const HarmonicFrame& frame,
                                 int degree, const MomentOptions& options = {});

/// Slow, simple reference path: Gauss product quadrature on each face triangle, exact for the polynomial
/// integrands, with Legendre functions from the standard recursion. O(F * degree^4); for tests.
HarmonicMoments harmonic_moments_reference(const std::vector<DensityRegion>& regions,
                                           const HarmonicFrame& frame, int degree);

/// The topology work of harmonic_moments done once: the regions' faces cut into blocks and grouped into
/// vertex fans, for many bodies that differ only in vertex positions and densities (Monte Carlo samples of
/// one shape). About 32 bytes per face.
class PreparedMoments {
 public:
  /// Prepares the faces of `regions` for moments up to `degree`; the vertex positions only choose the face
  /// order (a spatial sort for meshes listed without locality). Throws as harmonic_moments.
  PreparedMoments(const std::vector<DensityRegion>& regions, int degree);
  ~PreparedMoments();
  PreparedMoments(PreparedMoments&&) noexcept;
  PreparedMoments& operator=(PreparedMoments&&) noexcept;

  int degree() const;

  /// harmonic_moments of `regions` at `degree` (-1: the prepared degree; at most the prepared degree), which
  /// must have the prepared topology: as many regions, each with the very faces it was prepared with
  /// (ConventionError otherwise). Sums in the prepared block order, so results are identical for any thread
  /// count.
  HarmonicMoments moments(const std::vector<DensityRegion>& regions, const HarmonicFrame& frame,
                          const MomentOptions& options = {}, int degree = -1) const;

 private:
  struct Blocks;
  std::unique_ptr<Blocks> blocks_;
};

/// Fully normalized coefficients from moments: C + iS = Q_nm (Rs/R)^n / (M (2n+1)).
void moments_to_coefficients(const HarmonicMoments& moments, double mass, double reference_radius,
                             CoefficientSet& set);

}  // namespace polystokes
