// The gravity field at one point: potential, acceleration and gravity-gradient tensor.
// Shared result type of the exact polyhedron model (polyhedron_gravity) and the series (series).
#pragma once

#include <Eigen/Core>

namespace polystokes {

/// Field at a point. Sign convention of geodesy: U > 0, U -> GM/r far away, acceleration = grad U.
struct FieldValue {
  double potential = 0;                                    ///< U, m^2 s^-2
  Eigen::Vector3d acceleration = Eigen::Vector3d::Zero();  ///< grad U, m s^-2
  Eigen::Matrix3d gradient = Eigen::Matrix3d::Zero();      ///< d2U / dx dx^T (symmetric), s^-2
};

/// A list of evaluation points, one per row, metres.
using Points = Eigen::Matrix<double, Eigen::Dynamic, 3, Eigen::RowMajor>;

}  // namespace polystokes
