// Node numbering shared by the structural checks and the configuration model: non-ground nodes
// get 0..N-1 in order of first appearance, ground is N (so union-find can include it).
#pragma once

#include <map>
#include <string>
#include <vector>

#include "pulsewise/circuit.hpp"

namespace pulsewise::detail {

struct NodeGraph {
  std::vector<std::string> names;   // non-ground nodes
  std::vector<int> node_a, node_b;  // per element; ground is ground()
  int ground() const { return static_cast<int>(names.size()); }

  explicit NodeGraph(const Circuit& circuit) {
    std::map<std::string, int> index;
    auto lookup = [&](const std::string& node) {
      if (Circuit::is_ground(node)) return -1;
      auto [it, inserted] = index.try_emplace(node, static_cast<int>(names.size()));
      if (inserted) names.push_back(node);
      return it->second;
    };
    for (const Element& e : circuit.elements()) {
      node_a.push_back(lookup(e.node_a));
      node_b.push_back(lookup(e.node_b));
    }
    for (auto& n : node_a) n = n < 0 ? ground() : n;
    for (auto& n : node_b) n = n < 0 ? ground() : n;
  }
};

// Path between two nodes in a forest given by adjacency of element indices; used to name the
// elements of a loop. Returns element indices, empty when there is no path.
std::vector<int> forest_path(const NodeGraph& graph, const std::vector<int>& forest_elements,
                             int from, int to);

}  // namespace pulsewise::detail
