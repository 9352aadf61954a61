// Evaluation of a spherical-harmonic (Stokes) series: potential, acceleration and gravity gradient at
// exterior points, free of the pole singularity, for any coefficient convention.
#pragma once

#include <Eigen/Core>
#include <vector>

#include "coefficient_set.h"
#include "field_value.h"

namespace polystokes {

/// Field of `set` at `point` (metres, in the set's own frame about its origin, see to_set_frame).
/// Any normalization / Condon-Shortley phase / J_n convention of the set is accepted (converted
/// internally to fully normalized). max_degree = -1 uses the set's degree; otherwise the series is
/// truncated at min(max_degree, set.degree). Only meaningful outside the Brillouin sphere (the series
/// may diverge inside). Cartesian recursion without latitude/longitude, valid at the poles; stable to
/// degree > 150. O(degree^2) per point. Throws ConventionError for a non-positive radius or the origin.
FieldValue evaluate_series(const CoefficientSet& set, const Eigen::Vector3d& point, int max_degree = -1);

/// Mesh-frame point (metres) expressed in the set's frame about its origin: axes_in_mesh * (p - origin_in_mesh).
Eigen::Vector3d to_set_frame(const CoefficientSet& set, const Eigen::Vector3d& mesh_point);

}  // namespace polystokes
