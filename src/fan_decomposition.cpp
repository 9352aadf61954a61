#include "fan_decomposition.h"

#include <fmt/format.h>

#include "errors.h"

namespace polystokes {

const FanDecomposition& FanDecomposer::decompose(const Faces& faces, Eigen::Index vertex_count, Eigen::Index begin,
                                                 Eigen::Index end) {
  FanDecomposition& out = result_;
  out.vertices.clear();
  out.sources.clear();
  out.edge_source.clear();
  out.edge_other.clear();
  out.centres.clear();
  out.fan_begin.assign(1, 0);
  out.fan_faces.clear();
  out.fan_edges.clear();
  out.fan_corners.clear();
  edge_a_.clear();
  edge_b_.clear();
  begin_ = begin;
  if (local_of_.size() < size_t(vertex_count)) local_of_.resize(size_t(vertex_count), -1);
  const int count = int(end - begin);

  // Local vertex ids in order of first use, and the faces around each local vertex.
  corners_.resize(size_t(3) * size_t(count));
  for (int f = 0; f < count; ++f)
    for (int k = 0; k < 3; ++k) {
      const int vertex = faces(begin + f, k);
      if (vertex < 0 || vertex >= vertex_count)
        throw MeshError(fmt::format("face {} refers to vertex {}, but the mesh has {} vertices", begin + f, vertex,
                                    vertex_count));
      int& local = local_of_[size_t(vertex)];
      if (local < 0) {
        local = int(out.vertices.size());
        out.vertices.push_back(vertex);
      }
      corners_[size_t(3 * f + k)] = local;
    }
  const int locals = int(out.vertices.size());
  for (int vertex : out.vertices) local_of_[size_t(vertex)] = -1;
  incident_begin_.assign(size_t(locals) + 1, 0);
  for (int corner : corners_) ++incident_begin_[size_t(corner) + 1];
  for (int v = 0; v < locals; ++v) incident_begin_[size_t(v) + 1] += incident_begin_[size_t(v)];
  unassigned_.assign(incident_begin_.begin(), incident_begin_.end() - 1);  // used as fill positions first
  incident_.resize(corners_.size());
  for (int f = 0; f < count; ++f)
    for (int k = 0; k < 3; ++k) incident_[size_t(unassigned_[size_t(corners_[size_t(3 * f + k)])]++)] = f;
  for (int v = 0; v < locals; ++v) unassigned_[size_t(v)] = incident_begin_[size_t(v) + 1] - incident_begin_[size_t(v)];
  face_edge_.assign(size_t(count), -1);

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
  for (int i = incident_begin_[size_t(centre)]; i < incident_begin_[size_t(centre) + 1]; ++i) {
    const int f = incident_[size_t(i)];
    if (face_edge_[size_t(f)] >= 0) continue;
    const int* c = &corners_[size_t(3 * f)];
    // The rim edge is the side opposite the centre (for a face with a repeated vertex, any other two corners).
    const int at = c[0] == centre ? 0 : c[1] == centre ? 1 : 2;
    const int a = c[(at + 1) % 3], b = c[(at + 2) % 3];
    for (int k = 0; k < 3; ++k) --unassigned_[size_t(c[k])];
    const int edge = rim_edge(f, a, b);
    face_edge_[size_t(f)] = edge;
    out.fan_faces.push_back(int(begin_) + f);
    out.fan_edges.push_back(edge);
    out.fan_corners.insert(out.fan_corners.end(), c, c + 3);
  }
  out.centres.push_back(centre);
  out.fan_begin.push_back(int(out.fan_faces.size()));
}

// The rim edge {a, b} of face f: reused when another face through a and b already has it as its rim edge;
// the third vertices of open faces across {a, b} are proposed as centres (the next centre of the colour class).
int FanDecomposer::rim_edge(int face, int a, int b) {
  int found = -1;
  for (int i = incident_begin_[size_t(a)]; i < incident_begin_[size_t(a) + 1]; ++i) {
    const int g = incident_[size_t(i)];
    if (g == face) continue;
    const int* c = &corners_[size_t(3 * g)];
    if (c[0] != b && c[1] != b && c[2] != b) continue;
    const int edge = face_edge_[size_t(g)];
    if (edge >= 0) {
      if (found < 0 && ((edge_a_[size_t(edge)] == a && edge_b_[size_t(edge)] == b) ||
                        (edge_a_[size_t(edge)] == b && edge_b_[size_t(edge)] == a)))
        found = edge;
    } else {
      for (int k = 0; k < 3; ++k)
        if (c[k] != a && c[k] != b) candidates_.push_back(c[k]);
    }
  }
  if (found >= 0) return found;
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
    if (unassigned_[size_t(s)] < 0 && (unassigned_[size_t(t)] >= 0 || (side_[size_t(s)] && !side_[size_t(t)])))
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
