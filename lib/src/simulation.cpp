// The cycle loop and the event engine of the exact piecewise-linear path.
//
// Between events the circuit is the linear system of one configuration. Sources are affine in
// time between breakpoints, so the augmented state z = [x; u; du/dt of ramping inputs] obeys
// dz/dt = M z with M = [[A, B, 0], [0, 0, S], [0, 0, 0]] and the whole trajectory is exp(M t) z0.
// Time advances in pieces bounded by the next scheduled event (gate edge, source breakpoint,
// cycle end) and by the sub-step bound; on each piece every device condition g(s) >= 0 is a
// polynomial and its first downward crossing is located by safeguarded Newton. After an event the
// configuration is made consistent at t+ (see make_consistent()).
//
// Circuits with nonlinear elements (saturating inductors, constant-power loads) take the ODE
// path instead: the same configurations, events and metrics, but each interval is integrated by
// Boost.Odeint's Dormand-Prince 5(4) pair with dense output (J. R. Dormand and P. J. Prince,
// "A family of embedded Runge-Kutta formulae", J. Comput. Appl. Math. 6(1), 1980). Events are
// bracketed on the dense output at four points per step and refined by the Illinois variant of
// regula falsi; averages and RMS use 5-point Gauss-Legendre quadrature on the dense output, so
// on this path they are as accurate as the integration tolerance, not exact.
#include "pulsewise/simulation.hpp"

#include <algorithm>
#include <cmath>
#include <cstdint>
#include <cstring>
#include <limits>
#include <set>
#include <sstream>

#include <boost/numeric/odeint.hpp>

#include "detail/engine.hpp"
#include "detail/nonlinear.hpp"
#include "detail/period_replay.hpp"
#include "detail/piece_kernel.hpp"
#include "detail/piece_operators.hpp"
#include "detail/polynomial.hpp"
#include "detail/stiff_integrator.hpp"

namespace pulsewise {

using detail::CycleAccumulator;
using detail::EnergyRole;
using detail::EnergyTerm;
using detail::PatternData;
using detail::SparseRow;
namespace poly = detail::poly;

namespace {
// Sets every entry of v to value at size n; after the first period only the fill remains.
void refill(std::vector<double>& v, std::size_t n, double value) {
  if (v.size() != n) v.resize(n);
  std::fill(v.begin(), v.end(), value);
}
}  // namespace

void detail::CycleAccumulator::reset(std::size_t signals, std::size_t energy_elements) {
  refill(element_energy, energy_elements, 0.0);
  refill(integral, signals, 0.0);
  refill(square_integral, signals, 0.0);
  refill(min, signals, std::numeric_limits<double>::infinity());
  refill(max, signals, -std::numeric_limits<double>::infinity());
  intervals.clear();
  energy_in = dissipated = idle_time = 0.0;
  natural_turn_off = false;
  forced_off_near_zero = false;
  events = 0;
}

namespace {

constexpr double kInf = std::numeric_limits<double>::infinity();

using poly::kExtremumTolerance;
using poly::slope_changes_sign;

// a . z over n entries: the rows and states here are tiny, and a plain loop beats the general
// dot product's set-up.
inline double row_dot(const double* a, const double* z, int n) {
  double v = 0.0;
  for (int i = 0; i < n; ++i) v += a[i] * z[i];
  return v;
}

// The piece handed to observers: polynomial coefficients of the recorded signals.
class PolynomialPiece final : public PieceView {
 public:
  double t0 = 0, h = 0;
  DevicePattern pat = 0;
  int order = 0;
  const Eigen::MatrixXd* coefficients = nullptr;  // rows: signals, columns: powers of s

  double t_begin() const override { return t0; }
  double t_end() const override { return t0 + h; }
  DevicePattern pattern() const override { return pat; }
  void recorded_values_at(double t, std::span<double> out) const override {
    const double s = h > 0 ? std::clamp((t - t0) / h, 0.0, 1.0) : 0.0;
    for (std::size_t j = 0; j < out.size(); ++j) {
      double v = (*coefficients)(j, order);
      for (int k = order - 1; k >= 0; --k) v = v * s + (*coefficients)(j, k);
      out[j] = v;
    }
  }
};

}  // namespace

struct Simulation::Impl {
  CircuitModel model;
  SimulationOptions options;
  double period_s = 0.0;
  std::unique_ptr<detail::GateBank> gates;
  // Layout of z.
  int n_x = 0, n_u = 0, n_r = 0, n_z = 0;
  std::vector<int> ramp_inputs;  // input index of each slope entry
  // Slope slot r holds du/dt / ramp_scale[r]: 1 for tables, w for sinusoids (keeps ||M|| ~ w).
  std::vector<double> ramp_scale, ramp_offset;
  std::vector<bool> ramp_oscillates;
  std::vector<int> recorded;    // signal indices
  std::vector<int> diode_bits;  // device bits of the diodes (one event row each)
  std::vector<int> inductor_states;
  std::vector<std::pair<int, EnergyTerm>> energy_elements;  // element index, role
  int output_recorded = -1;                                 // index into recorded
  std::map<DevicePattern, PatternData> patterns;
  // ODE path.
  bool nonlinear = false;
  int n_n = 0;
  std::vector<std::pair<int, detail::SaturationCurve>> saturating;  // state index, curve
  std::vector<detail::ConstantPowerLaw> loads;                      // per nonlinear current
  Eigen::VectorXd n_guess;                                          // warm start of the loads
  PatternData uncached;
  Eigen::VectorXd x0;

  // Run state.
  Observer* observer = nullptr;
  Observer* piece_observer = nullptr;  // the observer, when it takes pieces and events
  double t = 0.0;
  Eigen::VectorXd z;
  DevicePattern pattern = 0;
  const PatternData* current = nullptr;
  detail::TaylorPiece piece;
  detail::KernelLayout kernel;  // the fixed-size piece kernel's view of the run
  // Pieces met again (reuse_piece_operators): per configuration and length, the operators built
  // at its second occurrence, and how often their check kept or handed back the piece.
  struct OperatorEntry {
    const PatternData* data = nullptr;
    double h = 0.0;
    bool built = false, disabled = false;
    long kept = 0, refused = 0;
    int builds = 0;
    detail::PieceOperators operators;
  };
  std::vector<OperatorEntry> operator_entries;
  // Counts the changes of operator_entries that change results (a new entry, a build): a period
  // is computed the same way only from the same count (see PeriodStart).
  int operator_epoch = 0;
  Eigen::MatrixXd signal_coefficients;
  CycleAccumulator cycle;
  RunSummary summary;
  double current_scale = 1e-3, voltage_scale = 1.0;
  bool in_idle = false;
  int last_switch_off = -1;  // element index of the switch that opened last
  // Per-period output averages for the settling figure (which needs the final value first).
  // Single precision: 4 bytes per period, and the band test is far coarser than its rounding.
  std::vector<float> output_averages;
  std::vector<DevicePattern> visited;         // consistency search, reused to avoid allocation
  std::vector<double> diode_current_before;   // on-diode currents just before a gate edge
  double output_max = 0.0, output_min = 0.0;  // extremes of the output signal over the run
  Eigen::VectorXd u_new, du_new;              // apply_schedule scratch
  Eigen::VectorXd mean, end_z, end_slope;     // moments of the current piece
  Eigen::MatrixXd gram;
  CycleMetrics cycle_metrics;         // filled by finish_cycle(), reused every period
  Eigen::VectorXd cycle_start_state;  // x at the start of the period
  // Flat lookup in front of the pattern map: a run visits a handful of patterns.
  std::vector<std::pair<DevicePattern, const PatternData*>> recent_patterns;
  std::size_t pattern_hits = 0;              // lookups served by recent_patterns (cache hits too)
  std::vector<double> piece_min, piece_max;  // extremes of each recorded signal on the piece
  std::vector<int> inductor_recorded;        // recorded index of each inductor current, or -1
  // Every source is constant: z keeps the inputs of the start, and no breakpoint ever comes.
  bool inputs_constant = false;
  // The run period of every source breakpoint, sorted; whether a source is a sinusoid.
  std::vector<long> breakpoint_periods;
  bool inputs_oscillate = false;
  // The stretch of quiet periods that the last call of quiet_until() found (see there).
  long quiet_begin = 0, quiet_end = -1;
  // Replay of a repeating period (detail/period_replay.hpp): the steps of this period and of
  // the one before, whether this period can be one (no state event so far), and whether the
  // next period is replayed.
  detail::PeriodReplay replay;
  std::vector<detail::PeriodStep> steps_now, steps_before;
  bool steps_valid = false, replay_next = false;
  int replay_builds = 0;
  long last_replay_build = 0;
  std::vector<int> replay_extra_inductors;  // inductor index of each extra replay state
  Eigen::VectorXd replay_start, replay_values, replay_abs, replay_bound;
  struct PendingExtremum {
    int step, signal;
    double y0, d0, d1, band;  // value and slopes d/ds at the piece's ends, variation bound
  };
  std::vector<PendingExtremum> replay_pending;
  Eigen::MatrixXd replay_states;            // start state of each step with a pending extremum
  std::vector<int> replay_signal_inductor;  // per recorded signal: its inductor index, or -1
  // Everything a period's computation reads besides the gates' plan, which periodic gates repeat.
  struct PeriodStart {
    Eigen::VectorXd z;
    DevicePattern pattern = 0;
    const PatternData* data = nullptr;
    bool in_idle = false;
    int last_switch_off = -1;
    double current_scale = 0.0, voltage_scale = 0.0;
    // The method that computes the period: the replay (with the operators of build number
    // replay_builds) or the piece engine.
    bool replayed = false;
    int replay_builds = 0;
    int operator_epoch = 0;  // and the operators of the pieces met again
  };
  // A period near the steady state: where it began, and what it gave (see recurrence_found).
  struct PeriodRecord {
    long index = -1;
    std::uint64_t hash = 0;  // of start.z and start.pattern
    PeriodStart start;
    CycleMetrics metrics;
    long events = 0;
  };
  std::vector<PeriodRecord> recent_periods;  // ring: period k in slot k % kRecurrenceDepth
  long recorded_run = 0;                     // consecutive periods in the ring, up to the last
  PeriodStart period_start;                  // of the period being computed
  // Once a cycle closed: its first period and its length; every later period up to cycle_end
  // (the end of the stretch of quiet periods it closed in) repeats one of it.
  long cycle_first = -1, cycle_length = 0, cycle_end = -1;

  Impl(const Circuit& circuit, SimulationOptions opts) : model(circuit), options(std::move(opts)) {
    options.validate();
    period_s = options.switching_period_s > 0 ? options.switching_period_s
                                              : circuit.first_modulator_period_s();
    if (!(period_s > 0))
      throw InputError(ErrorKind::kInvalidOption, "", "the run has no switching period",
                       "add a modulator or set the switching period of the run");
    gates =
        std::make_unique<detail::GateBank>(circuit, model.devices(), 1e-12 * period_s, period_s);
    model.set_caching(options.cache);
    set_up_layout();
    set_up_recorded();
    set_up_energy();
    set_up_nonlinear();
    set_up_kernel();
    x0 = model.initial_state();
  }

  void set_up_kernel() {
    kernel.size = n_z;
    kernel.signals = static_cast<int>(recorded.size());
    kernel.use_gram = use_gram();
    kernel.energy_accounting = options.energy_accounting;
    kernel.diode_bits = diode_bits;
    kernel.inductor_states = inductor_states;
    kernel.inductor_recorded = inductor_recorded;
    kernel.energy_roles.clear();
    for (const auto& element : energy_elements) kernel.energy_roles.push_back(element.second.role);
  }

  // The Gram matrix costs about (K+1)^2 n; per-signal polynomials (K+1)^2 each. Energy
  // accounting needs the Gram matrix anyway; without it, few signals go the direct way.
  bool use_gram() const {
    return options.energy_accounting || recorded.size() > static_cast<std::size_t>(n_z);
  }

  void set_up_nonlinear() {
    nonlinear = model.circuit().has_nonlinear_elements() || options.force_ode_path;
    n_n = static_cast<int>(model.nonlinear_elements().size());
    for (int s = 0; s < n_x; ++s) {
      const Element& e = model.circuit().elements()[model.state_elements()[s]];
      if (e.is_saturating())
        saturating.push_back({s, {e.value, e.saturated_inductance_h, e.saturation_current_a}});
    }
    for (int el : model.nonlinear_elements()) {
      const Element& e = model.circuit().elements()[el];
      loads.push_back({e.power_w, e.cut_in_voltage_v});
    }
    n_guess = Eigen::VectorXd::Zero(n_n);
  }

  void set_up_layout() {
    n_x = static_cast<int>(model.state_count());
    n_u = static_cast<int>(model.input_count());
    for (std::size_t k = 0; k < model.input_elements().size(); ++k) {
      const Waveform& w = model.circuit().elements()[model.input_elements()[k]].waveform;
      if (!w.can_ramp()) continue;
      ramp_inputs.push_back(static_cast<int>(k));
      const bool oscillates = w.is_sinusoidal() && w.angular_frequency() > 0;
      ramp_oscillates.push_back(oscillates);
      ramp_scale.push_back(oscillates ? w.angular_frequency() : 1.0);
      ramp_offset.push_back(w.offset());
    }
    n_r = static_cast<int>(ramp_inputs.size());
    inputs_constant = true;
    for (int el : model.input_elements()) {
      const Waveform& w = model.circuit().elements()[el].waveform;
      inputs_constant &= w.kind() == Waveform::Kind::kConstant;
      inputs_oscillate |= w.is_sinusoidal();
      if (w.is_sinusoidal() || w.kind() == Waveform::Kind::kConstant) continue;
      for (const auto& point : w.points())
        breakpoint_periods.push_back(detail::run_period_of(point.first, period_s));
    }
    std::sort(breakpoint_periods.begin(), breakpoint_periods.end());
    n_z = n_x + n_u + n_r;
    for (std::size_t d = 0; d < model.devices().size(); ++d)
      if (model.circuit().elements()[model.devices()[d]].kind == ElementKind::kDiode)
        diode_bits.push_back(static_cast<int>(d));
    for (int s = 0; s < n_x; ++s)
      if (model.circuit().elements()[model.state_elements()[s]].kind == ElementKind::kInductor)
        inductor_states.push_back(s);
    piece.resize(n_z);
    u_new = Eigen::VectorXd::Zero(n_u);
    mean = end_z = end_slope = Eigen::VectorXd::Zero(n_z);
    gram = Eigen::MatrixXd::Zero(n_z, n_z);
    du_new = Eigen::VectorXd::Zero(n_u);
    visited.reserve(64);
    diode_current_before.assign(diode_bits.size(), kInf);
    z = Eigen::VectorXd::Zero(n_z);
  }

  void set_up_recorded() {
    std::vector<std::string> names = options.recorded_signals;
    if (names.empty()) {
      for (const auto& s : model.signals()) {
        const bool node = s.element < 0;
        const Element* e = node ? nullptr : &model.circuit().elements()[s.element];
        const bool state =
            e && ((e->kind == ElementKind::kInductor && s.quantity == SignalQuantity::kCurrent) ||
                  (e->kind == ElementKind::kCapacitor && s.quantity == SignalQuantity::kVoltage));
        if (node || state) names.push_back(s.name);
      }
    }
    if (!options.output_signal.empty() &&
        std::find(names.begin(), names.end(), options.output_signal) == names.end())
      names.push_back(options.output_signal);
    for (const auto& name : names) {
      const int index = model.find_signal(name);
      if (index < 0)
        throw InputError(ErrorKind::kInvalidOption, "",
                         "the circuit has no signal named '" + name + "'",
                         "use '<node>.v', '<element>.v' or '<element>.i', for example '" +
                             model.signals().front().name + "'");
      if (name == options.output_signal) output_recorded = static_cast<int>(recorded.size());
      recorded.push_back(index);
    }
    for (int index : recorded) summary.recorded.push_back(model.signals()[index]);
    piece_min.assign(recorded.size(), 0.0);
    piece_max.assign(recorded.size(), 0.0);
    for (int state : inductor_states) {
      const int signal = model.element_current_signal(model.state_elements()[state]);
      const auto it = std::find(recorded.begin(), recorded.end(), signal);
      inductor_recorded.push_back(it == recorded.end() ? -1
                                                       : static_cast<int>(it - recorded.begin()));
    }
  }

  void set_up_energy() {
    const auto& els = model.circuit().elements();
    for (std::size_t k = 0; k < els.size(); ++k) {
      const Element& e = els[k];
      switch (e.kind) {
        case ElementKind::kVoltageSource:
        case ElementKind::kCurrentSource:
          energy_elements.push_back({static_cast<int>(k), {EnergyRole::kSource, 0.0}});
          break;
        case ElementKind::kResistor:
        case ElementKind::kSwitch:
        case ElementKind::kDiode:
          energy_elements.push_back({static_cast<int>(k), {EnergyRole::kDissipativeVi, 0.0}});
          break;
        case ElementKind::kConstantPowerLoad:
          energy_elements.push_back({static_cast<int>(k), {EnergyRole::kDissipativeVi, 0.0}});
          break;
        case ElementKind::kInductor:
        case ElementKind::kCapacitor:
          if (e.series_resistance_ohm > 0)
            energy_elements.push_back(
                {static_cast<int>(k), {EnergyRole::kSeriesResistance, e.series_resistance_ohm}});
          break;
      }
    }
  }

  // Row over z of signal `index` of a configuration.
  Eigen::RowVectorXd signal_row(const ConfigurationModel& cfg, int index) const {
    Eigen::RowVectorXd row = Eigen::RowVectorXd::Zero(n_z);
    row.head(n_x) = cfg.C.row(index);
    row.segment(n_x, n_u) = cfg.D.row(index);
    return row;
  }

  void fill_pattern_data(const ConfigurationModel& cfg, PatternData& pd) const {
    pd.model = &cfg;
    if (!cfg.valid) return;
    pd.M = Eigen::MatrixXd::Zero(n_z, n_z);
    pd.M.topLeftCorner(n_x, n_x) = cfg.A;
    pd.M.block(0, n_x, n_x, n_u) = cfg.B;
    for (int r = 0; r < n_r; ++r) {
      // u' = scale * r; for a sinusoid also r' = -w (u - offset) (harmonic oscillator).
      const int u_row = n_x + ramp_inputs[r], r_row = n_x + n_u + r;
      pd.M(u_row, r_row) = ramp_scale[r];
      if (ramp_oscillates[r]) {
        pd.M(r_row, u_row) = -ramp_scale[r];
        pd.M(r_row, n_x + n_u - 1) = ramp_scale[r] * ramp_offset[r];
      }
    }
    pd.recorded.resize(recorded.size(), n_z);
    for (std::size_t j = 0; j < recorded.size(); ++j)
      pd.recorded.row(j) = signal_row(cfg, recorded[j]);
    pd.events.resize(diode_bits.size(), n_z);
    for (std::size_t d = 0; d < diode_bits.size(); ++d) {
      const int el = model.devices()[diode_bits[d]];
      const bool on = (cfg.pattern >> diode_bits[d]) & 1u;
      if (on) {
        pd.events.row(d) = signal_row(cfg, model.element_current_signal(el));
      } else {
        pd.events.row(d) = -signal_row(cfg, model.element_voltage_signal(el));
        pd.events(d, n_x + n_u - 1) += model.circuit().elements()[el].forward_voltage_v;
      }
    }
    pd.event_rates = pd.events * pd.M;
    pd.energy.resize(2 * energy_elements.size(), n_z);
    for (std::size_t k = 0; k < energy_elements.size(); ++k) {
      const int el = energy_elements[k].first;
      pd.energy.row(2 * k) = signal_row(cfg, model.element_voltage_signal(el));
      pd.energy.row(2 * k + 1) = signal_row(cfg, model.element_current_signal(el));
    }
    pd.power_forms.clear();
    for (std::size_t k = 0; k < energy_elements.size(); ++k) {
      const EnergyTerm& term = energy_elements[k].second;
      const SparseRow v(pd.energy.row(2 * k)), i(pd.energy.row(2 * k + 1));
      if (term.role == EnergyRole::kSeriesResistance)
        pd.power_forms.push_back({i, i, term.resistance_ohm});
      else
        pd.power_forms.push_back({v, i, 1.0});
    }
    pd.freewheeling.clear();
    for (const FloatingGroup& group : cfg.floating_groups)
      pd.freewheeling.push_back({freewheeling_diode(group, 1.0), freewheeling_diode(group, -1.0)});
    pd.recorded_sparse.clear();
    for (Eigen::Index j = 0; j < pd.recorded.rows(); ++j)
      pd.recorded_sparse.emplace_back(pd.recorded.row(j));
    pd.dynamic_rows = 0;
    for (int row = 0; row < n_z; ++row)
      if (pd.M.row(row).any()) pd.dynamic_rows = row + 1;
    pd.event_dynamic_l1.clear();
    for (Eigen::Index d = 0; d < pd.events.rows(); ++d)
      pd.event_dynamic_l1.push_back(pd.events.row(d).head(pd.dynamic_rows).cwiseAbs().sum());
    set_gram_pairs(pd);
    const double norm = pd.M.cwiseAbs().colwise().sum().maxCoeff();
    pd.max_step_s = norm > 0 ? options.max_step_norm / norm : kInf;
    if (n_n > 0) fill_nonlinear_rows(cfg, pd);
  }

  // The entries of the moving block of the Gram matrix that the RMS of the recorded signals and
  // the element energies read, and whether summing them alone is cheaper than the whole block.
  static void set_gram_pairs(PatternData& pd) {
    std::set<std::array<int, 2>> used;
    auto add = [&](const SparseRow& a, const SparseRow& b) {
      for (const auto& p : a.entries)
        for (const auto& q : b.entries)
          if (p.index < pd.dynamic_rows && q.index < pd.dynamic_rows)
            used.insert({std::min(p.index, q.index), std::max(p.index, q.index)});
    };
    for (const SparseRow& c : pd.recorded_sparse) add(c, c);
    for (const detail::PowerForm& form : pd.power_forms) add(form.a, form.b);
    pd.gram_pairs.assign(used.begin(), used.end());
    const std::size_t d = pd.dynamic_rows;
    // Two indexed products per pair against d^2 unrolled, vectorised ones for the whole block:
    // the list pays where it is well under a sixth of d^2 (measured: the 10-state case 3 of the
    // benchmarks reads 11 to 16 of 55 entries and runs 15 % faster; with 2 to 4 states the whole
    // block is cheaper).
    pd.listed_gram = 6 * pd.gram_pairs.size() < d * d;
  }

  // Rows of the nonlinear currents n: how they enter dz/dt, the signals and the events, and the
  // load voltages v = Vz z + Vn n that determine them.
  void fill_nonlinear_rows(const ConfigurationModel& cfg, PatternData& pd) const {
    pd.E = Eigen::MatrixXd::Zero(n_z, n_n);
    pd.E.topRows(n_x) = cfg.E;
    auto rows_n = [&](auto signal_of, std::size_t count) {
      Eigen::MatrixXd out(count, n_n);
      for (std::size_t j = 0; j < count; ++j) out.row(j) = cfg.F.row(signal_of(j));
      return out;
    };
    pd.recorded_n = rows_n([&](std::size_t j) { return recorded[j]; }, recorded.size());
    pd.events_n = rows_n(
        [&](std::size_t d) {
          const int el = model.devices()[diode_bits[d]];
          return ((cfg.pattern >> diode_bits[d]) & 1u) ? model.element_current_signal(el)
                                                       : model.element_voltage_signal(el);
        },
        diode_bits.size());
    for (std::size_t d = 0; d < diode_bits.size(); ++d)
      if (!((cfg.pattern >> diode_bits[d]) & 1u)) pd.events_n.row(d) *= -1.0;
    pd.energy_n = rows_n(
        [&](std::size_t r) {
          const int el = energy_elements[r / 2].first;
          return r % 2 ? model.element_current_signal(el) : model.element_voltage_signal(el);
        },
        2 * energy_elements.size());
    pd.load_voltage_z.resize(n_n, n_z);
    pd.load_voltage_n.resize(n_n, n_n);
    for (int k = 0; k < n_n; ++k) {
      const int signal = model.element_voltage_signal(model.nonlinear_elements()[k]);
      pd.load_voltage_z.row(k) = signal_row(cfg, signal);
      pd.load_voltage_n.row(k) = cfg.F.row(signal);
    }
  }

  const PatternData& data_for(DevicePattern p) {
    if (options.cache)
      for (const auto& [known, data] : recent_patterns)
        if (known == p) {
          ++pattern_hits;
          return *data;
        }
    const ConfigurationModel& cfg = model.configuration(p);
    if (!options.cache) {
      fill_pattern_data(cfg, uncached);
      return uncached;
    }
    auto it = patterns.find(p);
    if (it != patterns.end()) return it->second;  // beyond the flat list's 64 entries
    PatternData& pd = patterns[p];
    fill_pattern_data(cfg, pd);
    if (recent_patterns.size() < 64) recent_patterns.push_back({p, &pd});
    return pd;
  }

  // ---- consistency search ------------------------------------------------------------------

  double tolerance_for(SignalQuantity q) const {
    return options.device_condition_tolerance *
           (q == SignalQuantity::kCurrent ? current_scale : voltage_scale);
  }

  bool fail(RunEnd end, std::string message) {
    summary.end = end;
    summary.message = std::move(message);
    return false;
  }

  void log_event(EventKind kind, int element) {
    ++summary.events;
    ++cycle.events;
    if (!piece_observer) return;
    EventRecord record;
    record.time_s = t;
    record.kind = kind;
    record.element = element;
    if (element >= 0) record.element_name = model.circuit().elements()[element].name;
    record.pattern_after = pattern;
    piece_observer->on_event(record);
  }

  // A floating group whose cutset carries current needs a path: a diode of the group that the
  // cutset current would forward-bias. Returns the device bit, -1 when there is none.
  int freewheeling_diode(const FloatingGroup& group, double net_current_in) const {
    std::set<std::string> inside(group.nodes.begin(), group.nodes.end());
    for (int el : group.adjacent_open_devices) {
      const Element& e = model.circuit().elements()[el];
      if (e.kind != ElementKind::kDiode) continue;
      const bool anode_inside = inside.count(e.node_a) > 0;
      if ((net_current_in > 0) == anode_inside)
        return static_cast<int>(std::find(model.devices().begin(), model.devices().end(), el) -
                                model.devices().begin());
    }
    return -1;
  }

  std::string interrupted_current_message(const FloatingGroup& group, double current) const {
    std::ostringstream out;
    const auto& els = model.circuit().elements();
    out << "switch '" << (last_switch_off >= 0 ? els[last_switch_off].name : std::string("?"))
        << "' interrupts " << std::abs(current) << " A "
        << (current > 0 ? "flowing into" : "flowing out of") << " node '" << group.nodes.front()
        << "' through";
    for (int el : group.cutset_inductors) {
      const int state = static_cast<int>(
          std::find(model.state_elements().begin(), model.state_elements().end(), el) -
          model.state_elements().begin());
      const double i = z[state];
      out << " '" << els[el].name << "' (" << std::abs(i) << " A from '"
          << (i >= 0 ? els[el].node_a : els[el].node_b) << "' to '"
          << (i >= 0 ? els[el].node_b : els[el].node_a) << "')";
    }
    for (int el : group.cutset_current_sources) out << " '" << els[el].name << "'";
    out << " at t = " << t << " s with no freewheeling path; add a freewheeling diode or a snubber"
        << " across node '" << group.nodes.front() << "'";
    return out.str();
  }

  // Returns 1 when a group needed a device (pattern changed), 0 when all groups are fine,
  // -1 on failure.
  int fix_floating_groups(const PatternData& pd) {
    const auto& groups = pd.model->floating_groups;
    for (std::size_t g = 0; g < groups.size(); ++g) {
      const FloatingGroup& group = groups[g];
      const double current = row_dot(group.current_row_x.data(), z.data(), n_x) +
                             row_dot(group.current_row_u.data(), z.data() + n_x, n_u);
      if (std::abs(current) <= tolerance_for(SignalQuantity::kCurrent)) continue;
      const int bit = pd.freewheeling[g][current > 0 ? 0 : 1];
      if (bit < 0) {
        fail(RunEnd::kInterruptedCurrent, interrupted_current_message(group, current));
        return -1;
      }
      pattern |= DevicePattern{1} << bit;
      log_event(EventKind::kForcedTurnOn, model.devices()[bit]);
      return 1;
    }
    return 0;
  }

  // How badly a device condition g >= 0 is violated at t+: negative when g < -tol, or when g is
  // within tol of zero and decreasing (more negative = worse); 0 when it holds.
  static double violation(double g, double rate, double tol) {
    const bool decreasing = g <= tol && rate < 0;
    if (!(g < -tol || decreasing)) return 0.0;
    return std::min(g, 0.0) / tol - (decreasing ? 1.0 : 0.0);
  }

  // Most violated diode condition at t+: g < -tol, or g within tol and decreasing.
  int worst_violation(const PatternData& pd) {
    if (nonlinear) return worst_violation_nonlinear(pd);
    int worst = -1;
    double worst_value = 0.0;
    for (std::size_t d = 0; d < diode_bits.size(); ++d) {
      const bool on = (pattern >> diode_bits[d]) & 1u;
      const double tol = tolerance_for(on ? SignalQuantity::kCurrent : SignalQuantity::kVoltage);
      const double g = row_dot(pd.events.row(d).data(), z.data(), n_z);
      const double rate = row_dot(pd.event_rates.row(d).data(), z.data(), n_z);
      const double measure = violation(g, rate, tol);
      if (measure < worst_value) {
        worst_value = measure;
        worst = static_cast<int>(d);
      }
    }
    return worst;
  }

  bool turn_off_loop_diode(const ConfigurationModel& cfg) {
    for (int el : cfg.loop_elements) {
      const Element& e = model.circuit().elements()[el];
      if (e.kind != ElementKind::kDiode) continue;
      const int bit = static_cast<int>(
          std::find(model.devices().begin(), model.devices().end(), el) - model.devices().begin());
      if ((pattern >> bit) & 1u) {
        pattern &= ~(DevicePattern{1} << bit);
        log_event(EventKind::kForcedTurnOff, el);
        return true;
      }
    }
    return false;
  }

  // Flip diodes one at a time until every device condition holds at t+. Detects cycling.
  bool make_consistent() {
    visited.clear();
    for (int iter = 0; iter < options.max_consistency_iterations; ++iter) {
      if (std::find(visited.begin(), visited.end(), pattern) != visited.end())
        return fail(RunEnd::kNoConsistentConfiguration,
                    "no consistent device configuration at t = " + std::to_string(t) +
                        " s (the search cycled through " + model.describe(pattern) + ")");
      visited.push_back(pattern);
      const PatternData& pd = data_for(pattern);
      if (!pd.model->valid) {
        if (turn_off_loop_diode(*pd.model)) continue;
        return fail(RunEnd::kZeroResistanceLoop,
                    pd.model->problem + " at t = " + std::to_string(t) +
                        " s; give one of them a non-zero on-resistance or series resistance");
      }
      const int groups = fix_floating_groups(pd);
      if (groups < 0) return false;
      if (groups > 0) continue;
      const int d = worst_violation(pd);
      if (d < 0) {
        current = &pd;
        return true;
      }
      const DevicePattern bit = DevicePattern{1} << diode_bits[d];
      const bool was_on = pattern & bit;
      pattern ^= bit;
      log_event(was_on ? EventKind::kForcedTurnOff : EventKind::kForcedTurnOn,
                model.devices()[diode_bits[d]]);
      if (!was_on) in_idle = false;
      // CCM side of the boundary: commutated off by a switch while its current was almost zero.
      if (was_on && diode_current_before[d] <= options.boundary_tolerance * current_scale)
        cycle.forced_off_near_zero = true;
    }
    return fail(RunEnd::kNoConsistentConfiguration,
                "no consistent device configuration after " +
                    std::to_string(options.max_consistency_iterations) +
                    " flips at t = " + std::to_string(t) + " s");
  }

  // ---- pieces ------------------------------------------------------------------------------

  // Earliest device event inside the current piece: (s, diode index) or (-1, -1).
  // Inlined into the piece loop of advance_until (its other caller, the replay, is rare).
  [[gnu::always_inline]] std::pair<double, int> find_event(double s_tolerance) {
    const int order = piece.order();
    const double* z0 = piece.terms().data();
    double best = kInf;
    int which = -1;
    for (std::size_t d = 0; d < diode_bits.size(); ++d) {
      // g stays positive over the piece when g(0) exceeds a bound on its variation: first the
      // norm bound of the series (no polynomial needed), then the sum of its coefficients.
      const double* row = current->events.row(d).data();
      if (row_dot(row, z0, n_z) > current->event_dynamic_l1[d] * piece.variation_bound()) continue;
      const bool on = (pattern >> diode_bits[d]) & 1u;
      const double noise = tolerance_for(on ? SignalQuantity::kCurrent : SignalQuantity::kVoltage);
      double coeffs[detail::TaylorPiece::kMaxOrder + 1];
      piece.project_row(row, coeffs);
      double variation = 0.0;  // bounds |g(s) - g(0)| on [0, 1]
      for (int k = 1; k <= order; ++k) variation += std::abs(coeffs[k]);
      if (coeffs[0] - variation > 0) continue;
      const double s = poly::first_downcrossing(coeffs, order, noise, s_tolerance);
      if (s >= 0 && s < best) {
        best = s;
        which = static_cast<int>(d);
      }
    }
    return {which >= 0 ? best : -1.0, which};
  }

  // Exact integrals, RMS, extrema and energies of the current piece from its moments: the mean
  // of z gives every average, the Gram matrix of z every integral of a product (RMS, power), and
  // only a signal whose slope changes sign inside the piece needs its own polynomial (for the
  // interior extremum).
  void accumulate_piece(double h) {
    const int order = piece.order();
    const bool with_gram = use_gram();
    if (with_gram && current->listed_gram)
      piece.moments(mean.data(), end_z.data(), end_slope.data(), gram.data(), current->gram_pairs);
    else
      piece.moments(mean.data(), end_z.data(), end_slope.data(), with_gram ? gram.data() : nullptr);
    const double* z0 = piece.terms().data();
    // z_1, the slope at s = 0: zero for a constant piece (see TaylorPiece::terms()).
    const double* z1 = z0 + n_z;
    double a[detail::TaylorPiece::kMaxOrder + 1];
    for (std::size_t j = 0; j < recorded.size(); ++j) {
      const SparseRow& c = current->recorded_sparse[j];
      const auto [y0, y1, d0, d1, average] =
          detail::dots<5>(c, {z0, end_z.data(), z1, end_slope.data(), mean.data()});
      const bool turns = slope_changes_sign(d0, d1);
      if (!with_gram || turns) piece.project_row(current->recorded.row(j).data(), a);
      cycle.integral[j] += h * average;
      cycle.square_integral[j] += h * (with_gram ? detail::bilinear(c, gram.data(), n_z, c)
                                                 : poly::product_integral(a, a, order));
      double lo = std::min(y0, y1), hi = std::max(y0, y1);
      if (turns) {
        const double v = poly::interior_extremum(a, order, d0, d1, kExtremumTolerance);
        lo = std::min(lo, v);
        hi = std::max(hi, v);
      }
      piece_min[j] = lo;
      piece_max[j] = hi;
      cycle.min[j] = std::min(cycle.min[j], lo);
      cycle.max[j] = std::max(cycle.max[j], hi);
    }
    if (!options.energy_accounting) return;
    for (std::size_t k = 0; k < energy_elements.size(); ++k) {
      const detail::PowerForm& form = current->power_forms[k];
      const double e = h * form.weight * detail::bilinear(form.a, gram.data(), n_z, form.b);
      (energy_elements[k].second.role == EnergyRole::kSource ? cycle.energy_in
                                                             : cycle.dissipated) += e;
      cycle.element_energy[k] += e;
    }
  }

  // Uses the moments of accumulate_piece(): end values and slopes come from there, and only an
  // inductor whose slope changes sign inside the piece needs its polynomial. An inductor current
  // that is also a recorded signal takes the extremes accumulate_piece() just found.
  void track_inductor_peaks() {
    const int order = piece.order();
    double a[detail::TaylorPiece::kMaxOrder + 1];
    for (std::size_t k = 0; k < inductor_states.size(); ++k) {
      double& best = summary.startup.peak_inductor_current_a[k];
      const int j = inductor_recorded[k];
      if (j >= 0) {
        best = std::max({best, std::abs(piece_min[j]), std::abs(piece_max[j])});
        continue;
      }
      const int state = inductor_states[k];
      double peak = std::max(std::abs(piece.terms()(state, 0)), std::abs(end_z[state]));
      const double d0 = piece.terms()(state, 1),
                   d1 = end_slope[state];  // z_1: see accumulate_piece
      if (slope_changes_sign(d0, d1)) {
        for (int m = 0; m <= order; ++m) a[m] = piece.terms()(state, m);
        peak =
            std::max(peak, std::abs(poly::interior_extremum(a, order, d0, d1, kExtremumTolerance)));
      }
      best = std::max(best, peak);
    }
  }

  // The configuration interval and the observer's view of a piece whose coefficients are in
  // signal_coefficients.
  void report_piece(double h, int order) {
    record_interval(h);
    if (!piece_observer) return;
    PolynomialPiece view;
    view.t0 = t;
    view.h = h;
    view.pat = pattern;
    view.order = order;
    view.coefficients = &signal_coefficients;
    piece_observer->on_piece(view);
  }

  // One piece of at most h from z, by TaylorPiece and the steps above: its length and the
  // diode index of the event that ends it (-1 for none). False when the series diverged.
  bool general_piece(double h, double s_tolerance, double& h_piece, int& which) {
    if (!piece.expand(current->M, z, h, current->dynamic_rows)) return false;
    const auto [s_event, event] = find_event(s_tolerance);
    if (event >= 0) piece.truncate(std::max(s_event, 0.0));
    h_piece = piece.duration_s();
    which = event;
    accumulate_piece(h_piece);
    track_inductor_peaks();
    if (piece_observer) piece.project(current->recorded, signal_coefficients);
    report_piece(h_piece, piece.order());
    z = end_z;  // the end state, summed by the piece's moments
    return true;
  }

  // The current piece of at most h from z, for the kernel and the operators.
  detail::PieceTask piece_task(double h, double s_tolerance) {
    detail::PieceTask task;
    task.data = current;
    task.pattern = pattern;
    task.z = z.data();
    task.h = h;
    task.s_tolerance = s_tolerance;
    task.current_noise = tolerance_for(SignalQuantity::kCurrent);
    task.voltage_noise = tolerance_for(SignalQuantity::kVoltage);
    return task;
  }
  detail::PieceSinks piece_sinks() {
    return {&cycle, piece_min.data(), piece_max.data(),
            summary.startup.peak_inductor_current_a.data()};
  }

  // The same piece by the fixed-size kernel (detail/piece_kernel.hpp), identical to the bit.
  bool kernel_piece(double h, double s_tolerance, double& h_piece, int& which) {
    detail::PieceTask task = piece_task(h, s_tolerance);
    if (piece_observer) {
      task.coefficients = signal_coefficients.data();
      task.coefficient_rows = static_cast<int>(signal_coefficients.rows());
    }
    const detail::PieceSinks sinks = piece_sinks();
    const detail::PieceOutcome outcome = detail::run_piece_kernel(kernel, task, sinks);
    if (!outcome.converged) return false;
    ++summary.kernel_pieces;
    h_piece = outcome.h;
    which = outcome.event;
    report_piece(h_piece, outcome.order);
    return true;
  }

  // ---- pieces met again (detail/piece_operators.hpp) ----------------------------------------

  bool operators_allowed() const {
    return options.reuse_piece_operators && options.cache && !piece_observer;
  }

  // The entry of the current configuration and length h, created on first sight; null when the
  // table is full. A configuration whose piece lengths keep changing (the idle interval of a DCM
  // start-up) stops adding entries once it holds kLengthsPerConfiguration, so that the table
  // stops changing (the repeat needs that) and a miss stays a short scan.
  OperatorEntry* operator_entry(double h) {
    constexpr std::size_t kMaxEntries = 16;
    constexpr int kLengthsPerConfiguration = 4;
    int lengths = 0;
    for (OperatorEntry& e : operator_entries) {
      if (e.data != current) continue;
      if (e.h == h) return &e;
      ++lengths;
    }
    if (lengths >= kLengthsPerConfiguration || operator_entries.size() >= kMaxEntries)
      return nullptr;
    operator_entries.push_back({current, h, false, false, 0, 0, 0, {}});
    ++operator_epoch;
    return nullptr;  // first sight: the series computes it
  }

  // The piece of length h from the operators of its configuration and length, built at its
  // second occurrence, and built again when the sources they fold in have changed (a step or a
  // breakpoint; an entry whose sources keep changing is given up after a few builds). False,
  // with nothing changed, when there are none or their check hands the piece back (a device
  // condition may cross zero inside it). An entry handed back more often than kept (a stretch
  // that a diode event ends, such as the diode interval of a DCM period) is not tried again:
  // its check would only add to the series.
  bool operator_piece(double h, double s_tolerance) {
    constexpr int kFreeBuilds = 8;
    constexpr long kPiecesPerBuild = 64;
    OperatorEntry* e = operator_entry(h);
    if (!e || e->disabled) return false;
    if (!e->built || !e->operators.matches(z.data())) {
      ++operator_epoch;
      e->built = true;
      if ((e->builds >= kFreeBuilds && e->kept < kPiecesPerBuild * e->builds) ||
          !e->operators.build(*current, h, z.data(), kernel)) {
        e->disabled = true;  // sources that keep changing, or a series that does not converge
        return false;
      }
      ++e->builds;
    }
    detail::PieceTask task = piece_task(h, s_tolerance);
    const detail::PieceSinks sinks = piece_sinks();
    if (!e->operators.apply(kernel, task, sinks)) {
      e->disabled = ++e->refused > 2 && e->refused > e->kept;
      return false;
    }
    ++e->kept;
    ++summary.operator_pieces;
    report_piece(h, e->operators.order());
    return true;
  }

  // Handles the device event of diode index d found at the end of the current piece.
  bool state_event(int d) {
    steps_valid = false;  // a period with a state event does not repeat exactly
    const DevicePattern bit = DevicePattern{1} << diode_bits[d];
    const bool was_on = pattern & bit;
    pattern ^= bit;
    const int el = model.devices()[diode_bits[d]];
    log_event(was_on ? EventKind::kDeviceTurnOff : EventKind::kDeviceTurnOn, el);
    if (was_on) {
      cycle.natural_turn_off = true;
      in_idle = true;
    } else {
      in_idle = false;
    }
    return make_consistent();
  }

  // ---- ODE path ------------------------------------------------------------------------------

  using OdeState = std::vector<double>;
  using Dopri = boost::numeric::odeint::runge_kutta_dopri5<OdeState>;

  // The dense output of the current step, whatever the stepper (explicit or stiff).
  class DenseStepper {
   public:
    virtual ~DenseStepper() = default;
    virtual void calc_state(double t, OdeState& out) = 0;
  };
  template <class Stepper>
  class DenseAdapter final : public DenseStepper {
   public:
    explicit DenseAdapter(Stepper& stepper) : stepper_(stepper) {}
    void calc_state(double t, OdeState& out) override { stepper_.calc_state(t, out); }

   private:
    Stepper& stepper_;
  };

  // Load currents n solving n = h(Vz z + Vn n), by Newton's method warm-started from the last
  // solution (Vn is zero when every load sits across a capacitor, and one step then suffices).
  void load_currents(const PatternData& pd, const double* zp, Eigen::VectorXd& n) {
    if (n_n == 0) return;
    const Eigen::Map<const Eigen::VectorXd> zz(zp, n_z);
    const Eigen::VectorXd vz = pd.load_voltage_z * zz;
    n = n_guess;
    for (int iter = 0; iter < 30; ++iter) {
      const Eigen::VectorXd v = vz + pd.load_voltage_n * n;
      Eigen::VectorXd residual(n_n);
      Eigen::MatrixXd jacobian = Eigen::MatrixXd::Identity(n_n, n_n);
      for (int k = 0; k < n_n; ++k) {
        residual[k] = n[k] - loads[k].current(v[k]);
        jacobian.row(k) -= loads[k].slope(v[k]) * pd.load_voltage_n.row(k);
      }
      const Eigen::VectorXd step = jacobian.partialPivLu().solve(residual);
      n -= step;
      if (step.lpNorm<Eigen::Infinity>() <= 1e-15 * (1 + n.lpNorm<Eigen::Infinity>())) break;
    }
    n_guess = n;
  }

  void derivative(const PatternData& pd, const double* zp, double* dz) {
    const Eigen::Map<const Eigen::VectorXd> zz(zp, n_z);
    Eigen::Map<Eigen::VectorXd> out(dz, n_z);
    out.noalias() = pd.M * zz;
    if (n_n > 0) {
      Eigen::VectorXd n(n_n);
      load_currents(pd, zp, n);
      out.noalias() += pd.E * n;
    }
    for (const auto& [state, curve] : saturating)
      out[state] *= curve.l0 / curve.differential_inductance(zp[state]);
  }

  // Value of a row set (signals, events or energy rows) at state zp, including the loads.
  double row_value(const detail::RowMatrix& rows, const Eigen::MatrixXd& rows_n, int r,
                   const double* zp, const Eigen::VectorXd& n) const {
    const Eigen::Map<const Eigen::VectorXd> zz(zp, n_z);
    double v = rows.row(r).dot(zz);
    if (n_n > 0) v += rows_n.row(r).dot(n);
    return v;
  }

  int worst_violation_nonlinear(const PatternData& pd) {
    Eigen::VectorXd n(n_n), n_ahead(n_n);
    load_currents(pd, z.data(), n);
    OdeState dz(n_z), ahead(n_z);
    derivative(pd, z.data(), dz.data());
    const double dt = 1e-9 * period_s;  // directional difference for the rate of g
    for (int k = 0; k < n_z; ++k) ahead[k] = z[k] + dt * dz[k];
    load_currents(pd, ahead.data(), n_ahead);
    int worst = -1;
    double worst_value = 0.0;
    for (std::size_t d = 0; d < diode_bits.size(); ++d) {
      const bool on = (pattern >> diode_bits[d]) & 1u;
      const double tol = tolerance_for(on ? SignalQuantity::kCurrent : SignalQuantity::kVoltage);
      const int r = static_cast<int>(d);
      const double g = row_value(pd.events, pd.events_n, r, z.data(), n);
      const double rate = (row_value(pd.events, pd.events_n, r, ahead.data(), n_ahead) - g) / dt;
      const double measure = violation(g, rate, tol);
      if (measure < worst_value) {
        worst_value = measure;
        worst = r;
      }
    }
    return worst;
  }

  // The piece handed to observers on the ODE path: evaluates the dense output.
  class DensePiece final : public PieceView {
   public:
    Impl* impl = nullptr;
    DenseStepper* stepper = nullptr;
    double t0 = 0, t1 = 0;
    double t_begin() const override { return t0; }
    double t_end() const override { return t1; }
    DevicePattern pattern() const override { return impl->pattern; }
    void recorded_values_at(double t, std::span<double> out) const override {
      OdeState zt(impl->n_z);
      stepper->calc_state(std::clamp(t, t0, t1), zt);
      Eigen::VectorXd n(impl->n_n);
      impl->load_currents(*impl->current, zt.data(), n);
      for (std::size_t j = 0; j < out.size(); ++j)
        out[j] = impl->row_value(impl->current->recorded, impl->current->recorded_n,
                                 static_cast<int>(j), zt.data(), n);
    }
  };

  // 5-point Gauss-Legendre quadrature on [a, b] of the recorded signals, energies and peaks.
  void accumulate_dense(DenseStepper& stepper, double a, double b) {
    static constexpr double kNode[5] = {-0.9061798459386640, -0.5384693101056831, 0.0,
                                        0.5384693101056831, 0.9061798459386640};
    static constexpr double kWeight[5] = {0.2369268850561891, 0.4786286704993665,
                                          0.5688888888888889, 0.4786286704993665,
                                          0.2369268850561891};
    const PatternData& pd = *current;
    const double half = 0.5 * (b - a), mid = 0.5 * (a + b);
    OdeState zt(n_z);
    Eigen::VectorXd n(n_n);
    auto extremes = [&](const double* zp) {
      load_currents(pd, zp, n);
      for (std::size_t j = 0; j < recorded.size(); ++j) {
        const double y = row_value(pd.recorded, pd.recorded_n, static_cast<int>(j), zp, n);
        cycle.min[j] = std::min(cycle.min[j], y);
        cycle.max[j] = std::max(cycle.max[j], y);
      }
      for (std::size_t k = 0; k < inductor_states.size(); ++k) {
        double& best = summary.startup.peak_inductor_current_a[k];
        best = std::max(best, std::abs(zp[inductor_states[k]]));
      }
    };
    for (double t_end : {a, b}) {
      stepper.calc_state(t_end, zt);
      extremes(zt.data());
    }
    for (int q = 0; q < 5; ++q) {
      stepper.calc_state(mid + half * kNode[q], zt);
      extremes(zt.data());
      const double w = half * kWeight[q];
      for (std::size_t j = 0; j < recorded.size(); ++j) {
        const double y = row_value(pd.recorded, pd.recorded_n, static_cast<int>(j), zt.data(), n);
        cycle.integral[j] += w * y;
        cycle.square_integral[j] += w * y * y;
      }
      if (!options.energy_accounting) continue;
      for (std::size_t k = 0; k < energy_elements.size(); ++k) {
        const int r = 2 * static_cast<int>(k);
        const double v = row_value(pd.energy, pd.energy_n, r, zt.data(), n);
        const double i = row_value(pd.energy, pd.energy_n, r + 1, zt.data(), n);
        const EnergyTerm& term = energy_elements[k].second;
        if (term.role == EnergyRole::kSource)
          cycle.energy_in += w * v * i;
        else if (term.role == EnergyRole::kDissipativeVi)
          cycle.dissipated += w * v * i;
        else
          cycle.dissipated += w * term.resistance_ohm * i * i;
      }
    }
  }

  double event_at(DenseStepper& stepper, int d, double t_at) {
    OdeState zt(n_z);
    stepper.calc_state(t_at, zt);
    Eigen::VectorXd n(n_n);
    load_currents(*current, zt.data(), n);
    return row_value(current->events, current->events_n, d, zt.data(), n);
  }

  // First down-crossing of any device condition in [a, b] on the dense output: four sub-samples
  // per step catch a double crossing inside the step, then Illinois regula falsi refines it.
  std::pair<double, int> find_dense_event(DenseStepper& stepper, double a, double b) {
    const double resolution = 1e-10 * period_s;
    double best = kInf;
    int which = -1;
    for (std::size_t d = 0; d < diode_bits.size(); ++d) {
      const int r = static_cast<int>(d);
      const bool on = (pattern >> diode_bits[d]) & 1u;
      const double noise = tolerance_for(on ? SignalQuantity::kCurrent : SignalQuantity::kVoltage);
      double lo = a, g_lo = event_at(stepper, r, a);
      for (int k = 1; k <= 4 && lo < best; ++k) {
        const double hi = a + (b - a) * k / 4;
        const double g_hi = event_at(stepper, r, hi);
        if (g_hi < -noise && g_lo >= 0) {
          best = std::min(best, illinois(stepper, r, lo, g_lo, hi, g_hi, resolution));
          which = best == kInf ? which : r;
          break;
        }
        if (g_hi < -noise && g_lo < 0) {  // violated from the start (within noise)
          best = std::min(best, lo);
          which = r;
          break;
        }
        lo = hi;
        g_lo = g_hi;
      }
    }
    return {which >= 0 ? best : -1.0, which};
  }

  double illinois(DenseStepper& stepper, int d, double a, double ga, double b, double gb,
                  double resolution) {
    int side = 0;
    for (int iter = 0; iter < 200 && b - a > resolution; ++iter) {
      const double c = (a * gb - b * ga) / (gb - ga);
      const double gc = event_at(stepper, d, c);
      if (gc == 0.0) return c;
      if ((gc < 0) == (gb < 0)) {
        b = c, gb = gc;
        if (side == -1) ga *= 0.5;
        side = -1;
      } else {
        a = c, ga = gc;
        if (side == 1) gb *= 0.5;
        side = 1;
      }
    }
    return b;  // the first instant known to be past the crossing
  }

  // Stiff when the configuration's fastest mode is far faster than the switching period: an
  // explicit pair would need steps of the order of that mode's time constant.
  bool use_stiff_stepper() const {
    if (options.ode_stepper == OdeStepper::kExplicit) return false;
    if (options.ode_stepper == OdeStepper::kStiff) return true;
    return current->max_step_s < period_s / 1000;
  }

  bool advance_until_ode(double t_target) {
    OdeState zv(z.data(), z.data() + n_z);
    if (use_stiff_stepper()) {
      detail::StiffIntegrator stepper(
          n_z, options.ode_absolute_tolerance, options.ode_relative_tolerance,
          [this](const double* zz, double* dz) { derivative(*current, zz, dz); });
      return integrate_dense(stepper, 0, zv, t_target);
    }
    auto stepper = boost::numeric::odeint::make_dense_output(
        options.ode_absolute_tolerance, options.ode_relative_tolerance, Dopri());
    auto system = [this](const OdeState& zz, OdeState& dz, double) {
      derivative(*current, zz.data(), dz.data());
    };
    return integrate_dense(stepper, system, zv, t_target);
  }

  template <class Stepper, class System>
  bool integrate_dense(Stepper& stepper, System system, const OdeState& zv, double t_target) {
    const double resolution = options.event_time_tolerance * period_s;
    DenseAdapter<Stepper> dense(stepper);
    stepper.initialize(zv, t, std::min(t_target - t, period_s / 50));
    while (t_target - t > resolution) {
      if (cycle.events > options.max_events_per_period)
        return fail(RunEnd::kChattering,
                    "more than " + std::to_string(options.max_events_per_period) +
                        " events in one period near t = " + std::to_string(t) + " s");
      if (stepper.current_time() + stepper.current_time_step() > t_target) {
        const OdeState here(stepper.current_state());
        stepper.initialize(here, stepper.current_time(), t_target - stepper.current_time());
      }
      const auto [a, b_raw] = stepper.do_step(system);
      const double b = std::min(b_raw, t_target);
      const auto [t_event, which] = find_dense_event(dense, a, b);
      const double end = which >= 0 ? t_event : b;
      accumulate_dense(dense, a, end);
      record_interval(end - a);
      if (piece_observer) {
        DensePiece view;
        view.impl = this;
        view.stepper = &dense;
        view.t0 = a;
        view.t1 = end;
        piece_observer->on_piece(view);
      }
      OdeState z_end(n_z);
      dense.calc_state(end, z_end);
      for (int k = 0; k < n_z; ++k) z[k] = z_end[k];
      t = (which < 0 && t_target - end <= resolution) ? t_target : end;
      if (which >= 0) {
        if (!state_event(which)) return false;
        stepper.initialize(z_end, t, std::max(stepper.current_time_step(), resolution));
      }
    }
    t = t_target;
    return true;
  }

  void record_interval(double h) {
    if (!cycle.intervals.empty() && cycle.intervals.back().pattern == pattern)
      cycle.intervals.back().fraction += h / period_s;
    else
      cycle.intervals.push_back({pattern, h / period_s});
    if (in_idle) cycle.idle_time += h;
  }

  // Advance from t to t_target, handling every device event in between.
  // span: the length of the stretch, computed from period offsets (see run_cycle).
  bool advance_until(double t_target, double span_s) {
    if (nonlinear) return advance_until_ode(t_target);
    const double time_resolution = options.event_time_tolerance * period_s;
    const double nominal = period_s / options.substeps_per_period;
    // Time within this stretch is kept relative to its start, so that many short pieces do not
    // each round to the spacing of doubles at the absolute time.
    const double t_base = t, span = span_s;
    double tau = 0.0;
    while (span - tau > time_resolution) {
      if (cycle.events > options.max_events_per_period)
        return fail(RunEnd::kChattering,
                    "more than " + std::to_string(options.max_events_per_period) +
                        " events in one period near t = " + std::to_string(t) +
                        " s; the devices chatter: check the circuit or raise the event limit");
      const double remaining = span - tau;
      double h = std::min({remaining, nominal, current->max_step_s});
      if (remaining - h < time_resolution) h = remaining;
      double h_piece = 0.0;
      int which = -1;
      const bool small = detail::kernel_takes(current->dynamic_rows, n_z);
      if (small && operators_allowed() && operator_piece(h, time_resolution / h)) {
        h_piece = h;
      } else if (!(small && options.small_block_kernel
                       ? kernel_piece(h, time_resolution / h, h_piece, which)
                       : general_piece(h, time_resolution / h, h_piece, which))) {
        return fail(RunEnd::kNoConsistentConfiguration, "series expansion did not converge");
      }
      const bool last = which < 0 && h == remaining;
      if (steps_valid) steps_now.push_back({current, pattern, h_piece});
      tau = last ? span : tau + h_piece;
      t = last ? t_target : t_base + tau;
      if (which >= 0 && !state_event(which)) return false;
    }
    t = t_target;
    return true;
  }

  // Gate edges and source breakpoints at the current time.
  bool apply_schedule() { return apply_schedule(gates->switch_pattern(t)); }
  // The same with the switch pattern just after t given (a replay knows it from its plan).
  bool apply_schedule(DevicePattern switches) {
    Eigen::VectorXd& u = u_new;
    Eigen::VectorXd& du = du_new;
    const bool inputs_changed = update_inputs(u, du);
    const DevicePattern changed = (pattern & gates->switch_mask()) ^ switches;
    if (!changed && !inputs_changed) return true;
    if (inputs_changed) load_inputs(u, du);
    if (changed) {
      for (std::size_t d = 0; d < diode_bits.size(); ++d)
        diode_current_before[d] =
            ((pattern >> diode_bits[d]) & 1u) ? current->events.row(d).dot(z) : kInf;
      pattern = (pattern & ~gates->switch_mask()) | switches;
      in_idle = false;
      for (std::size_t bit = 0; bit < model.devices().size(); ++bit) {
        if (!((changed >> bit) & 1u)) continue;
        const int el = model.devices()[bit];
        if (!((switches >> bit) & 1u)) last_switch_off = el;
        log_event(EventKind::kGateEdge, el);
      }
    } else {
      log_event(EventKind::kSourceBreakpoint, -1);
    }
    const bool ok = make_consistent();
    std::fill(diode_current_before.begin(), diode_current_before.end(), kInf);
    return ok;
  }

  // Evaluates the inputs and their slopes at t into u and du; true when z must take them.
  // Sinusoids evolve inside z exactly; only their breakpoints (a rectified sine's zero
  // crossings, where the slope flips) reset them. Everything else is reset when it differs.
  bool update_inputs(Eigen::VectorXd& u, Eigen::VectorXd& du) const {
    if (inputs_constant) return false;
    model.inputs_at(t, u);
    model.input_slopes_at(t, du);
    if (std::abs(next_breakpoint(t - 2 * time_slack(t)) - t) <= 2 * time_slack(t)) return true;
    for (int k = 0; k < n_u; ++k)
      if (!is_oscillator_input(k) && u[k] != z[n_x + k]) return true;
    for (int r = 0; r < n_r; ++r)
      if (!ramp_oscillates[r] && du[ramp_inputs[r]] != z[n_x + n_u + r]) return true;
    return false;
  }

  bool is_oscillator_input(int k) const {
    for (int r = 0; r < n_r; ++r)
      if (ramp_inputs[r] == k) return ramp_oscillates[r];
    return false;
  }

  // Input values and scaled slopes into z.
  void load_inputs(const Eigen::VectorXd& u, const Eigen::VectorXd& du) {
    z.segment(n_x, n_u) = u;
    for (int r = 0; r < n_r; ++r) z[n_x + n_u + r] = du[ramp_inputs[r]] / ramp_scale[r];
  }

  // Instants closer than this to t count as t: 1e-12 of the period, but never below a few units
  // in the last place of t (late in a long run the spacing of doubles exceeds 1e-12 T).
  double time_slack(double t) const {
    // |t| eps lies between one and two units in the last place of t.
    return std::max(1e-12 * period_s, 4 * std::numeric_limits<double>::epsilon() * std::abs(t));
  }

  // Next source breakpoint after origin + tau, relative to origin.
  double next_breakpoint(long double origin, double tau) const {
    const double absolute = static_cast<double>(origin + tau);
    const double next = next_breakpoint(absolute);
    return std::isinf(next) ? next : static_cast<double>(next - origin);
  }

  double next_breakpoint(double after) const {
    if (inputs_constant) return kInf;
    double best = kInf;
    const double tp = after + time_slack(after);
    for (int el : model.input_elements())
      best = std::min(best, model.circuit().elements()[el].waveform.next_breakpoint_after(tp));
    return best;
  }

  // ---- cycles ------------------------------------------------------------------------------

  double stored_energy() const {
    double w = 0.0;
    for (int s = 0; s < n_x; ++s) {
      const Element& e = model.circuit().elements()[model.state_elements()[s]];
      if (e.is_saturating())
        w += detail::SaturationCurve{e.value, e.saturated_inductance_h, e.saturation_current_a}
                 .stored_energy(z[s]);
      else
        w += 0.5 * e.value * z[s] * z[s];
    }
    return w;
  }

  void update_scales() {
    for (int s = 0; s < n_x; ++s) {
      const bool inductor =
          model.circuit().elements()[model.state_elements()[s]].kind == ElementKind::kInductor;
      double& scale = inductor ? current_scale : voltage_scale;
      scale = std::max(scale, std::abs(z[s]));
    }
  }

  ConductionMode mode_of_cycle() const {
    if (diode_bits.empty()) return ConductionMode::kNone;
    if (cycle.natural_turn_off || cycle.idle_time > 0) {
      return cycle.idle_time > options.boundary_tolerance * period_s ? ConductionMode::kDcm
                                                                     : ConductionMode::kBoundary;
    }
    return cycle.forced_off_near_zero ? ConductionMode::kBoundary : ConductionMode::kCcm;
  }

  // Fills m in place: its vectors keep their capacity from period to period.
  void finish_cycle(long index, double start, const Eigen::VectorXd& x_start, CycleMetrics& m) {
    m.index = index;
    m.start_time_s = start;
    m.mode = mode_of_cycle();
    m.intervals = cycle.intervals;
    m.events = cycle.events;
    m.signals.resize(recorded.size());
    for (std::size_t j = 0; j < recorded.size(); ++j) {
      m.signals[j].average = cycle.integral[j] / period_s;
      m.signals[j].rms = std::sqrt(std::max(cycle.square_integral[j] / period_s, 0.0));
      m.signals[j].min = cycle.min[j];
      m.signals[j].max = cycle.max[j];
    }
    m.energy_in_j = cycle.energy_in;
    m.element_energy.clear();
    if (options.energy_accounting) {
      m.element_energy.resize(energy_elements.size());
      for (std::size_t k = 0; k < energy_elements.size(); ++k)
        m.element_energy[k] = {energy_elements[k].first, cycle.element_energy[k]};
    }
    m.dissipated_j = cycle.dissipated;
    m.stored_energy_change_j = stored_energy() - cycle.stored_start;
    double change = 0.0;
    for (int s = 0; s < n_x; ++s) {
      const bool inductor =
          model.circuit().elements()[model.state_elements()[s]].kind == ElementKind::kInductor;
      change = std::max(change,
                        std::abs(z[s] - x_start[s]) / (inductor ? current_scale : voltage_scale));
    }
    m.state_change = change;
  }

  void start(Observer* obs) {
    observer = obs;
    piece_observer = obs && obs->wants_pieces_and_events() ? obs : nullptr;
    summary = RunSummary{};
    for (int index : recorded) summary.recorded.push_back(model.signals()[index]);
    for (int s : inductor_states)
      summary.startup.inductors.push_back(
          model.circuit().elements()[model.state_elements()[s]].name);
    summary.startup.peak_inductor_current_a.assign(inductor_states.size(), 0.0);
    for (int s = 0; s < n_x; ++s) {
      const int el = model.state_elements()[s];
      const bool inductor = model.circuit().elements()[el].kind == ElementKind::kInductor;
      summary.state_names.push_back(model
                                        .signals()[inductor ? model.element_current_signal(el)
                                                            : model.element_voltage_signal(el)]
                                        .name);
    }
    t = 0.0;
    z.setZero();
    z.head(n_x) = x0;
    model.inputs_at(0.0, u_new);
    model.input_slopes_at(0.0, du_new);
    load_inputs(u_new, du_new);
    for (int k = 0; k < n_u - 1; ++k) {
      const Element& e = model.circuit().elements()[model.input_elements()[k]];
      double& scale = e.kind == ElementKind::kVoltageSource ? voltage_scale : current_scale;
      scale = std::max(scale, e.waveform.peak_magnitude());
    }
    current_scale = std::max(current_scale, 1e-3 * voltage_scale);
    pattern = gates->switch_pattern(0.0);
    signal_coefficients.resize(recorded.size(), detail::TaylorPiece::kMaxOrder + 1);
    output_averages.clear();
    cycle_metrics = CycleMetrics{};
    in_idle = false;
    cycle.reset(recorded.size(), energy_elements.size());
    replay.clear();
    operator_entries.clear();
    operator_epoch = 0;
    steps_before.clear();
    replay_next = false;
    replay_builds = 0;
    recorded_run = 0;
    cycle_first = -1;
    cycle_length = 0;
    cycle_end = -1;
  }

  void begin_cycle() {
    cycle.reset(recorded.size(), energy_elements.size());
    cycle.stored_start = stored_energy();
    cycle_start_state = z.head(n_x);
  }

  // Time inside a period is kept as an offset tau from the period start (origin, long double),
  // so that every stretch between two scheduled events has the precision of the offset and not
  // of the absolute time: errors do not grow with the length of the run.
  bool piece_cycle(long k, long double origin) {
    steps_now.clear();
    steps_valid = replay_allowed(k);
    double tau = 0.0;
    while (period_s - tau > options.event_time_tolerance * period_s) {
      const double tau_next = std::min(
          {gates->next_edge_in_period(k, origin, tau), next_breakpoint(origin, tau), period_s});
      if (!advance_until(t + (tau_next - tau), tau_next - tau)) return false;
      tau = tau_next;
      t = static_cast<double>(origin + tau);
      const DevicePattern switches = gates->switch_pattern_in_period(k, origin, tau);
      if (steps_valid) steps_now.push_back({nullptr, switches, tau});
      if (!apply_schedule(switches)) return false;
    }
    arm_replay(k);
    return true;
  }

  bool run_cycle(long k) {
    const long double origin = static_cast<long double>(k) * period_s;
    if (cycle_length > 0 && k > cycle_end) {  // a disturbance ahead: compute again
      cycle_length = 0;
      recorded_run = 0;
    }
    if (cycle_length > 0) {
      repeat_cycle(k, origin);
    } else if (!compute_cycle(k, origin)) {
      return false;
    }
    CycleMetrics& m = cycle_metrics;
    if (output_recorded >= 0) {
      const SignalStats& out = m.signals[output_recorded];
      output_averages.push_back(static_cast<float>(out.average));
      output_max = k == 0 ? out.max : std::max(output_max, out.max);
      output_min = k == 0 ? out.min : std::min(output_min, out.min);
    }
    if (observer) observer->on_cycle(m);
    summary.cycles = k + 1;  // m becomes summary.last_cycle when the run ends
    return true;
  }

  bool compute_cycle(long k, long double origin) {
    const double start = static_cast<double>(origin);
    // The replay runs the steps of the period before: not across the end of a quiet stretch.
    if (replay_next && !replay_allowed(k - 1)) replay_next = false;
    capture_period_start();
    begin_cycle();
    const int replayed = replay_next ? replay_cycle(origin) : 0;
    if (replayed < 0) return false;
    if (replayed > 0) {
      ++summary.replayed_periods;
    } else {
      if (replay_next) begin_cycle();  // the replay gave up and restored the state
      replay_next = false;
      if (!piece_cycle(k, origin)) return false;
    }
    update_scales();
    finish_cycle(k, start, cycle_start_state, cycle_metrics);
    keep_period_record(k);
    return true;
  }

  // ---- repeat of periods whose states recur -------------------------------------------------
  //
  // Inside a stretch of quiet periods (quiet_until: the gates repeat, the sources hold still),
  // a period's results depend only on where it starts (PeriodStart). Near the steady state the
  // start of each period is kept, with its results, for the last kRecurrenceDepth periods. A period
  // that ends, to the bit, where a kept period began closes a cycle: every later period poses the
  // same problem as a period of the cycle, and its results are that period's. A steady state
  // reached to the last bit is a cycle of one period; rounding can also settle into a cycle of a
  // few dozen (the DCM SEPIC of the benchmarks: 52 periods, so 32 periods kept were too few).

  static constexpr std::size_t kRecurrenceDepth = 64;
  // Periods are kept once the state changes by less than this (relative to its scale) per
  // period: rounding cycles live far below it, and above it keeping them would only cost time.
  static constexpr double kRecurrenceWatch = 1e-12;

  void capture_period_start() {
    PeriodStart& s = period_start;
    s.z = z;
    s.pattern = pattern;
    s.data = current;
    s.in_idle = in_idle;
    s.last_switch_off = last_switch_off;
    s.current_scale = current_scale;
    s.voltage_scale = voltage_scale;
    s.replayed = replay_next;
    s.replay_builds = replay_builds;
    s.operator_epoch = operator_epoch;
  }

  // FNV-1a over the words of z and the pattern (the lookup key; starts_here() decides).
  std::uint64_t state_hash(const Eigen::VectorXd& state, DevicePattern p) const {
    std::uint64_t h = 1469598103934665603ULL;
    for (int i = 0; i < n_z; ++i) {
      std::uint64_t word;
      std::memcpy(&word, state.data() + i, sizeof word);
      h = (h ^ word) * 1099511628211ULL;
    }
    return (h ^ p) * 1099511628211ULL;
  }

  // The state compares bit by bit (not by value: -0 and +0 differ), and the method must be the
  // same, so that the repeated period computes exactly what the kept one computed.
  bool starts_here(const PeriodStart& s) const {
    return s.pattern == pattern && s.data == current && s.in_idle == in_idle &&
           s.last_switch_off == last_switch_off && s.current_scale == current_scale &&
           s.voltage_scale == voltage_scale && s.replayed == replay_next &&
           s.replay_builds == replay_builds && s.operator_epoch == operator_epoch &&
           std::memcmp(s.z.data(), z.data(), sizeof(double) * static_cast<std::size_t>(n_z)) == 0;
  }

  // The last period of the stretch of quiet periods that period k begins (-1: k is not quiet).
  // In such a stretch every period poses the same problem whenever it starts in the same state:
  // the gates repeat with the period (GateBank::quiet_until) and every source holds its value,
  // with no breakpoint in the period or in the periods next to it. So the periods between a
  // load step or a line sag and the next one can be replayed and repeated, but none across it.
  long quiet_until(long k) {
    return k >= quiet_begin && k <= quiet_end ? quiet_end : find_quiet_stretch(k);
  }

  [[gnu::noinline]] long find_quiet_stretch(long k) {
    const long gates_end = gates->quiet_until(k);
    const long end = gates_end < 0 ? -1 : std::min(gates_end, sources_quiet_until(k));
    if (end >= k) {
      quiet_begin = k;
      quiet_end = end;
    }
    return end;
  }

  long sources_quiet_until(long k) const {
    if (inputs_constant) return detail::kForever;
    if (inputs_oscillate) return -1;
    const long end = detail::quiet_stretch_end(breakpoint_periods, k);
    if (end < 0) return -1;
    // No breakpoint within a period of k: every source is on one segment, flat or a ramp.
    const double t_k = static_cast<double>(k) * period_s;
    for (int el : model.input_elements())
      if (model.circuit().elements()[el].waveform.slope(t_k) != 0.0) return -1;
    return end;
  }

  // Whether period k + 1 lies in the stretch of quiet periods of period k.
  bool next_period_alike(long k) { return quiet_until(k) > k; }

  // After computed period k: keep it, and look for a kept period that began where k ended.
  // The ODE path is left out: its steps depend on the absolute time.
  bool repeat_allowed(long k) {
    return options.repeat_recurring_periods && !piece_observer && !nonlinear &&
           next_period_alike(k);
  }

  void keep_period_record(long k) {
    if (!repeat_allowed(k) || cycle_metrics.state_change >= kRecurrenceWatch) {
      recorded_run = 0;
      return;
    }
    if (recent_periods.size() < kRecurrenceDepth) recent_periods.resize(kRecurrenceDepth);
    PeriodRecord& r = recent_periods[static_cast<std::size_t>(k) % kRecurrenceDepth];
    r.index = k;
    r.start = period_start;
    r.hash = state_hash(period_start.z, period_start.pattern);
    r.metrics = cycle_metrics;
    r.events = cycle.events;
    recorded_run = std::min<long>(recorded_run + 1, kRecurrenceDepth);
    const std::uint64_t end_hash = state_hash(z, pattern);
    for (long j = k; j > k - recorded_run; --j) {
      const PeriodRecord& q = recent_periods[static_cast<std::size_t>(j) % kRecurrenceDepth];
      if (q.hash == end_hash && starts_here(q.start)) {
        cycle_first = j;
        cycle_length = k - j + 1;
        cycle_end = quiet_until(k);
        summary.recurrence_periods = cycle_length;
        return;
      }
    }
  }

  // Period k repeats the period of the cycle at the same place in it; the state moves on to
  // the start of the next one (the cycle's first after its last).
  void repeat_cycle(long k, long double origin) {
    const auto slot = [this](long period) {
      return static_cast<std::size_t>(cycle_first + (period - cycle_first) % cycle_length) %
             kRecurrenceDepth;
    };
    const PeriodRecord& r = recent_periods[slot(k)];
    summary.events += r.events;
    ++summary.repeated_periods;
    t = static_cast<double>(origin + period_s);
    if (cycle_length > 1) {
      cycle_metrics = r.metrics;  // the vectors keep their sizes: no allocation
      const PeriodStart& next = recent_periods[slot(k + 1)].start;
      z = next.z;
      pattern = next.pattern;
      current = next.data;
      in_idle = next.in_idle;
      last_switch_off = next.last_switch_off;
      replay_next = next.replayed;
    }
    cycle_metrics.index = k;
    cycle_metrics.start_time_s = static_cast<double>(origin);
  }

  // ---- replay of a repeating period (detail/period_replay.hpp) ------------------------------

  // Whether period k can be recorded for a replay: its edges and sources repeat in every later
  // period, and nothing needs the pieces themselves.
  bool replay_allowed(long k) {
    return options.replay_repeating_periods && options.cache && !piece_observer && !nonlinear &&
           next_period_alike(k);
  }

  // After a period of the piece engine: the next period is replayed when this one had no state
  // event and ran the same steps as the period before it (or as the replay already built).
  // A circuit whose sequence of pieces keeps changing after short repeats (a slow drift between
  // patterns) would rebuild the operators again and again: after a few builds, at most one
  // build per kRebuildSpacing periods.
  bool replay_builds_allowed(long k) const {
    constexpr int kFreeBuilds = 16;
    constexpr long kRebuildSpacing = 64;
    return replay_builds < kFreeBuilds || k - last_replay_build >= kRebuildSpacing;
  }

  void arm_replay(long k) {
    constexpr std::size_t kMaxSteps = 4096;  // bounds the operators' memory
    replay_next = false;
    if (!steps_valid || cycle.idle_time > 0 || steps_now.empty() || !steps_now.front().data ||
        steps_now.size() > kMaxSteps) {
      steps_before.clear();
      return;
    }
    if (replay.built() && steps_now == replay.steps()) {
      replay_next = true;
    } else if (steps_now == steps_before && replay_builds_allowed(k)) {
      replay_next = replay.build(steps_now, n_z, replay_functionals());
      ++replay_builds;
      last_replay_build = k;
    }
    std::swap(steps_before, steps_now);
  }

  detail::ReplayFunctionals replay_functionals() {
    detail::ReplayFunctionals f;
    f.signals = static_cast<int>(recorded.size());
    f.energies = options.energy_accounting;
    replay_extra_inductors.clear();
    replay_signal_inductor.assign(recorded.size(), -1);
    for (std::size_t k = 0; k < inductor_states.size(); ++k) {
      if (inductor_recorded[k] >= 0) {
        replay_signal_inductor[inductor_recorded[k]] = static_cast<int>(k);
        continue;
      }
      replay_extra_inductors.push_back(static_cast<int>(k));
      f.extra_states.push_back(inductor_states[k]);
    }
    return f;
  }

  // 1: the period was replayed; 0: it does not repeat, the state is restored and the piece
  // engine must run it; -1: the run failed at a gate edge.
  int replay_cycle(long double origin) {
    const std::vector<detail::PeriodStep>& steps = replay.steps();
    replay_start = z;
    const DevicePattern pattern_start = pattern;
    const PatternData* current_start = current;
    const long events_start = summary.events;
    const double t_start = t;
    const bool idle_start = in_idle;
    const int switch_off_start = last_switch_off;
    replay_pending.clear();
    replay_states.resize(n_z, static_cast<Eigen::Index>(steps.size()));
    for (std::size_t i = 0; i < steps.size(); ++i) {
      const detail::PeriodStep& step = steps[i];
      if (!step.data) {
        t = static_cast<double>(origin + step.value);
        if (!apply_schedule(step.pattern)) return -1;
        continue;
      }
      if (pattern != step.pattern || current != step.data ||
          !replay_piece(replay.piece(static_cast<int>(i)), static_cast<int>(i))) {
        z = replay_start;
        pattern = pattern_start;
        current = current_start;
        summary.events = events_start;
        t = t_start;
        in_idle = idle_start;
        last_switch_off = switch_off_start;
        return 0;
      }
    }
    replay_interior_extrema();
    replay.period_integrals(replay_start, cycle.integral.data(), cycle.square_integral.data(),
                            cycle.element_energy.data());
    if (options.energy_accounting)
      for (std::size_t k = 0; k < energy_elements.size(); ++k)
        (energy_elements[k].second.role == EnergyRole::kSource ? cycle.energy_in
                                                               : cycle.dissipated) +=
            cycle.element_energy[k];
    return 1;
  }

  // One piece of a replayed period: extrema, then the transition. False when a device
  // condition may cross zero inside it.
  bool replay_piece(const detail::PeriodReplay::Piece& pc, int step) {
    replay_values.resize(pc.on_state.rows());
    replay_bound.resize(pc.on_magnitude.rows());
    replay_abs = z.cwiseAbs();
    detail::apply(pc.on_state, z.data(), replay_values.data());
    detail::apply(pc.on_magnitude, replay_abs.data(), replay_bound.data());
    if (!replay_keeps_devices(pc)) return false;
    replay_extrema(pc, step);
    record_interval(pc.h);
    z.head(pc.dynamic_rows) = replay_values.segment(pc.transition_row(), pc.dynamic_rows);
    return true;
  }

  // No device condition crosses zero on the piece: g(0) exceeds the bound on its variation, or
  // else the piece engine's own event search on the expanded piece finds no event.
  bool replay_keeps_devices(const detail::PeriodReplay::Piece& pc) {
    for (int d = 0; d < pc.conditions; ++d) {
      if (replay_values[d] > replay_bound[d]) continue;
      if (!piece.expand(current->M, z, pc.h, current->dynamic_rows)) return false;
      return find_event(options.event_time_tolerance * period_s / pc.h).second < 0;
    }
    return true;
  }

  // Extremes of the recorded signals and the inductor peaks: the end values of every piece at
  // once; an interior extremum (where the slope changes sign) is kept for the end of the period,
  // when the period's extremes from the end values are known.
  void replay_extrema(const detail::PeriodReplay::Piece& pc, int step) {
    const int signals = static_cast<int>(recorded.size());
    const double* variation = replay_bound.data() + pc.conditions;
    bool pending = false;
    for (int f = 0; f < signals; ++f) {
      const double* v = replay_values.data() + pc.ends_row() + 4 * f;
      cycle.min[f] = std::min({cycle.min[f], v[0], v[1]});
      cycle.max[f] = std::max({cycle.max[f], v[0], v[1]});
      if (const int inductor = replay_signal_inductor[f]; inductor >= 0) {
        double& best = summary.startup.peak_inductor_current_a[inductor];
        best = std::max({best, std::abs(v[0]), std::abs(v[1])});
      }
      if (slope_changes_sign(v[2], v[3])) {
        replay_pending.push_back({step, f, v[0], v[2], v[3], variation[f]});
        pending = true;
      }
    }
    if (pending) replay_states.col(step) = z;
    double a[detail::TaylorPiece::kMaxOrder + 1];
    for (std::size_t x = 0; x < replay_extra_inductors.size(); ++x) {
      const int k = replay_extra_inductors[x];
      double& best = summary.startup.peak_inductor_current_a[k];
      const double y0 = z[inductor_states[k]];
      if (std::abs(y0) + variation[signals + x] <= best) continue;
      const std::size_t f = static_cast<std::size_t>(signals) + x;
      detail::apply(pc.polynomial[f], z.data(), a);
      double y1 = 0.0, d1 = 0.0;
      for (int m = 0; m <= pc.order; ++m) {
        y1 += a[m];
        d1 += m * a[m];
      }
      double peak = std::max(std::abs(y0), std::abs(y1));
      const double d0 = pc.order >= 1 ? a[1] : 0.0;
      if (slope_changes_sign(d0, d1))
        peak = std::max(peak,
                        std::abs(poly::interior_extremum(a, pc.order, d0, d1, kExtremumTolerance)));
      best = std::max(best, peak);
    }
  }

  // The interior extrema kept by replay_extrema(). One lies within y(0) +- the variation bound,
  // so its polynomial is evaluated only where that band reaches past the period's extremes (or
  // the run's peak of an inductor current).
  void replay_interior_extrema() {
    double a[detail::TaylorPiece::kMaxOrder + 1];
    for (const PendingExtremum& e : replay_pending) {
      const int inductor = replay_signal_inductor[e.signal];
      double* best = inductor >= 0 ? &summary.startup.peak_inductor_current_a[inductor] : nullptr;
      if (e.y0 - e.band >= cycle.min[e.signal] && e.y0 + e.band <= cycle.max[e.signal] &&
          (!best || std::abs(e.y0) + e.band <= *best))
        continue;
      const detail::PeriodReplay::Piece& pc = replay.piece(e.step);
      detail::apply(pc.polynomial[e.signal], replay_states.col(e.step).data(), a);
      const double v = poly::interior_extremum(a, pc.order, e.d0, e.d1, kExtremumTolerance);
      cycle.min[e.signal] = std::min(cycle.min[e.signal], v);
      cycle.max[e.signal] = std::max(cycle.max[e.signal], v);
      if (best) *best = std::max(*best, std::abs(v));
    }
  }

  void finish_startup() {
    if (output_recorded < 0 || output_averages.empty()) return;
    const double final_value = summary.last_cycle.signals[output_recorded].average;
    const double scale = std::abs(final_value);
    if (scale == 0) return;
    // The peak on the side of the final value: the most negative value for a negative output.
    const double extreme = final_value > 0 ? output_max : output_min;
    summary.startup.output_peak = extreme;
    summary.startup.overshoot = std::max(0.0, (extreme - final_value) / final_value);
    long settled = 0;
    for (std::size_t k = 0; k < output_averages.size(); ++k)
      if (std::abs(output_averages[k] - final_value) > options.settling_band * scale)
        settled = static_cast<long>(k) + 1;
    summary.startup.settling_cycle =
        settled < static_cast<long>(output_averages.size()) ? settled : -1;
  }

  RunSummary run(Observer* obs) {
    const auto wall_start = std::chrono::steady_clock::now();
    start(obs);
    if (observer) {
      RunInfo info;
      info.recorded = summary.recorded;
      info.switching_period_s = period_s;
      info.end_time_s = options.periods * period_s;
      info.periods = options.periods;
      observer->on_start(info);
    }
    bool ok = make_consistent();
    int quiet_periods = 0;
    for (long k = 0; ok && k < options.periods; ++k) {
      ok = run_cycle(k);
      if (!ok) break;
      quiet_periods =
          cycle_metrics.state_change < options.steady_state_tolerance ? quiet_periods + 1 : 0;
      if (quiet_periods >= options.steady_state_periods && summary.startup.steady_state_cycle < 0)
        summary.startup.steady_state_cycle = k;
      if (options.stop_at_steady_state && summary.startup.steady_state_cycle >= 0) {
        summary.end = RunEnd::kSteadyState;
        summary.message = "steady state after " + std::to_string(k + 1) + " periods";
        break;
      }
    }
    if (ok && summary.end == RunEnd::kCompleted)
      summary.message = "completed " + std::to_string(summary.cycles) + " periods";
    summary.last_cycle = cycle_metrics;  // the last completed period
    finish_startup();
    summary.end_time_s = t;
    summary.final_state = z.head(n_x);
    summary.configurations_built = model.configurations_built();
    summary.cache_hits = model.cache_hits() + pattern_hits;
    summary.wall_time_s =
        std::chrono::duration<double>(std::chrono::steady_clock::now() - wall_start).count();
    if (observer) observer->on_finish(summary);
    return summary;
  }
};

Simulation::Simulation(const Circuit& circuit, SimulationOptions options)
    : impl_(std::make_unique<Impl>(circuit, std::move(options))) {}
Simulation::~Simulation() = default;
Simulation::Simulation(Simulation&&) noexcept = default;
Simulation& Simulation::operator=(Simulation&&) noexcept = default;

RunSummary Simulation::run(Observer* observer) { return impl_->run(observer); }
const CircuitModel& Simulation::model() const { return impl_->model; }
const SimulationOptions& Simulation::options() const { return impl_->options; }
std::string Simulation::describe(DevicePattern pattern) const {
  return impl_->model.describe(pattern);
}

void Simulation::set_initial_state(const Eigen::VectorXd& x0) {
  if (x0.size() != static_cast<Eigen::Index>(impl_->model.state_count()))
    throw InputError(
        ErrorKind::kInvalidOption, "",
        "initial state has " + std::to_string(x0.size()) + " entries",
        "give one value per state (" + std::to_string(impl_->model.state_count()) + ")");
  impl_->x0 = x0;
}

}  // namespace pulsewise
