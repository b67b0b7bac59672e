// Topology checks that turn a singular matrix into a message an engineer can act on.
#include <algorithm>
#include <numeric>
#include <queue>
#include <string>
#include <vector>

#include "lotwise/error.hpp"
#include "mna/layout.hpp"

namespace lotwise::detail {
namespace {

class DisjointSets {
 public:
  explicit DisjointSets(std::size_t n) : parent_(n) {
    std::iota(parent_.begin(), parent_.end(), std::size_t{0});
  }
  std::size_t find(std::size_t i) {
    while (parent_[i] != i) i = parent_[i] = parent_[parent_[i]];
    return i;
  }
  bool join(std::size_t a, std::size_t b) {
    a = find(a);
    b = find(b);
    if (a == b) return false;
    parent_[a] = b;
    return true;
  }

 private:
  std::vector<std::size_t> parent_;
};

// A branch between two nodes, by index; index 0 is ground.
struct Branch {
  std::size_t a;
  std::size_t b;
  std::size_t element;
};

// Elements whose branch equation fixes a voltage at DC.
bool defines_voltage(ElementKind kind) {
  return kind == ElementKind::voltage_source || kind == ElementKind::vcvs ||
         kind == ElementKind::ccvs || kind == ElementKind::inductor ||
         kind == ElementKind::opamp;
}

// Elements that carry a DC current between their nodes determined by voltages.
bool conducts_at_dc(ElementKind kind) {
  return kind == ElementKind::resistor || defines_voltage(kind);
}

std::string describe_loop(const Circuit& circuit, const std::vector<Branch>& branches,
                          std::size_t node_count, const Branch& closing) {
  // Breadth-first search through the voltage branches met so far, from one end of the
  // closing branch to the other; the path plus the closing branch is the loop.
  std::vector<std::size_t> via(node_count, static_cast<std::size_t>(-1));
  std::vector<std::size_t> from(node_count, static_cast<std::size_t>(-1));
  std::vector<bool> seen(node_count, false);
  std::queue<std::size_t> queue;
  queue.push(closing.a);
  seen[closing.a] = true;
  while (!queue.empty()) {
    const std::size_t n = queue.front();
    queue.pop();
    if (n == closing.b) break;
    for (std::size_t k = 0; k < branches.size(); ++k) {
      const Branch& br = branches[k];
      std::size_t other;
      if (br.a == n) other = br.b;
      else if (br.b == n) other = br.a;
      else continue;
      if (seen[other]) continue;
      seen[other] = true;
      via[other] = k;
      from[other] = n;
      queue.push(other);
    }
  }
  std::vector<std::string> names{circuit.elements()[closing.element].name};
  for (std::size_t n = closing.b; n != closing.a && via[n] != static_cast<std::size_t>(-1);
       n = from[n]) {
    names.push_back(circuit.elements()[branches[via[n]].element].name);
  }
  std::reverse(names.begin(), names.end());
  std::string text;
  for (std::size_t i = 0; i < names.size(); ++i) text += (i ? ", " : "") + names[i];
  return text;
}

}  // namespace

void check_topology(const Circuit& circuit) {
  const auto& nodes = circuit.nodes();
  const std::size_t count = nodes.size() + 1;
  auto index = [&](const std::string& name) -> std::size_t {
    if (name == circuit.ground()) return 0;
    return static_cast<std::size_t>(std::find(nodes.begin(), nodes.end(), name) -
                                     nodes.begin()) + 1;
  };

  // Loops of voltage-defined branches: two such branches across the same pair of nodes
  // (or an op-amp output tied to a source) leave a branch current undetermined.
  DisjointSets voltage(count);
  std::vector<Branch> voltage_branches;
  for (std::size_t e = 0; e < circuit.elements().size(); ++e) {
    const Element& el = circuit.elements()[e];
    if (!defines_voltage(el.kind)) continue;
    Branch br{el.kind == ElementKind::opamp ? index(el.nodes[2]) : index(el.nodes[0]),
              el.kind == ElementKind::opamp ? 0 : index(el.nodes[1]), e};
    if (!voltage.join(br.a, br.b)) {
      throw CircuitError("these elements form a loop of voltage sources (op-amp outputs, "
                         "inductors and controlled voltage sources count as such at DC): " +
                         describe_loop(circuit, voltage_branches, count, br) +
                         "; the current around the loop is undetermined — break the loop "
                         "with a resistor or remove one of them");
    }
    voltage_branches.push_back(br);
  }

  // Every node needs a DC path to ground.
  DisjointSets conduct(count);
  for (const Element& el : circuit.elements()) {
    if (!conducts_at_dc(el.kind)) continue;
    if (el.kind == ElementKind::opamp) conduct.join(index(el.nodes[2]), 0);
    else conduct.join(index(el.nodes[0]), index(el.nodes[1]));
  }
  for (std::size_t n = 1; n < count; ++n) {
    if (conduct.find(n) == conduct.find(0)) continue;
    std::string touching;
    for (const Element& el : circuit.elements()) {
      std::string role;
      for (std::size_t t = 0; t < el.nodes.size(); ++t) {
        if (el.nodes[t] != nodes[n - 1]) continue;
        if (el.kind == ElementKind::opamp) role = t == 0 ? "+ input" : t == 1 ? "- input" : "output";
        else role = to_string(el.kind);
      }
      for (const auto& c : el.control_nodes) {
        if (c == nodes[n - 1]) role = "control input";
      }
      if (!role.empty()) touching += (touching.empty() ? "" : ", ") + el.name + " (" + role + ")";
    }
    throw CircuitError("node '" + nodes[n - 1] + "' has no DC path to ground ('" +
                       circuit.ground() + "'); it connects only to: " + touching +
                       ". Add a resistor or a source that sets its DC voltage");
  }
}

}  // namespace lotwise::detail
