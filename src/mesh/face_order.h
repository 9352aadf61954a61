// Faces in space-filling-curve order: the Morton order of their centroids, so that faces near in the list are
// near in space. Shared by the self-intersection search (tight boxes) and the moment blocks (shared fan
// terms).
#pragma once

#include <vector>

#include "polystokes/core/mesh.h"

namespace polystokes {

/// Face numbers sorted by the 30-bit Morton code (10 bits per axis over the vertices' bounding box) of each
/// face's centroid, ties by face number; faces with skip[f] != 0 are left out (skip empty: none).
/// Deterministic and independent of `threads` (0 = all cores). Throws MeshError naming a face whose vertex
/// number is out of range. O(F) time (LSD radix sort), 16 bytes per face while it runs.
std::vector<int> morton_face_order(const Mesh& mesh, const std::vector<char>& skip = {}, int threads = 0);

}  // namespace polystokes
