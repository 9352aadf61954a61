// How the moment fast path cuts a mesh's faces into blocks: blocks are the unit of threading and of the
// ordered reduction, and a face order with locality lets a block's vertex fans share their work.
#pragma once

#include <Eigen/Core>
#include <vector>

#include "polystokes/core/mesh.h"

namespace polystokes {

/// Faces per block of the fast path at `degree` (the size depends on the degree only, never on the thread
/// count, so block sums added in block order are the same for any number of threads).
Eigen::Index moment_block_faces(int degree);

/// The order in which to cut `mesh`'s faces into blocks of `block_faces`: empty for the mesh's own order
/// when it has locality, else the Morton order of the face centroids. Deterministic: depends on the mesh
/// only. Throws MeshError for a face naming a vertex that does not exist. O(F log F) at worst.
std::vector<int> blocking_order(const Mesh& mesh, Eigen::Index block_faces);

/// Operator products per face and degree the fast path spends on `mesh` at `degree`: about 0.9 for meshes
/// listing faces in compact patches (5/6 at best), about 1 after the reordering of meshes without locality.
/// For benchmarks and diagnostics; O(F log F).
double moment_products_per_face(const Mesh& mesh, int degree);

}  // namespace polystokes
