// Union-find over 0..n-1 with path halving, for grouping faces and vertices into connected pieces.
// A small value type shared by the mesh checks and measures.
#pragma once

#include <algorithm>
#include <numeric>
#include <vector>

namespace polystokes {

/// Disjoint sets of the integers 0..n-1; each set is represented by its smallest member. find and unite are
/// nearly O(1) amortized (path halving; Tarjan 1975, "Efficiency of a good but not linear set union
/// algorithm", J. ACM 22).
struct DisjointSets {
  std::vector<int> parent;
  explicit DisjointSets(size_t n) : parent(n) { std::iota(parent.begin(), parent.end(), 0); }
  int find(int x) {
    while (parent[x] != x) x = parent[x] = parent[parent[x]];
    return x;
  }
  void unite(int a, int b) {
    a = find(a), b = find(b);
    if (a != b) parent[std::max(a, b)] = std::min(a, b);
  }
};

}  // namespace polystokes
