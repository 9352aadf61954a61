#include "harmonics/fan_decomposition.h"

#include <fmt/format.h>

#include <algorithm>

#include "polystokes/core/errors.h"

namespace polystokes {

const FanDecomposition& FanDecomposer::decompose(const Faces& faces, Eigen::Index vertex_count,
                                                 Eigen::Index begin, Eigen::Index end, const int* order) {
  FanDecomposition& out = result_;
  const int count = int(end - begin);
  out.vertices.clear();
  out.sources.clear();
  out.edge_source.clear();
  out.edge_other.clear();
  out.centres.clear();
  out.fan_begin.assign(1, 0);
  out.fan_faces.resize(size_t(count));
  out.fan_edges.resize(size_t(count));
  out.fan_corners.resize(3 * size_t(count));
  assigned_ = 0;
  edge_a_.clear();
  edge_b_.clear();
  if (local_of_.size() < size_t(vertex_count)) local_of_.resize(size_t(vertex_count), -1);
  mesh_face_.resize(size_t(count));
  for (int f = 0; f < count; ++f) mesh_face_[size_t(f)] = order ? order[begin + f] : int(begin + f);

  // Local vertex ids in order of first use.
  corners_.resize(3 * size_t(count));
  for (int f = 0; f < count; ++f)
    for (int k = 0; k < 3; ++k) {
      const int vertex = faces(mesh_face_[size_t(f)], k);
      if (vertex < 0 || vertex >= vertex_count) {
        for (int used : out.vertices) local_of_[size_t(used)] = -1;  // leave the scratch map clean
        throw MeshError(fmt::format("face {} refers to vertex {}, but the mesh has {} vertices",
                                    mesh_face_[size_t(f)], vertex, vertex_count));
      }
      int& local = local_of_[size_t(vertex)];
      if (local < 0) {
        local = int(out.vertices.size());
        out.vertices.push_back(vertex);
      }
      corners_[size_t(3 * f + k)] = local;
    }
  const int locals = int(out.vertices.size());
  for (int vertex : out.vertices) local_of_[size_t(vertex)] = -1;
  // Wedges around each local vertex (CSR): the face and its next two corners in the face's own cyclic order,
  // which are the rim edge when that vertex is the face's centre.
  wedge_begin_.assign(size_t(locals) + 1, 0);
  for (int corner : corners_) ++wedge_begin_[size_t(corner) + 1];
  for (int v = 0; v < locals; ++v) wedge_begin_[size_t(v) + 1] += wedge_begin_[size_t(v)];
  unassigned_.assign(wedge_begin_.begin(), wedge_begin_.end() - 1);  // fill positions first
  wedges_.resize(corners_.size());
  for (int f = 0; f < count; ++f) {
    const int* c = &corners_[size_t(3 * f)];
    wedges_[size_t(unassigned_[size_t(c[0])]++)] = {f, c[1], c[2]};
    wedges_[size_t(unassigned_[size_t(c[1])]++)] = {f, c[2], c[0]};
    wedges_[size_t(unassigned_[size_t(c[2])]++)] = {f, c[0], c[1]};
  }
  for (int v = 0; v < locals; ++v)
    unassigned_[size_t(v)] = wedge_begin_[size_t(v) + 1] - wedge_begin_[size_t(v)];
  face_edge_.assign(size_t(count), -1);
  face_centre_.resize(size_t(count));

  // Centres: proposed ones while they still have two or more open faces, else a seed at the first open face.
  candidates_.clear();
  size_t next_candidate = 0;
  int next_open = 0;
  for (;;) {
    int centre = -1;
    if (next_candidate < candidates_.size()) {
      centre = candidates_[next_candidate++];
      if (unassigned_[size_t(centre)] < 2) continue;
    } else {
      while (next_open < count && face_edge_[size_t(next_open)] >= 0) ++next_open;
      if (next_open == count) break;
      centre = corners_[size_t(3 * next_open)];
      for (int k = 1; k < 3; ++k) {
        const int vertex = corners_[size_t(3 * next_open + k)];
        if (unassigned_[size_t(vertex)] > unassigned_[size_t(centre)]) centre = vertex;
      }
    }
    make_centre(centre);
  }
  choose_sources();
  return out;
}

void FanDecomposer::make_centre(int centre) {
  FanDecomposition& out = result_;
  for (int i = wedge_begin_[size_t(centre)]; i < wedge_begin_[size_t(centre) + 1]; ++i) {
    const Wedge wedge = wedges_[size_t(i)];
    const int f = wedge.face;
    if (face_edge_[size_t(f)] >= 0) continue;
    --unassigned_[size_t(centre)];
    --unassigned_[size_t(wedge.next)];
    --unassigned_[size_t(wedge.after)];
    const int edge = rim_edge(f, wedge.next, wedge.after);
    face_edge_[size_t(f)] = edge;
    face_centre_[size_t(f)] = centre;
    out.fan_faces[assigned_] = mesh_face_[size_t(f)];
    out.fan_edges[assigned_] = edge;
    std::copy_n(&corners_[size_t(3 * f)], 3, &out.fan_corners[3 * assigned_]);
    ++assigned_;
  }
  out.centres.push_back(centre);
  out.fan_begin.push_back(int(assigned_));
}

// The rim edge {a, b} of face f: reused when another face through a and b already has it as its rim edge
// (its centre is its corner other than a and b); the third corners of open faces through a and b are
// proposed as centres (the next centres of the colour class). The scan stops at the first other face: on a
// manifold mesh it is the only one, and on any other the rest could only add sharing, never change a result.
inline int FanDecomposer::rim_edge(int face, int a, int b) {
  for (int i = wedge_begin_[size_t(a)]; i < wedge_begin_[size_t(a) + 1]; ++i) {
    const Wedge wedge = wedges_[size_t(i)];
    if (wedge.face == face || (wedge.next != b && wedge.after != b)) continue;
    const int third = wedge.next == b ? wedge.after : wedge.next;
    const int edge = face_edge_[size_t(wedge.face)];
    if (edge < 0)
      candidates_.push_back(third);
    else if (face_centre_[size_t(wedge.face)] == third)
      return edge;
    break;
  }
  edge_a_.push_back(a);
  edge_b_.push_back(b);
  return int(edge_a_.size()) - 1;
}

// Sources, in rim-edge order (which follows the fans): an edge takes an endpoint that already is a source;
// otherwise the endpoint not yet used as the other end of an edge. On a regular patch the rim edges form a
// hexagonal, bipartite graph, and this keeps the sources on one side of it.
void FanDecomposer::choose_sources() {
  FanDecomposition& out = result_;
  const size_t locals = out.vertices.size(), edges = edge_a_.size();
  unassigned_.assign(locals, -1);  // source index per local vertex
  side_.assign(locals, 0);         // 1 once the vertex was the other end of an edge
  for (size_t e = 0; e < edges; ++e) {
    int s = edge_a_[e], t = edge_b_[e];
    if (unassigned_[size_t(s)] < 0 &&
        (unassigned_[size_t(t)] >= 0 || (side_[size_t(s)] && !side_[size_t(t)])))
      std::swap(s, t);
    int& source = unassigned_[size_t(s)];
    if (source < 0) {
      source = int(out.sources.size());
      out.sources.push_back(s);
    }
    side_[size_t(t)] = 1;
    out.edge_source.push_back(source);
    out.edge_other.push_back(t);
  }
}

}  // namespace polystokes
