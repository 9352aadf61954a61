// The raster behind the report's body silhouettes: an orthographic projection of a mesh with a depth
// buffer, and Lambert shading of the visible faces. Geometry only; the report turns it into SVG.
#pragma once

#include <Eigen/Core>
#include <functional>
#include <vector>

#include "polystokes/core/mesh.h"

namespace polystokes {

/// For each sample (i, j) of a samples x samples grid (row-major, s = j * samples + i) the index of the face
/// nearest the viewer there, or -1 where the body does not cover the sample. Mesh axis `right` maps to grid
/// column coordinates by grid_x, axis `up` to row coordinates by grid_y; depth is the vertex position along
/// `toward` (the viewer's direction). A sample on an edge shared by two faces belongs to both, so no gaps
/// open. O(faces + covered samples).
std::vector<int> front_faces(const Mesh& mesh, int right, int up, const Eigen::Vector3d& toward, int samples,
                             const std::function<double(double)>& grid_x,
                             const std::function<double(double)>& grid_y);

/// Shade level 0..24 of cell (ci, cj), `cell` x `cell` samples, of a front_faces raster: the mean over its
/// covered samples of 0.22 + 0.78 max(0, n . light) (Lambert, with ambient light), n the face's unit normal;
/// -1 when no sample of the cell is covered.
int shade_level(const Mesh& mesh, const std::vector<int>& front, int samples, int cell, int ci, int cj,
                const Eigen::Vector3d& light);

}  // namespace polystokes
