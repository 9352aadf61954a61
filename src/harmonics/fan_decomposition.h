// Grouping a block of mesh faces into vertex fans that share their edge and vertex terms, so the spectral
// moment recursion (moments.cpp) costs about one operator product per face instead of three.
#pragma once

#include <Eigen/Core>
#include <vector>

#include "polystokes/core/mesh.h"

namespace polystokes {

/// Faces [begin, end) of a mesh arranged for the fan recursion of complete homogeneous symmetric polynomials.
/// Each face {c, a, b} has a centre vertex c and a rim edge {a, b}, and
///   h_n(a,b,c) = h_n(a,b) + c h_{n-1}(a,b,c),
/// so a fan of faces around c needs one product by c per degree for all its faces together. Each rim edge
/// {s, t} has a source endpoint s, and
///   h_n(s,t) = s^n + t h_{n-1}(s,t);
/// rim edges shared by two faces, and sources shared by several rim edges, are computed once.
/// Any assignment is exact; the sharing only sets the cost: sources + rim edges + centres products per
/// degree, which for a regular triangulation in a compact patch approaches 5/6 per face (one vertex colour
/// class as centres, a second as sources). Vertex ids below are local: positions in `vertices`.
struct FanDecomposition {
  std::vector<int> vertices;     ///< mesh vertex id of each local vertex
  std::vector<int> sources;      ///< local vertex of each source (its powers s^n are computed)
  std::vector<int> edge_source;  ///< per rim edge: index into `sources`
  std::vector<int> edge_other;   ///< per rim edge: local vertex of the other endpoint t
  std::vector<int> centres;      ///< local vertex of each fan centre
  std::vector<int> fan_begin;    ///< per centre: first position in fan_faces / fan_edges; size centres + 1
  std::vector<int> fan_faces;    ///< mesh face ids, grouped by centre
  std::vector<int> fan_edges;    ///< rim edge of each entry of fan_faces
  /// 3 local vertices per entry of fan_faces, in the face's own (oriented) order
  std::vector<int> fan_corners;

  /// Operator products per degree: sources + rim edges + centres.
  size_t products() const { return sources.size() + edge_source.size() + centres.size(); }
};

/// Builds decompositions block by block, reusing its scratch memory (one int per mesh vertex plus O(block)).
/// Greedy and local: a centre's rim edges propose the vertices across them as the next centres, which on a
/// regular triangulation follows one colour class of its 3-colouring; faces left over start new fans at their
/// vertex with the most unassigned faces. Sources keep to one side of the rim-edge graph. Deterministic,
/// O(block size) for bounded vertex valence; faces with repeated vertices are handled like any other.
class FanDecomposer {
 public:
  /// `faces` rows index vertices [0, vertex_count). With `order`, the block is the faces order[begin..end)
  /// (mesh face ids), else faces begin..end. Throws MeshError for a vertex index outside the range.
  const FanDecomposition& decompose(const Faces& faces, Eigen::Index vertex_count, Eigen::Index begin,
                                    Eigen::Index end, const int* order = nullptr);

 private:
  void make_centre(int centre);
  int rim_edge(int face, int a, int b);
  void choose_sources();

  FanDecomposition result_;
  std::vector<int> local_of_;  // mesh vertex -> local id, -1 when not in the block
  struct Wedge {
    int face, next, after;  // a block face and its two corners after the wedge's vertex
  };
  std::vector<int> corners_;      // 3 local ids per block face
  std::vector<int> mesh_face_;    // mesh face id per block face
  std::vector<int> wedge_begin_;  // local vertex -> its wedges (CSR)
  std::vector<Wedge> wedges_;
  std::vector<int> unassigned_;       // per local vertex: its faces without a centre yet
  std::vector<int> face_edge_;        // per block face: its rim edge, -1 while unassigned
  std::vector<int> face_centre_;      // per assigned block face: its centre
  std::vector<int> edge_a_, edge_b_;  // rim edge endpoints (local)
  std::vector<int> candidates_;       // proposed centres, first in first out
  std::vector<char> side_;            // per local vertex: used as the non-source end of a rim edge
  size_t assigned_ = 0;               // fan faces written so far
};

}  // namespace polystokes
