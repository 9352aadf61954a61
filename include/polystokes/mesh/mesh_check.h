// Checks that a triangle mesh bounds a solid (finite, non-degenerate, closed, manifold, outward oriented,
// free of self-intersections) and that density regions fit together: inspect's report and the gate before any
// work.
#pragma once

#include <string>
#include <vector>

#include "polystokes/core/errors.h"
#include "polystokes/core/mesh.h"
#include "polystokes/mesh/mass_properties.h"

namespace polystokes {

/// Outcome of one check. Vertex, face and edge numbers are zero-based rows of Mesh::vertices / Mesh::faces
/// (after import's welding, so they need not match the file's numbering).
struct MeshCheck {
  std::string name;  ///< e.g. "closed"
  bool passed = false;
  long count = 0;  ///< offending vertices, faces, edges, face pairs or components
  /// e.g. "edge (4, 17) of face 9": the offender with the lowest face or vertex number
  std::string first_offender;
  bool ran = true;  ///< false if skipped because a check it needs failed (then passed is false)
};

struct MeshCheckReport {
  std::vector<MeshCheck> checks;  ///< in the order listed below
  bool flipped = false;           ///< check_mesh or validate_mesh reversed every face of an inside-out mesh
  std::string flip_notice;        ///< the notice added to Mesh::notices when flipped, else empty
  /// Sum of the components' signed volumes, m^3, after any flip; 0 if outward_oriented did not run.
  double signed_volume = 0;
};

/// Runs, in this order:
///  "valid_indices"        every face index names an existing vertex, and there is at least one face;
///  "finite"               all coordinates finite;
///  "no_degenerate_faces"  no repeated index in a face and area > 1e-12 * (bounding-box diagonal)^2;
///  "closed"               no border edge (an edge used by one face);
///  "edge_manifold"        no edge used by more than two faces;
///  "vertex_manifold"      the faces around each vertex form a single fan (no bodies touching at a point);
///  "consistently_oriented" the two faces at each edge run it in opposite directions;
///  "no_self_intersections" no two faces meet other than in the vertex or edge they share (exact orientation
///                         predicates of CGAL's EPICK kernel behind a box hierarchy over the mesh itself;
///                         O(F log F), about 60 bytes per face);
///  "outward_oriented"     every connected component has nonzero volume and the faces point out of the
///                         solid: each bounds a region of winding number 1 on its inner side and 0 on its
///                         outer side. Several bodies, and cavities (inward-facing shells nested in a body),
///                         are allowed; overlapping nested bodies and inside-out parts are not.
/// Checks whose prerequisites failed are reported with ran = false. Never throws; leaves the mesh alone,
/// so an inside-out mesh fails outward_oriented.
MeshCheckReport inspect_mesh(const Mesh& mesh);

/// The same checks, except that a mesh whose only problem is that it is inside-out as a whole (every
/// component) is repaired: every face is reversed, the notice "reversed all F faces: the mesh was inside-out
/// (signed volume V m^3)" is added to mesh.notices and to flip_notice, flipped is set, and outward_oriented
/// passes. This is the one rule for inside-out meshes in every command. Never throws.
MeshCheckReport check_mesh(Mesh& mesh);

/// check_mesh, but throws check_failure at the first failed check:
/// "SOURCE: mesh check 'closed' failed: 6 border edges, first edge (12, 40) of face 17".
MeshCheckReport validate_mesh(Mesh& mesh);

/// The first check that did not pass, or nullptr if all passed.
const MeshCheck* first_failure(const MeshCheckReport& report);

/// The one-line error for a failed check, "SOURCE: mesh check 'NAME' failed: describe(check)".
MeshError check_failure(const Mesh& mesh, const MeshCheck& check);

/// "6 border edges, first edge (12, 40) of face 17" (or why the check was not run).
std::string describe(const MeshCheck& check);

/// Checks how superposed density regions fit together, after each mesh passed validate_mesh: the first
/// region is the body and needs a positive density; every later region with a negative density (a void or
/// lighter inclusion) must lie strictly inside the first mesh's solid. Its surface must neither touch nor
/// cross the first mesh's surface (exact triangle-triangle predicates, so non-convex bodies are judged
/// correctly), and every connected piece of it must be inside (winding number 1 at one of its vertices,
/// so a void in a cavity of the body is outside). Regions with a positive density are not constrained.
/// Throws MeshError naming the region's file and the first offending face pair (its face, then the first
/// mesh's, zero-based) or vertex. O((F1 + F2) log(F1 + F2) + K) for K candidate face pairs, plus O(F1) per
/// piece.
void check_regions(const std::vector<DensityRegion>& regions);

}  // namespace polystokes
