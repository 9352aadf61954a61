// The pairs of faces of a triangle mesh that meet other than in the vertex or edge they share: the search
// behind mesh_check's "no_self_intersections", over the indexed mesh itself (no copy into another structure).
#pragma once

#include "polystokes/core/mesh.h"

namespace polystokes {

/// Intersecting face pairs: how many, and the lowest pair (first < second, ordered by first then second).
struct FacePairs {
  long count = 0;
  int first = -1, second = -1;  ///< -1 when count is 0
};

/// Face pairs of `mesh` whose closed triangles meet in more than a shared element. Faces sharing an edge
/// meet wrongly only when they lie in one plane on the same side of that edge (folded onto each other);
/// faces sharing one vertex when an edge opposite that vertex meets the other triangle; other faces when
/// the triangles meet at all. Faces whose corners are collinear (exact test) are left out: they have no
/// plane, and no_degenerate_faces reports them. All decisions are exact (orientation predicates of CGAL's
/// EPICK kernel); a bounding-volume hierarchy over the faces in Morton order of their centroids, with
/// single-precision boxes rounded outward, proposes the candidate pairs. Expects valid indices, finite
/// coordinates and faces of three distinct vertices. O(F log F) for meshes whose faces do not crowd one
/// place; about 60 bytes per face while it runs. Runs on every core (internal/parallel.h); the result does
/// not depend on the thread count.
FacePairs self_intersecting_pairs(const Mesh& mesh);

}  // namespace polystokes
