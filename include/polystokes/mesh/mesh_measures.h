// Size and sampling measures of a triangle mesh for `inspect`: surface area, bounding box, connected
// components, edge lengths, equivalent-volume radius and the degree the mesh's sampling can resolve.
#pragma once

#include <Eigen/Core>
#include <vector>

#include "polystokes/core/mesh.h"

namespace polystokes {

/// Connected pieces of a mesh: faces sharing a vertex belong to one piece.
struct FaceComponents {
  int count = 0;           ///< number of pieces
  std::vector<int> label;  ///< per face, 0..count-1, numbered in order of each piece's lowest face
};

/// Requires valid vertex indices (mesh_check "valid_indices"). O(F) (union-find).
FaceComponents face_components(const Mesh& mesh);

struct MeshMeasures {
  double surface_area = 0;                            ///< m^2, sum of the face areas
  Eigen::Vector3d box_min = Eigen::Vector3d::Zero();  ///< m, lowest vertex coordinates (mesh frame)
  Eigen::Vector3d box_max = Eigen::Vector3d::Zero();  ///< m, highest vertex coordinates
  int components = 0;                                 ///< connected pieces (face_components)
  long edges = 0;                                     ///< distinct undirected edges
  double edge_min = 0;                                ///< m, shortest distinct edge
  double edge_mean = 0;                               ///< m, mean over distinct edges
  double edge_max = 0;                                ///< m, longest distinct edge
  double volume = 0;                                  ///< m^3 enclosed (volume_moments)
  double equivalent_radius = 0;                       ///< m, (3 V / (4 pi))^(1/3); 0 when V <= 0
  /// resolvable_degree(equivalent_radius, edge_mean): the degree whose half-wavelength pi R / n on a sphere of
  /// the body's size equals the mean edge, about two vertices per wavelength (common practice). Coefficients
  /// of higher degree describe the facets more than the body. 0 when the volume is not positive. compute
  /// warns (plausibility.h) beyond twice this degree.
  int resolvable_degree = 0;
};

/// Mean edge length, m, over the three edges of every face: on a closed manifold mesh (every edge in two
/// faces) the mean over distinct edges. O(F) on all cores, no sorting: cheap enough for every compute; the
/// same value for any thread count.
double mean_edge_length(const Mesh& mesh);

/// Radius of the sphere of the same volume, (3 V / (4 pi))^(1/3), m; 0 when volume (m^3) is not positive.
double equivalent_radius(double volume);

/// The degree a mesh resolves: floor(pi R / mean edge), R the body's radius (m): a degree-n harmonic has
/// half-wavelength pi R / n, which a mesh describes only when it spans at least an edge (common practice).
/// 0 when mean_edge is not positive.
int resolvable_degree(double radius, double mean_edge);

/// Measures a mesh that passed mesh_check's "valid_indices" and "finite" checks (its volume is meaningful
/// only for a closed, outward-oriented one). O(F log F) (edges sorted to count each once).
MeshMeasures measure_mesh(const Mesh& mesh);

}  // namespace polystokes
