// The HTML report of a coefficient set: conventions and provenance, mass properties, degree-variance spectrum
// with a fitted power law, low-degree coefficients, body silhouettes and a field map, all in one offline
// page.
#pragma once

#include <optional>
#include <string>
#include <vector>

#include "polystokes/core/coefficient_set.h"
#include "polystokes/sets/compare.h"
#include "polystokes/core/mesh.h"

namespace polystokes {

/// Degree variances in fully normalized terms (the set is converted from its own convention first):
///   variance[n] = sum_m (C_nm^2 + S_nm^2),  sigma_variance[n] = sum_m (sigma_C_nm^2 + sigma_S_nm^2),
/// n = 0..degree. O(degree^2).
struct DegreeSpectrum {
  std::vector<double> variance;
  std::vector<double> sigma_variance;
  bool has_sigmas = false;  ///< some sigma is non-zero
};
DegreeSpectrum degree_spectrum(const CoefficientSet& set);

/// variance[n] ~ K n^-beta, fitted by ordinary least squares of ln variance[n] on ln n.
struct PowerLaw {
  double k = 0;          ///< K, the law's value at n = 1
  double beta = 0;       ///< exponent (positive for a decaying spectrum)
  int first_degree = 0;  ///< lowest and highest degree used
  int last_degree = 0;
  int points = 0;           ///< number of degrees used
  double rms_residual = 0;  ///< RMS of the fit residuals in log10 units (decades)
};

/// Fits the law to every degree n >= min_degree with a positive, finite variance[n]. Centred sums, so an
/// exact power law is recovered to rounding. Throws ConventionError if fewer than two degrees qualify.
PowerLaw fit_power_law(const std::vector<double>& variance, int min_degree = 2);

/// Radial component of the acceleration, g_r = a . r_hat (m s^-2, negative toward the body), on a sphere of
/// radius `radius` about the set's origin, in the set's frame. Cell (col, row) is centred at longitude
/// -180 + (col + 0.5) 360 / columns degrees and latitude 90 - (row + 0.5) 180 / rows degrees.
struct FieldMap {
  int columns = 0;
  int rows = 0;
  double radius = 0;           ///< m
  std::vector<double> values;  ///< row-major, row 0 northernmost, column 0 westernmost
  double min = 0;
  double max = 0;
};

/// Evaluates the series (SeriesModel) at the cell centres. Throws ConventionError for a non-positive radius
/// or grid size, or a set the series cannot evaluate. O(columns * rows * degree^2).
FieldMap radial_acceleration_map(const CoefficientSet& set, double radius, int columns = 72, int rows = 36);


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
