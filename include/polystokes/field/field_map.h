// A map of the radial acceleration of a coefficient set's field on a sphere about its origin: the grid the
// report draws, computed here so that render/ only draws it.
#pragma once

#include <vector>

#include "polystokes/core/coefficient_set.h"

namespace polystokes {

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

}  // namespace polystokes
