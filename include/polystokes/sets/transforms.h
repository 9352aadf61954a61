// Exact changes of a coefficient set's reference radius, GM, expansion origin and axes: the same exterior
// field, described differently. Formulas, derivations and sources: docs/conventions.md.
#pragma once

#include <Eigen/Core>
#include <string>
#include <vector>

#include "polystokes/core/coefficient_set.h"
#include "polystokes/core/errors.h"

namespace polystokes {

/// Same field with reference radius `radius` (m): C, S and sigmas times (R_old/R_new)^n. Exact up to one
/// rounding per coefficient; any convention. Throws ConventionError for a non-positive radius. O(degree^2).
CoefficientSet rescale_reference_radius(const CoefficientSet& set, double radius);

/// Same field with GM `gm` (m^3 s^-2): every coefficient and sigma times GM_old/GM_new (C00 included, so
/// C00 = GM_old/GM_new afterwards). Throws ConventionError for a non-positive GM. O(degree^2).
CoefficientSet rescale_gm(const CoefficientSet& set, double gm);

/// The same set cut at `degree` (0 <= degree <= set.degree): C, S and sigmas of degrees 0..degree kept bit for
/// bit, the rest dropped; a history line records the cut. Any convention. Throws ConventionError for a degree
/// outside that range. O(degree^2).
CoefficientSet truncate_degree(const CoefficientSet& set, int degree);

/// Centre of mass relative to the expansion origin implied by the degree-1 terms (m, set frame):
/// (x, y, z) = sqrt(3) R (C11, S11, C10) / C00 in fully normalized terms. Zero for a degree-0 set.
Eigen::Vector3d center_of_mass_offset(const CoefficientSet& set);

struct ShiftOptions {
  /// A shift longer than the Brillouin radius puts the new origin outside the sphere the input is valid
  /// outside of; refused (ShiftOutsideError) unless this is set (the set then carries a note saying so).
  bool allow_outside = false;
};

/// The refusal of a shift that leaves the Brillouin sphere without ShiftOptions::allow_outside: a
/// ConventionError the caller may complete with how its user gives that permission.
class ShiftOutsideError : public ConventionError {
 public:
  using ConventionError::ConventionError;
};

/// Moves the expansion origin by `shift` (m, set frame): the new origin is old origin + shift. Exact to the
/// set's degree: the complex multipole moments are translated by the addition theorem of regular solid
/// harmonics (Hobson 1931, The Theory of Spherical and Ellipsoidal Harmonics, ch. III; in the form of Epton
/// & Dembart 1995, SIAM J. Sci. Comput. 16, 865-897), with Racah-type scaling that keeps every factor a
/// square root of a binomial coefficient. Degree n of the result mixes in degrees 0..n of the input.
/// Sigmas are propagated assuming uncorrelated input errors. origin_in_mesh (unknown stays unknown, as does
/// the place of a non-zero shift along unknown axes), origin, brillouin_radius
/// (now an upper bound: old radius + |shift|), notes and history are updated. The Brillouin radius used is
/// the set's, or the reference radius when the set does not know it.
/// Throws ConventionError for a refused shift (see ShiftOptions), ResourceError above degree 500
/// (O(degree^4) work). Any convention (worked in fully normalized, converted back).
CoefficientSet shift_origin(const CoefficientSet& set, const Eigen::Vector3d& shift,
                            const ShiftOptions& options = {});

/// Real Wigner-D matrices D_l(Q) for the real (fully normalized, no Condon-Shortley phase) surface
/// harmonics ordered m = -l..l, where m < 0 is the sine part of order |m|: Y_l(Q x) = D_l(Q) Y_l(x).
/// Produced degree by degree (l = 0, 1, 2, ... on successive next() calls), O(l^2) work and memory each.
/// Q is split into z-y-z Euler angles; the z rotations act exactly and the y rotation comes from the Wigner
/// d-functions by their three-term recurrence in degree (Varshalovich, Moskalev & Khersonskii 1988, Quantum
/// Theory of Angular Momentum, sec. 4.8), which stays accurate to high degree (tested to 400).
/// Throws ConventionError unless Q is a proper rotation (orthogonal to 1e-10, determinant +1).
class RealWignerD {
 public:
  explicit RealWignerD(const Eigen::Matrix3d& rotation);
  /// D of the next degree; the reference stays valid until the following call.
  const Eigen::MatrixXd& next();
  /// Degree of the matrix last returned (-1 before the first call).
  int degree() const { return l_; }

 private:
  void advance_wigner_d();
  void build_real();
  double alpha_ = 0, beta_ = 0, gamma_ = 0, cos_beta_ = 1, cos_half_ = 1, sin_half_ = 0;
  int l_ = -1;
  std::vector<double> border_;  // B(l, nu) of the last degree
  Eigen::MatrixXd d1_, d2_;     // Wigner d of the last two degrees
  Eigen::MatrixXd real_;
};

/// Rotates the set's axes: a point with coordinates x in the old frame has coordinates Q x in the new one
/// (equivalently, the result is the set of the body rotated by Q about the origin, axes kept).
/// axes_in_mesh becomes Q * axes_in_mesh (unknown axes stay unknown), frame FrameKind::rotated (or `frame`);
/// the frame metadata's pole and meridian are dropped (drop_frame_orientation). Sigmas propagated assuming
/// uncorrelated errors. Any convention. O(degree^3) time, O(degree^2) memory.
CoefficientSet rotate_set(const CoefficientSet& set, const Eigen::Matrix3d& rotation,
                          FrameKind frame = FrameKind::rotated);

/// rotate_set for Q = Rz(angle) (radians) by the closed form C' = C cos(m a) - S sin(m a),
/// S' = C sin(m a) + S cos(m a): longitudes grow by `angle`. Any convention. O(degree^2).
CoefficientSet rotate_about_z(const CoefficientSet& set, double angle);

/// Q = Rz(alpha) Ry(beta) Rz(gamma) (radians; right-handed active rotations about the fixed z, y, z axes,
/// which is the same as intrinsic rotations z, y', z'' applied in the order alpha, beta, gamma).
Eigen::Matrix3d euler_zyz_matrix(double alpha, double beta, double gamma);

/// Rotation Q (rows: principal axes in the set frame) that takes the set to the principal axes of inertia
/// implied by its degree-2 terms. Degree 2 gives only the trace-free part of the second-moment tensor; its
/// eigenvectors are those of the inertia tensor. The parallel-axis part implied by the degree-1 terms is
/// removed first, so the axes are those about the centre of mass, as compute --frame principal uses.
/// Order and signs as mass_properties: ascending moments A <= B <= C, the first two axes with their
/// largest-magnitude mesh-frame component positive, the third their cross product.
/// Throws ConventionError for degree < 2 or nearly equal moments (axes undefined).
Eigen::Matrix3d principal_axes_rotation(const CoefficientSet& set);

/// rotate_set with principal_axes_rotation, frame "principal".
CoefficientSet rotate_to_principal_axes(const CoefficientSet& set);

}  // namespace polystokes
