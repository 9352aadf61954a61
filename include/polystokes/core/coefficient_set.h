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

/// What a set's expansion origin is. The enumerator order is part of the uncertainty plan's fingerprint
/// (compute's origin), so new kinds go at the end.
enum class OriginKind {
  center_of_mass,  ///< "com": the centre of mass (computed, shifted onto it, or declared for a table)
  mesh,            ///< "mesh": the origin of the mesh frame
  point,           ///< "point": a given point of the mesh frame
  shifted,  ///< "shifted": wherever an origin shift put it (neither the centre of mass nor the mesh origin)
  unknown,  ///< kUnknownLabel: a table that did not say
};

/// What a set's axes are. A declared frame (a table's --table-axes label that is none of the words) keeps
/// its label as the frame metadata's name. The order is part of the uncertainty plan's fingerprint.
enum class FrameKind {
  mesh,       ///< "mesh": the mesh file's own axes
  principal,  ///< "principal": principal axes of inertia
  rotated,    ///< "rotated": axes rotated by convert
  declared,   ///< a label declared for a table (directions in the mesh frame unknown)
  unknown,    ///< kUnknownLabel: a table that did not say
};

/// One row of the origin or frame name table: the enumerator, its file and option word, and prose.
template <typename Kind>
struct KindName {
  Kind value;
  const char* word;         ///< e.g. "com"; a declared frame is written by its name instead
  const char* description;  ///< e.g. "the centre of mass"
};

/// The name tables, in the order the words are listed everywhere.
const std::vector<KindName<OriginKind>>& origin_names();
const std::vector<KindName<FrameKind>>& frame_names();

/// File word of an origin kind: "com", "mesh", "point", "shifted", "unknown".
std::string to_string(OriginKind origin);
/// Prose, e.g. "the centre of mass".
std::string describe(OriginKind origin);
/// Parses an origin word; throws ConventionError naming the known words on anything else.
OriginKind parse_origin_kind(const std::string& text);

/// Word of a frame kind: "mesh", "principal", "rotated", "declared", "unknown" (a declared frame's files
/// show its name: frame_label).
std::string to_string(FrameKind frame);
/// Prose, e.g. "the principal axes of inertia".
std::string describe(FrameKind frame);
/// The kind a frame label names: a kind's word, or FrameKind::declared for any other label. Throws
/// ConventionError for an empty label and for the word "declared" (it names no frame).
FrameKind parse_frame_kind(const std::string& label);

/// One constant-density piece of a body.
struct Region {
  std::string mesh;      ///< source mesh file name
  std::string checksum;  ///< SHA-256 of the mesh file, hex
  LengthUnit unit = LengthUnit::meter;  ///< length unit of the mesh file
  double density = 0;    ///< kg/m^3; negative for a void or a density deficit
  double volume = 0;     ///< m^3
  long faces = 0;        ///< facet count
};

/// The name and definition of a set's body-fixed frame as the user gives them. Every field is optional;
/// files hold only those present. The pole and prime meridian follow the usual body-fixed frame model
/// (right ascension and declination of the +z pole in the ICRF equator and equinox, and the angle W of the
/// prime meridian along the body's equator; common practice in cartographic rotation models).
struct FrameMetadata {
  /// Free-text name. For FrameKind::declared it is the declared label itself (files write it as the frame
  /// label); otherwise it names the frame beside its kind.
  std::optional<std::string> name;
  std::optional<std::string> definition;  ///< free text: how the frame is defined
  std::optional<double> pole_ra;          ///< degrees, [0, 360); given together with pole_dec
  std::optional<double> pole_dec;         ///< degrees, [-90, 90]
  std::optional<double> meridian;         ///< prime meridian angle W, degrees, [0, 360), at `epoch`
  /// ISO 8601 UTC "YYYY-MM-DDTHH:MM:SS[.fraction]Z": when the pole and meridian hold (required with the
  /// meridian).
  std::optional<std::string> epoch;

  /// True when no field is present.
  bool empty() const { return !name && !definition && !pole_ra && !pole_dec && !meridian && !epoch; }
};

/// Throws ConventionError (one line) when `frame` breaks its rules: a pole without both angles, RA outside
/// [0, 360), Dec outside [-90, 90], a meridian outside [0, 360) or without an epoch, an epoch without a pole
/// or meridian, an epoch that is not ISO 8601 UTC with a real calendar date, or an empty name. O(1).
void check_frame_metadata(const FrameMetadata& frame);

/// The present fields in words, e.g. "name 'Eros body-fixed', pole RA 11.35 deg Dec 17.22 deg, prime
/// meridian 326.07 deg at 2000-01-01T12:00:00Z" (angles with round-trip digits); "" when empty.
std::string describe(const FrameMetadata& frame);

/// Merges `given` into the set's frame metadata (each given field replaces the set's; the pole as a pair),
/// checks the result (check_frame_metadata) and records a history line naming what was given. For a
/// declared frame a given name is its new label. Nothing changes for an empty `given`.
void declare_frame_metadata(CoefficientSet& set, const FrameMetadata& given);

/// When the set's axes are rotated: the pole, meridian and epoch describe the old axes, so they are
/// dropped, with a history line that says so and keeps their values; name and definition stay, naming the
/// frame the axes were rotated from. Nothing changes when the set had none of the three.
void drop_frame_orientation(CoefficientSet& set);

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

  OriginKind origin = OriginKind::center_of_mass;  ///< what the expansion origin is
  FrameKind frame = FrameKind::mesh;  ///< what the axes are; a declared frame's label is frame_metadata.name
  FrameMetadata frame_metadata;       ///< what the user says the frame is (name, definition, ...)
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
  LengthUnit length_unit = LengthUnit::meter;  ///< unit of the source mesh, echoed
  std::string created;              ///< creation details: program version and UTC time
  std::vector<std::string> history; ///< one line per operation applied, oldest first
  std::vector<std::string> notes;   ///< free text: cautions, uncertainty notes
};

/// The frame label files and messages show: the word of the set's frame kind, or a declared frame's name.
std::string frame_label(const CoefficientSet& set);

/// Sets the frame kind from a label (parse_frame_kind); a declared label becomes frame_metadata.name.
/// Throws ConventionError as parse_frame_kind.
void set_frame_label(CoefficientSet& set, const std::string& label);

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
