// Exact constant-density Stokes coefficients of polyhedra to any degree, and the fully normalized
// associated Legendre functions they are defined with (geodesy 4pi normalization, no Condon-Shortley phase).
#pragma once

#include <Eigen/Core>
#include <functional>
#include <vector>

#include "polystokes/core/coefficient_set.h"
#include "polystokes/mesh/mass_properties.h"

namespace polystokes {

/// Newtonian constant of gravitation, CODATA 2018 recommended value (m^3 kg^-1 s^-2).
constexpr double gravitational_constant = 6.67430e-11;

/// Fully normalized Pnm(t), t = sin(latitude), for 0 <= m <= n <= degree, into `out` ((degree+1)^2, lower
/// triangle; upper triangle zero). Standard forward column recursion (Holmes & Featherstone 2002,
/// J. Geodesy 76). Accurate to degree ~1500 away from the poles; O(degree^2).
void fully_normalized_legendre(int degree, double t, Eigen::MatrixXd& out);
Eigen::MatrixXd fully_normalized_legendre(int degree, double t);

/// Where and how the body is expanded: origin and axes in the mesh frame, and the radius that scales
/// coordinates (kept >= the largest vertex distance so powers of r stay <= 1 and never overflow).
struct HarmonicFrame {
  Eigen::Vector3d origin = Eigen::Vector3d::Zero();            ///< m, mesh frame
  Eigen::Matrix3d axes = Eigen::Matrix3d::Identity();          ///< rows: expansion axes in the mesh frame
  double scale_radius = 1;                                     ///< m
};

/// Mass-weighted solid-harmonic moments Q_nm = sum_regions rho int (r/Rs)^n Pnm(sin lat) e^{i m lon} dV (kg),
/// with fully normalized Pnm; re holds the cosine part, im the sine part; (degree+1)^2, lower triangle.
struct HarmonicMoments {
  int degree = 0;
  double scale_radius = 1;  ///< Rs, m
  Eigen::MatrixXd re, im;
};

/// Execution controls for long computations; results do not depend on `threads`.
struct MomentOptions {
  int threads = 0;                                ///< 0 = all hardware threads
  std::function<void(double)> progress;           ///< called with the fraction done (from worker threads,
                                                  ///< serialized, at most about 1000 times, last with 1)
};

/// Largest degree harmonic_moments and compute_coefficients accept (the floating-point range of the scaled
/// recursion; higher degrees throw ResourceError).
constexpr int max_moment_degree = 3000;

/// Faces per block of the fast path at `degree` (blocks are the unit of threading and of the ordered
/// reduction; the size depends on the degree only, never on the thread count).
Eigen::Index moment_block_faces(int degree);

/// Operator products per face and degree the fast path spends on `mesh` at `degree`: about 0.9 for meshes
/// listing faces in compact patches (5/6 at best), about 1 after the fast path's own reordering of meshes
/// without locality. For benchmarks and diagnostics; O(F log F).
double moment_products_per_face(const Mesh& mesh, int degree);

/// Exact moments, O(F * degree^2). Each signed tetrahedron (origin, a, b, c) contributes through Whittaker's
/// integral representation of solid harmonics and the closed form of a power of a linear form over a simplex.
HarmonicMoments harmonic_moments(const std::vector<DensityRegion>& regions, const HarmonicFrame& frame,
                                 int degree, const MomentOptions& options = {});

/// Slow, simple reference path: Gauss product quadrature on each face triangle, exact for the polynomial
/// integrands, with Legendre functions from the standard recursion. O(F * degree^4); for tests.
HarmonicMoments harmonic_moments_reference(const std::vector<DensityRegion>& regions, const HarmonicFrame& frame,
                                           int degree);

/// Expansion origin of a computed set: the centre of mass, the mesh origin, or a given point.
enum class OriginChoice { center_of_mass, mesh, point };
/// The set's origin label: "com", "mesh", "point".
std::string to_string(OriginChoice origin);
enum class FrameChoice { mesh, principal };

/// What `compute` does; every default is printed by the CLI.
struct ComputeOptions {
  int degree = 8;
  double reference_radius = 0;   ///< m; 0 = Brillouin radius about the chosen origin
  OriginChoice origin = OriginChoice::center_of_mass;
  Eigen::Vector3d origin_point = Eigen::Vector3d::Zero();  ///< m, mesh frame; used when origin is point
  FrameChoice frame = FrameChoice::mesh;
  Convention convention;         ///< output convention (computed fully normalized, then converted)
  std::string body = "body";
  MomentOptions execution;
};

/// Coefficients of the superposed constant-density regions with GM = G * mass, provenance filled in and the
/// operational caution in the notes; each region mesh's notices (what import and mesh_check changed, such as
/// a reversed inside-out mesh) become history lines "region R mesh FILE: NOTICE" before the computation's
/// own. Regions must already be checked (mesh_check: validate_mesh, check_regions). Throws ConventionError on
/// negative degree or non-positive radius, ResourceError when the degree would exceed memory or
/// max_moment_degree.
CoefficientSet compute_coefficients(const std::vector<DensityRegion>& regions, const ComputeOptions& options);

/// The same with the regions' mass properties already computed (mass_properties(regions)), for a caller that
/// needs them too: saves one pass over the meshes. Throws ConventionError if `props` has not one volume per
/// region.
CoefficientSet compute_coefficients(const std::vector<DensityRegion>& regions, const MassProperties& props,
                                    const ComputeOptions& options);

/// Fully normalized coefficients from moments: C + iS = Q_nm (Rs/R)^n / (M (2n+1)).
void moments_to_coefficients(const HarmonicMoments& moments, double mass, double reference_radius,
                             CoefficientSet& set);

/// The caution every shape-derived set carries in its notes.
const char* operational_caution();

}  // namespace polystokes
