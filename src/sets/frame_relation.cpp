#include "sets/frame_relation.h"

#include <fmt/format.h>

#include "polystokes/sets/transforms.h"

namespace polystokes {

namespace {

// Mesh-frame centre of mass of a set whose origin and (unless the offset vanishes) axes are known.
std::optional<Eigen::Vector3d> mesh_center_of_mass(const CoefficientSet& set) {
  if (!set.origin_known) return std::nullopt;
  const Eigen::Vector3d offset =
      set.degree >= 1 && set.C(0, 0) != 0 ? center_of_mass_offset(set) : Eigen::Vector3d::Zero();
  if (!set.axes_known && offset.norm() > 1e-9 * set.reference_radius) return std::nullopt;
  return Eigen::Vector3d(set.origin_in_mesh + set.axes_in_mesh.transpose() * offset);
}

std::string unknown_origin_text(const char* which, const CoefficientSet& set) {
  return set.origin == OriginKind::unknown
             ? fmt::format("{}'s origin is unknown (a table imported without an origin declaration)", which)
             : fmt::format("{}'s origin ('{}') has no known place in the mesh frame", which,
                           to_string(set.origin));
}

std::string unknown_axes_text(const char* which, const CoefficientSet& set) {
  return set.frame == FrameKind::unknown
             ? fmt::format("{}'s axes are unknown (a table imported without an axes declaration)", which)
             : fmt::format("{}'s axes ('{}') have no known directions in the mesh frame", which,
                           frame_label(set));
}

}  // namespace

FrameRelation relate_frames(const CoefficientSet& a, const CoefficientSet& b) {
  FrameRelation out;
  if (a.axes_known && b.axes_known)
    out.rotation = Eigen::Matrix3d(a.axes_in_mesh * b.axes_in_mesh.transpose());
  else if (a.frame != FrameKind::unknown && frame_label(a) == frame_label(b))
    out.rotation = Eigen::Matrix3d::Identity();  // the same axes by declaration, e.g. both "principal"
  else
    out.axes_unknown_because = unknown_axes_text(a.axes_known ? "B" : "A", a.axes_known ? b : a);

  std::optional<Eigen::Vector3d> a_place, b_place;  // mesh frame
  if (a.origin_known) a_place = a.origin_in_mesh;
  if (b.origin_known) b_place = b.origin_in_mesh;
  const bool a_com = a.origin == OriginKind::center_of_mass, b_com = b.origin == OriginKind::center_of_mass;
  if (!b_place && b_com) b_place = mesh_center_of_mass(a);
  if (!a_place && a_com) a_place = mesh_center_of_mass(b);
  if (!a_place && !b_place && a_com && b_com) {
    out.shift = Eigen::Vector3d::Zero();  // both about the centre of mass
  } else if (!a_place || !b_place) {
    out.origin_unknown_because = !a_place ? unknown_origin_text("A", a) : unknown_origin_text("B", b);
  } else {
    const Eigen::Vector3d d = *a_place - *b_place;
    if (b.axes_known)
      out.shift = Eigen::Vector3d(b.axes_in_mesh * d);
    else if (d.norm() <= 1e-9 * a.reference_radius)
      out.shift = Eigen::Vector3d::Zero();
    else
      out.origin_unknown_because =
          fmt::format("the origins are {:.6g} m apart, but {}", d.norm(), unknown_axes_text("B", b));
  }
  return out;
}

void describe_frames(const CoefficientSet& a, const FrameRelation& relation, bool align, Comparison& out) {
  const bool shifted = relation.shift && relation.shift->norm() > 1e-9 * a.reference_radius;
  const bool rotated =
      relation.rotation && (*relation.rotation - Eigen::Matrix3d::Identity()).cwiseAbs().maxCoeff() > 1e-12;
  const auto agreement = [&](bool known, bool moved) {
    return !known   ? FrameAgreement::unknown
           : !moved ? FrameAgreement::same
           : align  ? FrameAgreement::aligned
                    : FrameAgreement::different;
  };
  out.origin_relation = agreement(relation.shift.has_value(), shifted);
  out.axes_relation = agreement(relation.rotation.has_value(), rotated);
  if (!align && (shifted || rotated))
    out.alignment.push_back(fmt::format(
        "{} recorded in the sets differ; not aligned (ask for frame alignment)", shifted && rotated
                                                                                     ? "origins and axes"
                                                                                 : shifted ? "origins"
                                                                                           : "axes"));
  if (!relation.shift)
    out.alignment.push_back(fmt::format("origin not {}: {}; B is compared as if expanded about A's origin",
                                        align ? "aligned" : "checked", relation.origin_unknown_because));
  if (!relation.rotation)
    out.alignment.push_back(fmt::format("axes not {}: {}; B is compared as if in A's axes",
                                        align ? "aligned" : "checked", relation.axes_unknown_because));
}

}  // namespace polystokes
