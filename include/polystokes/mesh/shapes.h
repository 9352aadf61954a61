// Generated closed meshes: boxes, icospheres, ellipsoids and deformed bodies.
// Used by the demo-shape tool and by tests that need meshes with known closed forms.
#pragma once

#include <functional>

#include "polystokes/core/mesh.h"

namespace polystokes {

/// Axis-aligned box [-a/2,a/2] x [-b/2,b/2] x [-c/2,c/2] (metres), 12 outward triangles.
Mesh make_box(double a, double b, double c);

/// Unit-radius icosphere: an icosahedron with each triangle split `subdivisions` times into four,
/// vertices pushed to the unit sphere. 20 * 4^subdivisions faces.
Mesh make_icosphere(int subdivisions);

/// Unit-radius geodesic sphere of any size: each icosahedron face cut into frequency^2 triangles on a regular
/// grid (class I), vertices pushed to the unit sphere. 20 frequency^2 faces, 10 frequency^2 + 2 vertices.
/// Faces of each icosahedron face are listed in Morton (Z) order of their grid cell, so consecutive faces
/// form compact patches, as in meshes refined or re-meshed by region. frequency >= 1.
Mesh make_geodesic_sphere(int frequency);

/// Icosphere with every vertex mapped through `displace` (unit-sphere direction -> position, metres).
/// The map must keep the surface free of self-intersections (star-shaped radial maps do).
Mesh make_deformed_sphere(int subdivisions, const std::function<Eigen::Vector3d(const Eigen::Vector3d&)>& displace);

/// Triaxial ellipsoid with semi-axes a, b, c (metres) along x, y, z, inscribed-vertex icosphere map.
Mesh make_ellipsoid(int subdivisions, double a, double b, double c);

/// Applies x -> R x + t to every vertex (R proper rotation keeps orientation).
Mesh transformed(const Mesh& mesh, const Eigen::Matrix3d& rotation, const Eigen::Vector3d& translation);

/// Same mesh with every face's vertex order reversed (inward normals).
Mesh reversed(const Mesh& mesh);

/// Concatenates two meshes into one (disjoint components, no welding).
Mesh merged(const Mesh& a, const Mesh& b);

}  // namespace polystokes
