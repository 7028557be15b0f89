#ifndef NMRPRED_GRAPH_UNION_FIND_HPP
#define NMRPRED_GRAPH_UNION_FIND_HPP

// Disjoint sets over 0..n-1 with path halving; a set's representative is
// its smallest member. Used for symmetry orbits (classes.cpp) and for ring
// systems and components (smarts.cpp).

#include <algorithm>
#include <cstdint>
#include <numeric>
#include <vector>

namespace nmrpred::detail {

struct UnionFind {
  std::vector<std::uint32_t> parent;
  UnionFind() = default;
  explicit UnionFind(std::uint32_t n) { reset(n); }
  // Back to n singletons, keeping the capacity for reuse.
  UnionFind &reset(std::uint32_t n) {
    parent.resize(n);
    std::iota(parent.begin(), parent.end(), 0u);
    return *this;
  }
  std::uint32_t find(std::uint32_t a) {
    while (parent[a] != a) a = parent[a] = parent[parent[a]];
    return a;
  }
  void unite(std::uint32_t a, std::uint32_t b) {
    a = find(a);
    b = find(b);
    if (a != b) parent[std::max(a, b)] = std::min(a, b);
  }
};

}  // namespace nmrpred::detail

#endif
