// The HTML report of a coefficient set: conventions and provenance, mass properties, degree-variance spectrum
// with a fitted power law, low-degree coefficients, body silhouettes and a field map, all in one offline
// page.
#pragma once

#include <optional>
#include <string>
#include <vector>

#include "polystokes/core/coefficient_set.h"
#include "polystokes/core/mesh.h"
#include "polystokes/field/equilibrium_points.h"
#include "polystokes/field/field_map.h"
#include "polystokes/field/surface_environment.h"
#include "polystokes/sets/compare.h"
#include "polystokes/sets/spectrum.h"

namespace polystokes {

/// Everything the report shows.
struct ReportInput {
  CoefficientSet set;
  std::string set_source;    ///< file name shown as the set's source
  std::string set_checksum;  ///< SHA-256 of the set file (hex); empty = not shown
  /// The body's checked shape in metres, in the frame that the set's origin_in_mesh and axes_in_mesh refer
  /// to. Adds mesh mass properties and the three silhouettes.
  std::optional<Mesh> mesh;
  std::string mesh_unit_reason;  ///< why the mesh was read in its unit (mesh_unit_for_set), shown beside it
  /// Density for the mesh's mass properties (kg/m^3). 0: the set's region density when it has exactly one
  /// region, else the set's mass (or GM / G) over the mesh volume.
  double mesh_density = 0;
  /// A second set to compare with (compare_sets(set, *other, compare_options)): adds the per-degree
  /// difference plot, the largest differences and the mismatch diagnosis.
  std::optional<CoefficientSet> other;
  std::string other_source;  ///< file name shown for `other`
  CompareOptions compare_options;
  std::string generated;           ///< program version and time of writing, shown in the header
  double map_radius_factor = 1.2;  ///< field-map sphere radius over the Brillouin radius (> 1)
  /// The surface environment of `mesh` (surface_environment, facets in the mesh's face order): adds maps of
  /// slope and dynamic height seen from +z and -z, the slope histogram and, with `equilibria`, their table.
  std::optional<SurfaceEnvironment> surface;
  std::optional<EquilibriumResult> equilibria;
  int map_columns = 72;
  int map_rows = 36;
};

/// The report as one self-contained XHTML-compatible HTML5 page (UTF-8; inline CSS and SVG; no scripts,
/// no external references; every element closed, so it parses as XML). Sections: caution; conventions and
/// provenance (every field of the set, regions, history, notes); mass properties (from the set and, with a
/// mesh, from the mesh); degree-variance spectrum on log-log axes with the fitted power law (n >= 2) and,
/// when sigmas are non-zero, their spectrum; fully normalized coefficients and sigmas up to degree 4;
/// with a mesh, x-y, x-z and y-z silhouettes with principal axes, centre of mass and Brillouin circle; a
/// map of the radial acceleration at map_radius_factor x the Brillouin radius; with `other`, the comparison
/// (per-degree RMS of A, B and A - B on a log scale with the agreement threshold, verdict, diagnosis ranked
/// by the misfit left, largest differences, and the compare module's text). Header numbers (GM, radii,
/// masses) are printed in the shortest round-trip form ("{}"), table coefficients with ten significant digits
/// ("{:.9e}"). Text fields are escaped; bytes that are not UTF-8 or are control characters appear as \xNN.
/// Throws ConventionError for a set with mis-sized matrices or non-positive GM or reference radius. Size:
/// about 0.5 MB with a 20k-face mesh; O(F + degree^2 * map cells).
std::string make_report(const ReportInput& input);

}  // namespace polystokes
