// Disjoint sets over small index ranges, used by the structural checks and the configuration
// model to find connected node groups.
#pragma once

#include <numeric>
#include <vector>

namespace pulsewise::detail {

class UnionFind {
 public:
  explicit UnionFind(int n) : parent_(n) { std::iota(parent_.begin(), parent_.end(), 0); }
  int find(int a) {
    while (parent_[a] != a) {
      parent_[a] = parent_[parent_[a]];
      a = parent_[a];
    }
    return a;
  }
  // Returns false when a and b were already joined.
  bool unite(int a, int b) {
    a = find(a);
    b = find(b);
    if (a == b) return false;
    parent_[b] = a;
    return true;
  }

 private:
  std::vector<int> parent_;
};

}  // namespace pulsewise::detail
