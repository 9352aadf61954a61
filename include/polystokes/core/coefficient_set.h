// A spherical-harmonic (Stokes) coefficient set with its conventions and provenance.
// The plain struct that compute produces, coefficient_file reads and writes, and every other command consumes.
#pragma once

#include <Eigen/Core>
#include <optional>
#include <string>
#include <vector>

#include "polystokes/core/mesh.h"
#include "polystokes/sets/conventions.h"

namespace polystokes {

/// The origin or frame label of a set that does not know it (files: "unknown").
inline constexpr const char* kUnknownLabel = "unknown";

/// One constant-density piece of a body.
struct Region {
  std::string mesh;      ///< source mesh file name
  std::string checksum;  ///< SHA-256 of the mesh file, hex
  std::string unit;      ///< length unit of the mesh file ("m" or "km")
  double density = 0;    ///< kg/m^3; negative for a void or a density deficit
  double volume = 0;     ///< m^3
  long faces = 0;        ///< facet count
};

/// A coefficient set. C, S, sigma_C, sigma_S are (degree+1) x (degree+1); entry (n, m) for m <= n,
/// the upper triangle is zero. The potential outside the Brillouin sphere is
///   U(r, lat, lon) = GM/r * sum_n (R/r)^n sum_m Pnm(sin lat) (Cnm cos(m lon) + Snm sin(m lon))
/// in the set's frame, about the set's origin, with Pnm normalized as `convention` says.
struct CoefficientSet {
  std::string body;                 ///< body label
  int degree = 0;                   ///< maximum degree
  double gm = 0;                    ///< m^3 s^-2
  double reference_radius = 0;      ///< m
  Convention convention;
  Eigen::MatrixXd C, S, sigma_C, sigma_S;

  /// What the expansion origin is: "com", "mesh", "shifted", "point" (declared for a table) or
  /// kUnknownLabel (a table that did not say).
  std::string origin = "com";
  /// What the axes are: "mesh", "principal", "rotated", a label declared for a table, or kUnknownLabel.
  std::string frame = "mesh";
  Eigen::Vector3d origin_in_mesh = Eigen::Vector3d::Zero();  ///< expansion origin, mesh frame, m
  Eigen::Matrix3d axes_in_mesh = Eigen::Matrix3d::Identity();  ///< rows: set axes in mesh frame
  /// false: where the origin lies in the mesh frame is not known and origin_in_mesh is a zero placeholder.
  /// A set imported as "about the centre of mass" has origin "com" with origin_known false: what the point
  /// is, is known, not its mesh-frame coordinates.
  bool origin_known = true;
  /// false: the axes' directions in the mesh frame are not known and axes_in_mesh is an identity placeholder.
  bool axes_known = true;
  Eigen::Vector3d center_of_mass = Eigen::Vector3d::Zero();    ///< mesh frame, m
  double mass = 0;                  ///< kg (0 when unknown)
  double volume = 0;                ///< m^3 (0 when unknown)
  double brillouin_radius = 0;      ///< m, about the expansion origin (0 when unknown)
  std::vector<Region> regions;      ///< density regions the set was computed from (empty if foreign)
  std::string length_unit = "m";    ///< unit of the source mesh, echoed
  std::string created;              ///< creation details: program version and UTC time
  std::vector<std::string> history; ///< one line per operation applied, oldest first
  std::vector<std::string> notes;   ///< free text: cautions, uncertainty notes
};

/// Reading a mesh beside a set (report, validate) in the unit the set records for it.
/// The unit a set's shape mesh is read in, and why.
struct MeshUnitChoice {
  LengthUnit unit = LengthUnit::meter;
  std::string reason;  ///< e.g. "the unit the set records for region 1, whose checksum this file has"
};

/// Chooses the unit for reading a mesh beside `set`, from the SHA-256 of the mesh file (hex) and the unit the
/// user asked for (none: not asked). The set's regions record each source mesh's checksum and unit, and the
/// checksum does not depend on the unit, so a mesh file that is one of the set's regions is read in the unit
/// recorded for it. Otherwise the requested unit; without one, the unit of the set's source meshes
/// (CoefficientSet::length_unit) when the set records regions, else metres. Throws ConventionError when the
/// requested unit contradicts the unit recorded for the matching region (every length would be off by a factor
/// 10^3). O(regions).
MeshUnitChoice mesh_unit_for_set(const CoefficientSet& set, const std::string& mesh_checksum,
                                 std::optional<LengthUnit> requested, const std::string& mesh_name);

/// Zero-filled set of the given degree (all four matrices sized).
CoefficientSet make_empty_set(int degree);

/// The current time in UTC as ISO 8601 "YYYY-MM-DDTHH:MM:SSZ" (whole seconds), for the `created` line of a
/// set and the provenance of reports.
std::string utc_timestamp();

}  // namespace polystokes
