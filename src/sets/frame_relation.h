// How two coefficient sets' origins and axes stand to each other, as far as the sets say: the frame part of
// compare_sets, kept apart from the per-degree statistics and the diagnosis.
#pragma once

#include <Eigen/Core>
#include <optional>
#include <string>

#include "polystokes/sets/compare.h"

namespace polystokes {

// How B's origin and axes stand to A's, as far as the two sets say. A set may not know its origin or axes
// in the mesh frame (a table imported without declarations); a set whose origin is the centre of mass
// shares it with any other set of the same body even when neither knows its mesh-frame place.
struct FrameRelation {
  std::optional<Eigen::Vector3d> shift;     // B's origin -> A's origin, in B's axes, m
  std::optional<Eigen::Matrix3d> rotation;  // x_A = Q x_B
  std::string origin_unknown_because, axes_unknown_because;
};

/// The relation of B's origin and axes to A's; what is unknown is left empty with the reason filled in.
FrameRelation relate_frames(const CoefficientSet& a, const CoefficientSet& b);

/// Alignment lines and the origin/axes relation words of the comparison (see Comparison).
void describe_frames(const CoefficientSet& a, const FrameRelation& relation, bool align, Comparison& out);

}  // namespace polystokes
