#include "polystokes/field/field_map.h"

#include <fmt/format.h>

#include <cmath>
#include <limits>

#include "polystokes/core/errors.h"
#include "polystokes/field/series.h"

namespace polystokes {

FieldMap radial_acceleration_map(const CoefficientSet& set, double radius, int columns, int rows) {
  if (!(radius > 0) || !std::isfinite(radius))
    throw ConventionError(fmt::format("field map radius must be positive, got {} m", radius));
  if (columns < 1 || rows < 1)
    throw ConventionError(fmt::format("field map needs at least one cell, got {} x {}", columns, rows));
  const SeriesModel model(set);
  Points points(long(columns) * rows, 3);
  const double pi = std::acos(-1.0);
  for (int row = 0; row < rows; ++row) {
    const double lat = (90.0 - (row + 0.5) * 180.0 / rows) * pi / 180;
    for (int col = 0; col < columns; ++col) {
      const double lon = (-180.0 + (col + 0.5) * 360.0 / columns) * pi / 180;
      points.row(long(row) * columns + col) =
          radius *
          Eigen::RowVector3d(std::cos(lat) * std::cos(lon), std::cos(lat) * std::sin(lon), std::sin(lat));
    }
  }
  const std::vector<FieldValue> field = model.evaluate(points);
  FieldMap map;
  map.columns = columns;
  map.rows = rows;
  map.radius = radius;
  map.values.resize(field.size());
  map.min = std::numeric_limits<double>::infinity();
  map.max = -map.min;
  for (size_t i = 0; i < field.size(); ++i) {
    const Eigen::Vector3d r_hat = points.row(long(i)).transpose() / radius;
    map.values[i] = field[i].acceleration.dot(r_hat);
    map.min = std::min(map.min, map.values[i]);
    map.max = std::max(map.max, map.values[i]);
  }
  return map;
}

}  // namespace polystokes
