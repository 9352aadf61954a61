#include "render/silhouette_raster.h"

#include <Eigen/Geometry>
#include <algorithm>
#include <cmath>
#include <limits>

namespace polystokes {

std::vector<int> front_faces(const Mesh& mesh, int right, int up, const Eigen::Vector3d& toward, int samples,
                             const std::function<double(double)>& grid_x,
                             const std::function<double(double)>& grid_y) {
  std::vector<float> depth(size_t(samples) * samples, -std::numeric_limits<float>::infinity());
  std::vector<int> front(size_t(samples) * samples, -1);
  for (long f = 0; f < mesh.faces.rows(); ++f) {
    Eigen::Vector2d p[3];
    double d[3];
    for (int k = 0; k < 3; ++k) {
      const Eigen::Vector3d v = mesh.vertices.row(mesh.faces(f, k)).transpose();
      p[k] = {grid_x(v[right]), grid_y(v[up])};
      d[k] = v.dot(toward);
    }
    const double area = (p[1] - p[0]).x() * (p[2] - p[0]).y() - (p[1] - p[0]).y() * (p[2] - p[0]).x();
    if (std::abs(area) < 1e-12) continue;
    const int x0 = std::max(0, int(std::ceil(std::min({p[0].x(), p[1].x(), p[2].x()}))));
    const int x1 = std::min(samples - 1, int(std::floor(std::max({p[0].x(), p[1].x(), p[2].x()}))));
    const int y0 = std::max(0, int(std::ceil(std::min({p[0].y(), p[1].y(), p[2].y()}))));
    const int y1 = std::min(samples - 1, int(std::floor(std::max({p[0].y(), p[1].y(), p[2].y()}))));
    for (int j = y0; j <= y1; ++j) {
      for (int i = x0; i <= x1; ++i) {
        const Eigen::Vector2d q(i, j);
        // Barycentric weights.
        const double w0 = ((p[1] - q).x() * (p[2] - q).y() - (p[1] - q).y() * (p[2] - q).x()) / area;
        const double w1 = ((p[2] - q).x() * (p[0] - q).y() - (p[2] - q).y() * (p[0] - q).x()) / area;
        const double w2 = 1 - w0 - w1;
        if (w0 < -1e-9 || w1 < -1e-9 || w2 < -1e-9) continue;
        const float z = float(w0 * d[0] + w1 * d[1] + w2 * d[2]);
        const size_t s = size_t(j) * samples + i;
        if (z > depth[s]) {
          depth[s] = z;
          front[s] = int(f);
        }
      }
    }
  }
  return front;
}

int shade_level(const Mesh& mesh, const std::vector<int>& front, int samples, int cell, int ci, int cj,
                const Eigen::Vector3d& light) {
  double sum = 0;
  int count = 0;
  for (int j = cj * cell; j < std::min(samples, (cj + 1) * cell); ++j)
    for (int i = ci * cell; i < std::min(samples, (ci + 1) * cell); ++i) {
      const int f = front[size_t(j) * samples + i];
      if (f < 0) continue;
      const Eigen::Vector3d a = mesh.vertices.row(mesh.faces(f, 0)).transpose();
      const Eigen::Vector3d b = mesh.vertices.row(mesh.faces(f, 1)).transpose();
      const Eigen::Vector3d c = mesh.vertices.row(mesh.faces(f, 2)).transpose();
      const Eigen::Vector3d normal = (b - a).cross(c - a).normalized();
      sum += 0.22 + 0.78 * std::max(0.0, normal.dot(light));
      ++count;
    }
  return count == 0 ? -1 : int(std::lround(24 * sum / count));
}

}  // namespace polystokes
