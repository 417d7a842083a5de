// Modified nodal analysis of one device configuration.
//
// Unknowns: the non-ground node voltages e and the currents j of "voltage-type" branches
// (capacitors with their ESR, voltage sources, on-devices with zero resistance). Inductors enter
// as current injections from the state, current sources as injections from the inputs,
// resistors and resistive devices as conductances. Solving M w = N [x; u] once per configuration
// gives every node voltage and branch current as a linear map of (x, u), from which A, B (state
// derivatives) and C, D (every signal) follow. Reference: C.-W. Ho, A. E. Ruehli and P. A. Brennan,
// "The modified nodal approach to network analysis", IEEE Trans. Circuits Syst. 22(6), 1975.
//
// Open devices: the KCL rows of a node group that the open devices leave without a conductive
// path to ground sum to an algebraic constraint on the cutset currents, so the group potential is
// undetermined. One KCL row of the group is replaced by the condition that keeps the cutset
// current constant, d/dt(sum of cutset inductor currents) = 0, which is linear in the node
// voltages because L di/dt = v - R i. Without inductors in the cutset the potential is set to the
// mean of the open devices' far terminals (the limit of equal leakage resistances).
#include <Eigen/LU>
#include <cmath>
#include <sstream>

#include "detail/node_graph.hpp"
#include "detail/union_find.hpp"
#include "pulsewise/configuration_model.hpp"
#include "pulsewise/topology.hpp"

namespace pulsewise {
namespace {

using detail::NodeGraph;
using detail::UnionFind;

enum class BranchForm {
  kNone,
  kConductance,
  kVoltageBranch,
  kInductor,
  kCurrentSource,
  kNonlinearCurrent,
};

struct BranchPlan {
  BranchForm form = BranchForm::kNone;
  double conductance = 0.0;  // kConductance
  double offset_v = 0.0;     // diode drop carried by a conductance or voltage branch
  double series_r = 0.0;     // kVoltageBranch
  int branch = -1;           // kVoltageBranch: index among branch unknowns
};

// How each element enters the nodal system in a configuration.
std::vector<BranchPlan> plan_branches(const Circuit& c, const std::vector<int>& device_of,
                                      DevicePattern pattern, int& branch_count) {
  std::vector<BranchPlan> plan(c.elements().size());
  branch_count = 0;
  for (std::size_t k = 0; k < plan.size(); ++k) {
    const Element& e = c.elements()[k];
    BranchPlan& p = plan[k];
    auto voltage_branch = [&](double r, double offset) {
      p.form = BranchForm::kVoltageBranch;
      p.series_r = r;
      p.offset_v = offset;
      p.branch = branch_count++;
    };
    switch (e.kind) {
      case ElementKind::kResistor:
        p.form = BranchForm::kConductance;
        p.conductance = 1.0 / e.value;
        break;
      case ElementKind::kInductor: p.form = BranchForm::kInductor; break;
      case ElementKind::kCapacitor: voltage_branch(e.series_resistance_ohm, 0.0); break;
      case ElementKind::kVoltageSource: voltage_branch(0.0, 0.0); break;
      case ElementKind::kCurrentSource: p.form = BranchForm::kCurrentSource; break;
      case ElementKind::kConstantPowerLoad: p.form = BranchForm::kNonlinearCurrent; break;
      case ElementKind::kSwitch:
      case ElementKind::kDiode: {
        const bool on = (pattern >> device_of[k]) & 1u;
        const double drop = e.kind == ElementKind::kDiode && on ? e.forward_voltage_v : 0.0;
        const double r = on ? e.on_resistance_ohm : e.off_resistance_ohm;
        if (std::isinf(r)) break;  // exactly open
        if (r == 0.0) {
          voltage_branch(0.0, drop);
        } else {
          p.form = BranchForm::kConductance;
          p.conductance = 1.0 / r;
          p.offset_v = drop;
        }
        break;
      }
    }
  }
  return plan;
}

bool is_conductive(const BranchPlan& p) {
  return p.form == BranchForm::kConductance || p.form == BranchForm::kVoltageBranch;
}

// A loop of zero-resistance voltage branches makes the nodal system singular; name it.
std::vector<int> find_zero_resistance_loop(const NodeGraph& g,
                                           const std::vector<BranchPlan>& plan) {
  UnionFind uf(g.ground() + 1);
  std::vector<int> forest;
  for (std::size_t k = 0; k < plan.size(); ++k) {
    if (plan[k].form != BranchForm::kVoltageBranch || plan[k].series_r != 0.0) continue;
    if (uf.unite(g.node_a[k], g.node_b[k])) {
      forest.push_back(static_cast<int>(k));
      continue;
    }
    std::vector<int> loop{static_cast<int>(k)};
    for (int m : detail::forest_path(g, forest, g.node_a[k], g.node_b[k])) loop.push_back(m);
    return loop;
  }
  return {};
}

}  // namespace

// ---------------------------------------------------------------------------------------------
// CircuitModel: fixed layout

CircuitModel::CircuitModel(const Circuit& circuit) : circuit_(circuit) {
  check_circuit(circuit_);
  const NodeGraph graph(circuit_);
  node_names_ = graph.names;
  const auto& els = circuit_.elements();
  const int ground = graph.ground();
  for (std::size_t k = 0; k < els.size(); ++k) {
    node_a_.push_back(graph.node_a[k] == ground ? -1 : graph.node_a[k]);
    node_b_.push_back(graph.node_b[k] == ground ? -1 : graph.node_b[k]);
  }
  state_of_element_.assign(els.size(), -1);
  input_of_element_.assign(els.size(), -1);
  device_of_element_.assign(els.size(), -1);
  nonlinear_of_element_.assign(els.size(), -1);
  for (auto kind : {ElementKind::kInductor, ElementKind::kCapacitor}) {
    for (std::size_t k = 0; k < els.size(); ++k) {
      if (els[k].kind != kind) continue;
      state_of_element_[k] = static_cast<int>(state_elements_.size());
      state_elements_.push_back(static_cast<int>(k));
    }
  }
  for (std::size_t k = 0; k < els.size(); ++k) {
    if (els[k].kind == ElementKind::kVoltageSource || els[k].kind == ElementKind::kCurrentSource) {
      input_of_element_[k] = static_cast<int>(input_elements_.size());
      input_elements_.push_back(static_cast<int>(k));
    }
    if (els[k].is_device()) {
      device_of_element_[k] = static_cast<int>(devices_.size());
      devices_.push_back(static_cast<int>(k));
    }
    if (els[k].kind == ElementKind::kConstantPowerLoad) {
      nonlinear_of_element_[k] = static_cast<int>(nonlinear_elements_.size());
      nonlinear_elements_.push_back(static_cast<int>(k));
    }
  }
  for (const auto& node : node_names_)
    signals_.push_back({node + ".v", SignalQuantity::kVoltage, -1});
  element_signal_.assign(els.size() * 2, -1);
  for (std::size_t k = 0; k < els.size(); ++k) {
    element_signal_[2 * k] = static_cast<int>(signals_.size());
    signals_.push_back({els[k].name + ".v", SignalQuantity::kVoltage, static_cast<int>(k)});
    element_signal_[2 * k + 1] = static_cast<int>(signals_.size());
    signals_.push_back({els[k].name + ".i", SignalQuantity::kCurrent, static_cast<int>(k)});
  }
  for (std::size_t s = 0; s < signals_.size(); ++s) signal_index_[signals_[s].name] = s;
}

int CircuitModel::find_signal(const std::string& name) const {
  auto it = signal_index_.find(name);
  return it == signal_index_.end() ? -1 : it->second;
}

void CircuitModel::inputs_at(double t, Eigen::Ref<Eigen::VectorXd> u) const {
  for (std::size_t k = 0; k < input_elements_.size(); ++k)
    u[k] = circuit_.elements()[input_elements_[k]].waveform.value(t);
  u[input_elements_.size()] = 1.0;
}

void CircuitModel::input_slopes_at(double t, Eigen::Ref<Eigen::VectorXd> du) const {
  for (std::size_t k = 0; k < input_elements_.size(); ++k)
    du[k] = circuit_.elements()[input_elements_[k]].waveform.slope(t);
  du[input_elements_.size()] = 0.0;
}

Eigen::VectorXd CircuitModel::initial_state() const {
  Eigen::VectorXd x(state_count());
  for (std::size_t k = 0; k < state_elements_.size(); ++k)
    x[k] = circuit_.elements()[state_elements_[k]].initial_value;
  return x;
}

const ConfigurationModel& CircuitModel::configuration(DevicePattern pattern) {
  if (!caching_) {
    uncached_ = std::make_unique<ConfigurationModel>(build(pattern));
    ++built_;
    return *uncached_;
  }
  auto it = cache_.find(pattern);
  if (it != cache_.end()) {
    ++hits_;
    return *it->second;
  }
  ++built_;
  auto [pos, inserted] =
      cache_.emplace(pattern, std::make_unique<ConfigurationModel>(build(pattern)));
  return *pos->second;
}

std::string CircuitModel::describe(DevicePattern pattern) const {
  std::ostringstream out;
  for (std::size_t d = 0; d < devices_.size(); ++d) {
    out << (d ? ", " : "") << circuit_.elements()[devices_[d]].name
        << (((pattern >> d) & 1u) ? " on" : " off");
  }
  return out.str();
}

// ---------------------------------------------------------------------------------------------
// Building one configuration

namespace {

// Dense nodal system M w = Nx x + Nu u for one configuration, w = [e; j].
struct NodalSystem {
  Eigen::MatrixXd M, Nx, Nu, Nn;
};

class ConfigurationBuilder {
 public:
  ConfigurationBuilder(const Circuit& c, const NodeGraph& g, const std::vector<int>& state_of,
                       const std::vector<int>& input_of, const std::vector<int>& device_of,
                       const std::vector<int>& nonlinear_of, std::size_t n_states,
                       std::size_t n_inputs, std::size_t n_nonlinear)
      : c_(c),
        g_(g),
        state_of_(state_of),
        input_of_(input_of),
        device_of_(device_of),
        nonlinear_of_(nonlinear_of),
        n_x_(n_states),
        n_u_(n_inputs),
        n_n_(n_nonlinear) {}

  ConfigurationModel build(DevicePattern pattern, const std::vector<SignalInfo>& signals);

 private:
  void stamp(NodalSystem& s);
  void find_groups(ConfigurationModel& model, std::vector<int>& group_of_node);
  void replace_group_rows(NodalSystem& s, ConfigurationModel& model,
                          const std::vector<int>& group_of_node);
  // Row of an element's voltage over [e; j] plus its (x, u) part.
  struct Solution {
    Eigen::MatrixXd Sx, Su, Sn;
  };
  struct Rows {
    Eigen::RowVectorXd vx, vu, vn, ix, iu, in;
  };
  Rows element_rows(int k, const Solution& s) const;

  int unit() const { return static_cast<int>(n_u_) - 1; }
  bool real_node(int n) const { return n < g_.ground(); }

  const Circuit& c_;
  const NodeGraph& g_;
  const std::vector<int>& state_of_;
  const std::vector<int>& input_of_;
  const std::vector<int>& device_of_;
  const std::vector<int>& nonlinear_of_;
  std::size_t n_x_, n_u_, n_n_;
  std::vector<BranchPlan> plan_;
  int n_branches_ = 0;
  int n_nodes_ = 0;
};

void ConfigurationBuilder::stamp(NodalSystem& s) {
  const int n = n_nodes_ + n_branches_;
  s.M = Eigen::MatrixXd::Zero(n, n);
  s.Nx = Eigen::MatrixXd::Zero(n, n_x_);
  s.Nu = Eigen::MatrixXd::Zero(n, n_u_);
  s.Nn = Eigen::MatrixXd::Zero(n, n_n_);
  for (std::size_t k = 0; k < plan_.size(); ++k) {
    const int a = g_.node_a[k], b = g_.node_b[k];
    const BranchPlan& p = plan_[k];
    const Element& e = c_.elements()[k];
    // KCL rows hold currents leaving the node: sum = 0, moved to the right-hand side as needed.
    switch (p.form) {
      case BranchForm::kNone: break;
      case BranchForm::kConductance:
        for (auto [row, sign] : {std::pair{a, 1.0}, std::pair{b, -1.0}}) {
          if (!real_node(row)) continue;
          if (real_node(a)) s.M(row, a) += sign * p.conductance;
          if (real_node(b)) s.M(row, b) -= sign * p.conductance;
          s.Nu(row, unit()) += sign * p.conductance * p.offset_v;
        }
        break;
      case BranchForm::kInductor:
        if (real_node(a)) s.Nx(a, state_of_[k]) -= 1.0;
        if (real_node(b)) s.Nx(b, state_of_[k]) += 1.0;
        break;
      case BranchForm::kCurrentSource:  // delivers u out of its plus terminal into node a
        if (real_node(a)) s.Nu(a, input_of_[k]) += 1.0;
        if (real_node(b)) s.Nu(b, input_of_[k]) -= 1.0;
        break;
      case BranchForm::kNonlinearCurrent:  // a load: n flows a -> b through the element
        if (real_node(a)) s.Nn(a, nonlinear_of_[k]) -= 1.0;
        if (real_node(b)) s.Nn(b, nonlinear_of_[k]) += 1.0;
        break;
      case BranchForm::kVoltageBranch: {
        const int row = n_nodes_ + p.branch;
        if (real_node(a)) s.M(a, row) += 1.0;
        if (real_node(b)) s.M(b, row) -= 1.0;
        if (real_node(a)) s.M(row, a) = 1.0;
        if (real_node(b)) s.M(row, b) = -1.0;
        s.M(row, row) = -p.series_r;
        if (e.kind == ElementKind::kCapacitor) s.Nx(row, state_of_[k]) = 1.0;
        if (e.kind == ElementKind::kVoltageSource) s.Nu(row, input_of_[k]) = 1.0;
        if (e.is_device()) s.Nu(row, unit()) = p.offset_v;
        break;
      }
    }
  }
}

void ConfigurationBuilder::find_groups(ConfigurationModel& model, std::vector<int>& group_of_node) {
  UnionFind uf(g_.ground() + 1);
  for (std::size_t k = 0; k < plan_.size(); ++k)
    if (is_conductive(plan_[k])) uf.unite(g_.node_a[k], g_.node_b[k]);
  const int ground_root = uf.find(g_.ground());
  std::map<int, int> group_of_root;
  group_of_node.assign(n_nodes_, -1);
  for (int node = 0; node < n_nodes_; ++node) {
    const int root = uf.find(node);
    if (root == ground_root) continue;
    auto [it, inserted] =
        group_of_root.try_emplace(root, static_cast<int>(model.floating_groups.size()));
    if (inserted) model.floating_groups.emplace_back();
    group_of_node[node] = it->second;
    model.floating_groups[it->second].nodes.push_back(g_.names[node]);
  }
  for (auto& group : model.floating_groups) {
    group.current_row_x = Eigen::RowVectorXd::Zero(n_x_);
    group.current_row_u = Eigen::RowVectorXd::Zero(n_u_);
  }
  auto group_at = [&](int node) { return real_node(node) ? group_of_node[node] : -1; };
  for (std::size_t k = 0; k < plan_.size(); ++k) {
    const int ga = group_at(g_.node_a[k]), gb = group_at(g_.node_b[k]);
    if (ga == gb) continue;
    const Element& e = c_.elements()[k];
    for (auto [grp, entering] : {std::pair{ga, false}, std::pair{gb, true}}) {
      if (grp < 0) continue;
      FloatingGroup& group = model.floating_groups[grp];
      // Inductor current flows a -> b: it enters the group at b. A current source delivers into a.
      if (e.kind == ElementKind::kInductor) {
        group.cutset_inductors.push_back(static_cast<int>(k));
        group.current_row_x[state_of_[k]] += entering ? 1.0 : -1.0;
      } else if (e.kind == ElementKind::kCurrentSource) {
        group.cutset_current_sources.push_back(static_cast<int>(k));
        group.current_row_u[input_of_[k]] += entering ? -1.0 : 1.0;
      } else if (e.is_device() && plan_[k].form == BranchForm::kNone) {
        group.adjacent_open_devices.push_back(static_cast<int>(k));
      }
    }
  }
}

void ConfigurationBuilder::replace_group_rows(NodalSystem& s, ConfigurationModel& model,
                                              const std::vector<int>& group_of_node) {
  for (std::size_t gi = 0; gi < model.floating_groups.size(); ++gi) {
    const FloatingGroup& group = model.floating_groups[gi];
    int row = -1;
    for (int node = 0; node < n_nodes_ && row < 0; ++node)
      if (group_of_node[node] == static_cast<int>(gi)) row = node;
    s.M.row(row).setZero();
    s.Nx.row(row).setZero();
    s.Nu.row(row).setZero();
    s.Nn.row(row).setZero();
    auto inside = [&](int node) {
      return real_node(node) && group_of_node[node] == static_cast<int>(gi);
    };
    if (!group.cutset_inductors.empty()) {
      // sum over cutset of sigma * (e_a - e_b - R i) / L = 0, sigma = +1 when entering.
      for (int k : group.cutset_inductors) {
        const Element& e = c_.elements()[k];
        const double sigma = inside(g_.node_b[k]) ? 1.0 : -1.0;
        const int a = g_.node_a[k], b = g_.node_b[k];
        if (real_node(a)) s.M(row, a) += sigma / e.value;
        if (real_node(b)) s.M(row, b) -= sigma / e.value;
        s.Nx(row, state_of_[k]) += sigma * e.series_resistance_ohm / e.value;
      }
    } else {
      for (int k : group.adjacent_open_devices) {
        const int in = inside(g_.node_a[k]) ? g_.node_a[k] : g_.node_b[k];
        const int out = in == g_.node_a[k] ? g_.node_b[k] : g_.node_a[k];
        s.M(row, in) += 1.0;
        if (real_node(out)) s.M(row, out) -= 1.0;
      }
    }
  }
}

ConfigurationBuilder::Rows ConfigurationBuilder::element_rows(int k, const Solution& sol) const {
  const int a = g_.node_a[k], b = g_.node_b[k];
  Rows r;
  r.vx = Eigen::RowVectorXd::Zero(n_x_);
  r.vu = Eigen::RowVectorXd::Zero(n_u_);
  r.vn = Eigen::RowVectorXd::Zero(n_n_);
  if (real_node(a)) r.vx += sol.Sx.row(a), r.vu += sol.Su.row(a), r.vn += sol.Sn.row(a);
  if (real_node(b)) r.vx -= sol.Sx.row(b), r.vu -= sol.Su.row(b), r.vn -= sol.Sn.row(b);
  r.ix = Eigen::RowVectorXd::Zero(n_x_);
  r.iu = Eigen::RowVectorXd::Zero(n_u_);
  r.in = Eigen::RowVectorXd::Zero(n_n_);
  const BranchPlan& p = plan_[k];
  const Element& e = c_.elements()[k];
  switch (p.form) {
    case BranchForm::kNone: break;
    case BranchForm::kConductance:
      r.ix = p.conductance * r.vx;
      r.iu = p.conductance * r.vu;
      r.in = p.conductance * r.vn;
      r.iu[unit()] -= p.conductance * p.offset_v;
      break;
    case BranchForm::kInductor: r.ix[state_of_[k]] = 1.0; break;
    case BranchForm::kCurrentSource: r.iu[input_of_[k]] = 1.0; break;
    case BranchForm::kNonlinearCurrent: r.in[nonlinear_of_[k]] = 1.0; break;
    case BranchForm::kVoltageBranch: {
      const double sign = e.kind == ElementKind::kVoltageSource ? -1.0 : 1.0;
      const int row = n_nodes_ + p.branch;
      r.ix = sign * sol.Sx.row(row);
      r.iu = sign * sol.Su.row(row);
      r.in = sign * sol.Sn.row(row);
      break;
    }
  }
  return r;
}

ConfigurationModel ConfigurationBuilder::build(DevicePattern pattern,
                                               const std::vector<SignalInfo>& signals) {
  ConfigurationModel model;
  model.pattern = pattern;
  n_nodes_ = g_.ground();
  plan_ = plan_branches(c_, device_of_, pattern, n_branches_);
  model.loop_elements = find_zero_resistance_loop(g_, plan_);
  if (!model.loop_elements.empty()) {
    std::ostringstream p;
    p << "the configuration closes a loop of zero-resistance branches:";
    for (int k : model.loop_elements) p << " '" << c_.elements()[k].name << "'";
    model.problem = p.str();
    return model;
  }
  NodalSystem s;
  stamp(s);
  std::vector<int> group_of_node;
  find_groups(model, group_of_node);
  for (const auto& group : model.floating_groups) {
    if (group.cutset_inductors.empty() && group.adjacent_open_devices.empty()) {
      model.problem = "node '" + group.nodes.front() + "' is left with no defined potential";
      return model;
    }
  }
  replace_group_rows(s, model, group_of_node);
  Eigen::FullPivLU<Eigen::MatrixXd> lu(s.M);
  if (!lu.isInvertible()) {
    model.problem = "the nodal equations of this configuration are singular";
    return model;
  }
  // Eigen's solvers touch the data pointer even for zero columns: solve only what exists.
  auto solve = [&](const Eigen::MatrixXd& rhs) -> Eigen::MatrixXd {
    if (rhs.cols() == 0) return Eigen::MatrixXd::Zero(rhs.rows(), 0);
    return lu.solve(rhs);
  };
  const Solution sol{solve(s.Nx), solve(s.Nu), solve(s.Nn)};
  model.A = Eigen::MatrixXd::Zero(n_x_, n_x_);
  model.B = Eigen::MatrixXd::Zero(n_x_, n_u_);
  model.E = Eigen::MatrixXd::Zero(n_x_, n_n_);
  model.C = Eigen::MatrixXd::Zero(signals.size(), n_x_);
  model.D = Eigen::MatrixXd::Zero(signals.size(), n_u_);
  model.F = Eigen::MatrixXd::Zero(signals.size(), n_n_);
  for (int node = 0; node < n_nodes_; ++node) {
    model.C.row(node) = sol.Sx.row(node);
    model.D.row(node) = sol.Su.row(node);
    model.F.row(node) = sol.Sn.row(node);
  }
  for (std::size_t k = 0; k < plan_.size(); ++k) {
    const Rows r = element_rows(static_cast<int>(k), sol);
    const int vs = n_nodes_ + 2 * static_cast<int>(k);
    model.C.row(vs) = r.vx, model.D.row(vs) = r.vu, model.F.row(vs) = r.vn;
    model.C.row(vs + 1) = r.ix, model.D.row(vs + 1) = r.iu, model.F.row(vs + 1) = r.in;
    const Element& e = c_.elements()[k];
    if (e.kind == ElementKind::kInductor) {  // L di/dt = v - R i (L: the unsaturated value)
      const int x = state_of_[k];
      model.A.row(x) = r.vx / e.value;
      model.A(x, x) -= e.series_resistance_ohm / e.value;
      model.B.row(x) = r.vu / e.value;
      model.E.row(x) = r.vn / e.value;
    } else if (e.kind == ElementKind::kCapacitor) {  // C dv/dt = i
      const int x = state_of_[k];
      model.A.row(x) = r.ix / e.value;
      model.B.row(x) = r.iu / e.value;
      model.E.row(x) = r.in / e.value;
    }
  }
  model.valid = true;
  return model;
}

}  // namespace

ConfigurationModel CircuitModel::build(DevicePattern pattern) const {
  const NodeGraph graph(circuit_);
  ConfigurationBuilder builder(circuit_, graph, state_of_element_, input_of_element_,
                               device_of_element_, nonlinear_of_element_, state_count(),
                               input_count(), nonlinear_elements_.size());
  return builder.build(pattern, signals_);
}

}  // namespace pulsewise
