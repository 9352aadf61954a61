// Evaluation of a spherical-harmonic (Stokes) series: potential, acceleration and gravity gradient at
// exterior points, free of the pole singularity, for any coefficient convention.
#pragma once

#include <Eigen/Core>
#include <complex>
#include <vector>

#include "polystokes/core/coefficient_set.h"
#include "polystokes/core/errors.h"
#include "polystokes/core/field_value.h"
#include "polystokes/harmonics/legendre.h"

namespace polystokes {

/// A set whose origin or axes have no known place in the mesh frame (an imported table that did not declare
/// them), met where mesh-frame positions are needed: a ConventionError saying which is missing, so that the
/// caller can add how its user declares or avoids it.
class UnplacedSetError : public ConventionError {
 public:
  UnplacedSetError(const std::string& message, bool origin_missing, bool axes_missing)
      : ConventionError(message), origin_missing(origin_missing), axes_missing(axes_missing) {}
  bool origin_missing;
  bool axes_missing;
};

/// A coefficient set prepared for repeated evaluation. Method: the series is a sum of fully normalized
/// exterior solid harmonics (R/r)^(n+1) Pnm(sin lat) e^(i m lon), built at each point by a Cartesian
/// recursion in x/r, y/r, z/r and R/r (Cunningham 1970, Celestial Mechanics 2, 207-216, normalized), so
/// no latitude or longitude appears and the poles are ordinary points. Derivatives use the ladder
/// relations of solid harmonics (d/dz and d/dx +- i d/dy of a degree-n harmonic is a combination of
/// degree-(n+1) harmonics), applied to the coefficients once here: acceleration and gradient are then
/// plain sums over the same table. All factors are ratios of normalizations (bounded by ~n), so the
/// recursion is stable to high degree (tested to 200). Memory and per-point cost O(degree^2).
class SeriesModel {
 public:
  /// Any normalization / Condon-Shortley phase / J_n convention (converted to fully normalized).
  /// max_degree = -1 uses the set's degree, else min(max_degree, set.degree).
  /// Throws ConventionError for non-positive reference radius, non-finite GM or mis-sized matrices.
  explicit SeriesModel(const CoefficientSet& set, int max_degree = -1);

  int degree() const { return degree_; }
  double reference_radius() const { return radius_; }

  /// Field at `point` (metres, set frame about the set's origin). Throws ConventionError at the origin.
  FieldValue evaluate(const Eigen::Vector3d& point) const;

  /// Field truncated at every degree: element L holds the series with degrees 0..L (L = 0..degree()).
  /// Same cost as one evaluate.
  std::vector<FieldValue> partial_sums(const Eigen::Vector3d& point) const;

  /// evaluate() at each row, split over `threads` (0 = all hardware threads); identical results for any
  /// count.
  std::vector<FieldValue> evaluate(const Points& points, int threads = 0) const;

 private:
  using Triangle = std::vector<std::complex<double>>;  // entry (n, m) at n(n+1)/2 + m
  void solid_harmonics(const Eigen::Vector3d& point, int top, std::vector<std::complex<double>>& table) const;
  std::vector<FieldValue> sums_by_degree(const Eigen::Vector3d& point, bool cumulative) const;

  int degree_ = 0;
  double radius_ = 1;
  double gm_ = 0;
  // Potential and its first and second derivatives as coefficients on the same harmonic basis:
  // f = (GM/R) Re sum B_nm Ibar_nm; [0] potential, [1..3] d/dx, d/dy, d/dz, [4..9] xx, xy, xz, yy, yz, zz.
  Triangle coefficients_[10];
  LegendreRecursion recursion_{0};  // to degree + 2 (the second derivatives)
};

/// Field of `set` at `point` (metres, in the set's own frame about its origin, see to_set_frame).
/// Builds a SeriesModel each call (O(degree^2)); use SeriesModel directly for many points.
/// Only meaningful outside the Brillouin sphere (the series may diverge inside).
FieldValue evaluate_series(const CoefficientSet& set, const Eigen::Vector3d& point, int max_degree = -1);

/// Mesh-frame point (metres) expressed in the set's frame about its origin: axes_in_mesh * (p -
/// origin_in_mesh). Throws UnplacedSetError for a set whose origin or axes are not known in the mesh frame
/// (origin_known, axes_known: a table imported without declarations).
Eigen::Vector3d to_set_frame(const CoefficientSet& set, const Eigen::Vector3d& mesh_point);

/// A field value computed in the set's frame, expressed in the mesh frame (vectors and tensor rotated back).
/// Throws UnplacedSetError as to_set_frame does.
FieldValue to_mesh_frame(const CoefficientSet& set, const FieldValue& set_value);

}  // namespace polystokes
