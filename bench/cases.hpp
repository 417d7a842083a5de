// Hand-written models of the four benchmark converters, for the baselines and the long-double
// reference only (pulsewise itself runs the circuit files in bench/data/). Each model is the
// nodal analysis of one topology done by hand for every on/off pattern of its devices, templated
// on the scalar type so that the same equations run in double (baselines) and long double
// (reference). Nothing here uses pulsewise code.
//
// A model provides, for switch pattern `sw` and diode pattern `di` (bit k = device k on):
//   derivative(sw, di, x, dx)   dx/dt of the state vector
//   diode_margin(sw, di, d, x)  >= 0 while diode d is consistent with its state: its current when
//                               on, forward_voltage - v_ak when off
//   project(sw, di, x)          enforces the zero current of an inductor cutset that every open
//                               device isolates (a DCM idle interval)
// An off diode next to an isolated cutset that carries current would see an infinite voltage;
// its margin is then -kHuge (forward-biased: it must turn on) or +kHuge (reverse-biased).
// Parameters are stored as the double values the circuit file gives, so that the long-double
// reference solves the same problem as pulsewise to the last bit of its data.
#pragma once

#include <array>
#include <cmath>
#include <string_view>

namespace pwbench {

// One switch's on-interval within each period, as fractions of the period, periodic (on for
// ((t / T - on) mod 1) < width). All cases start a gate period at t = 0 or at a phase offset,
// and the gates repeat into negative time, as pulsewise's modulators do.
struct GateWindow {
  double on = 0.0;     // turn-on instant, fraction of the period
  double width = 0.0;  // on-time, fraction of the period
};

template <class T>
inline constexpr T kHuge = T(1e30);

// Cutset currents below this are zero (A): residues of a located turn-off.
template <class T>
inline constexpr T kCutsetTolerance = T(1e-9);

inline bool bit(unsigned pattern, int k) { return (pattern >> k) & 1u; }

// Case 1: boost. States: x0 = inductor current (in -> sw), x1 = output capacitor voltage.
// Devices: switch S (sw -> 0), diode D (anode sw, cathode out).
template <class T>
struct DcmBoost {
  static constexpr int kStates = 2, kSwitches = 1, kDiodes = 1, kOutput = 1;
  static constexpr std::string_view kName = "case1";
  T vin = T(12.0), l = T(10e-6), c = T(47e-6), r = T(60.0);
  T rs = T(10e-3), rd = T(10e-3), vf = T(0.0);
  // Reciprocals, so that the baselines divide as little as a hand-written program would.
  T gs = 1 / rs, gd = 1 / rd, inv_l = 1 / l, inv_c = 1 / c, inv_r = 1 / r;
  double frequency_hz = 200e3;
  std::array<GateWindow, 1> gates{{{0.0, 0.3}}};
  static constexpr int kEdgeGrid = 10;  // every gate edge lies on a T/10 grid

  // Switch-node voltage; `cutset` true when both devices are open.
  T switch_node(unsigned sw, unsigned di, const T* x, bool& cutset) const {
    const T g_s = bit(sw, 0) ? gs : T(0), g_d = bit(di, 0) ? gd : T(0);
    cutset = g_s + g_d == 0;
    return cutset ? vin : (x[0] + g_d * (x[1] + vf)) / (g_s + g_d);
  }
  void derivative(unsigned sw, unsigned di, const T* x, T* dx) const {
    bool cutset = false;
    const T vs = switch_node(sw, di, x, cutset);
    const T id = bit(di, 0) ? (vs - x[1] - vf) * gd : T(0);
    dx[0] = cutset ? T(0) : (vin - vs) * inv_l;
    dx[1] = (id - x[1] * inv_r) * inv_c;
  }
  T diode_margin(unsigned sw, unsigned di, int /*d*/, const T* x) const {
    bool cutset = false;
    const T vs = switch_node(sw, di, x, cutset);
    if (bit(di, 0)) return (vs - x[1] - vf) * gd;
    if (cutset && std::abs(x[0]) > kCutsetTolerance<T>) return x[0] > 0 ? -kHuge<T> : kHuge<T>;
    return vf - (vs - x[1]);
  }
  void project(unsigned sw, unsigned di, T* x) const {
    if (!bit(sw, 0) && !bit(di, 0)) x[0] = 0;
  }
};

// Case 2: synchronous buck with dead time. States: x0 = inductor current (sw -> out),
// x1 = output capacitor voltage. Switches: 0 high side (in -> sw), 1 low side (sw -> 0).
// Diodes (body diodes): 0 high side (anode sw, cathode in), 1 low side (anode 0, cathode sw).
template <class T>
struct SyncBuck {
  static constexpr int kStates = 2, kSwitches = 2, kDiodes = 2, kOutput = 1;
  static constexpr std::string_view kName = "case2";
  T vin = T(12.0), l = T(2.2e-6), rl = T(5e-3), c = T(100e-6), r = T(0.5);
  T r_high = T(8e-3), r_low = T(5e-3), rd = T(20e-3), vf = T(0.7);
  T g_high = 1 / r_high, g_low = 1 / r_low, gd = 1 / rd, inv_l = 1 / l, inv_c = 1 / c;
  T inv_r = 1 / r;
  double frequency_hz = 500e3;
  // D = 9/32 and dead time T/64 (31.25 ns): every edge lies on a T/64 grid.
  std::array<GateWindow, 2> gates{{{0.0, 0.28125}, {0.28125 + 0.015625, 1.0 - 0.28125 - 0.03125}}};
  static constexpr int kEdgeGrid = 64;

  T switch_node(unsigned sw, unsigned di, const T* x, bool& cutset) const {
    const T gh = bit(sw, 0) ? g_high : T(0), gl = bit(sw, 1) ? g_low : T(0);
    const T gdh = bit(di, 0) ? gd : T(0), gdl = bit(di, 1) ? gd : T(0);
    const T g = gh + gl + gdh + gdl;
    cutset = g == 0;
    return cutset ? x[1] : (gh * vin + gdh * (vin + vf) - gdl * vf - x[0]) / g;
  }
  void derivative(unsigned sw, unsigned di, const T* x, T* dx) const {
    bool cutset = false;
    const T vs = switch_node(sw, di, x, cutset);
    dx[0] = cutset ? T(0) : (vs - rl * x[0] - x[1]) * inv_l;
    dx[1] = (x[0] - x[1] * inv_r) * inv_c;
  }
  T diode_margin(unsigned sw, unsigned di, int d, const T* x) const {
    bool cutset = false;
    const T vs = switch_node(sw, di, x, cutset);
    const T v_ak = d == 0 ? vs - vin : -vs;
    if (bit(di, d)) return (v_ak - vf) * gd;
    if (cutset && std::abs(x[0]) > kCutsetTolerance<T>) {
      // Current into the load pulls the switch node down: the low-side diode must conduct.
      const bool forward = (x[0] > 0) == (d == 1);
      return forward ? -kHuge<T> : kHuge<T>;
    }
    return vf - v_ak;
  }
  void project(unsigned sw, unsigned di, T* x) const {
    if (sw == 0 && di == 0) x[0] = 0;
  }
};

// Case 3: four-phase interleaved buck behind a two-stage input LC filter with an RC damping leg.
// States: 0 input inductor Lf1 current, 1 Cf1 voltage, 2 Lf2 current, 3 bus capacitor Cf2
// voltage, 4 damping capacitor voltage, 5..8 phase inductor currents (sw_k -> out), 9 output.
// Phase k: switch k (bus -> sw_k), diode k (anode 0, cathode sw_k).
template <class T>
struct InterleavedBuck {
  static constexpr int kStates = 10, kSwitches = 4, kDiodes = 4, kOutput = 9;
  static constexpr std::string_view kName = "case3";
  T vin = T(12.0);
  T lf1 = T(2.2e-6), rf1 = T(10e-3), cf1 = T(47e-6), lf2 = T(1e-6), rf2 = T(5e-3);
  T cf2 = T(22e-6), r_damp = T(0.3), c_damp = T(100e-6);
  T lk = T(4.7e-6), rk = T(2e-3), rs = T(10e-3), rd = T(10e-3), vf = T(0.35);
  T cout = T(200e-6), r = T(0.2);
  T gs = 1 / rs, gd = 1 / rd, g_damp = 1 / r_damp, inv_r = 1 / r, inv_lk = 1 / lk;
  T inv_lf1 = 1 / lf1, inv_lf2 = 1 / lf2, inv_cf1 = 1 / cf1, inv_cf2 = 1 / cf2;
  T inv_c_damp = 1 / c_damp, inv_cout = 1 / cout;
  double frequency_hz = 250e3;
  std::array<GateWindow, 4> gates{{{0.0, 0.3}, {0.25, 0.3}, {0.5, 0.3}, {0.75, 0.3}}};
  static constexpr int kEdgeGrid = 20;

  T phase_node(unsigned sw, unsigned di, int k, const T* x, bool& cutset) const {
    const T g_s = bit(sw, k) ? gs : T(0), g_d = bit(di, k) ? gd : T(0);
    cutset = g_s + g_d == 0;
    return cutset ? x[9] : (g_s * x[3] - g_d * vf - x[5 + k]) / (g_s + g_d);
  }
  void derivative(unsigned sw, unsigned di, const T* x, T* dx) const {
    T switch_current = 0, phase_current = 0;
    for (int k = 0; k < 4; ++k) {
      bool cutset = false;
      const T vs = phase_node(sw, di, k, x, cutset);
      if (bit(sw, k)) switch_current += (x[3] - vs) * gs;
      dx[5 + k] = cutset ? T(0) : (vs - rk * x[5 + k] - x[9]) * inv_lk;
      phase_current += x[5 + k];
    }
    const T damp_current = (x[3] - x[4]) * g_damp;
    dx[0] = (vin - rf1 * x[0] - x[1]) * inv_lf1;
    dx[1] = (x[0] - x[2]) * inv_cf1;
    dx[2] = (x[1] - rf2 * x[2] - x[3]) * inv_lf2;
    dx[3] = (x[2] - damp_current - switch_current) * inv_cf2;
    dx[4] = damp_current * inv_c_damp;
    dx[9] = (phase_current - x[9] * inv_r) * inv_cout;
  }
  T diode_margin(unsigned sw, unsigned di, int d, const T* x) const {
    bool cutset = false;
    const T vs = phase_node(sw, di, d, x, cutset);
    if (bit(di, d)) return (-vs - vf) * gd;
    if (cutset && std::abs(x[5 + d]) > kCutsetTolerance<T>)
      return x[5 + d] > 0 ? -kHuge<T> : kHuge<T>;
    return vf + vs;
  }
  void project(unsigned sw, unsigned di, T* x) const {
    for (int k = 0; k < 4; ++k)
      if (!bit(sw, k) && !bit(di, k)) x[5 + k] = 0;
  }
};

// Case 4: SEPIC. States: 0 L1 current (in -> sw), 1 coupling capacitor C1 voltage (sw - cx),
// 2 L2 current (cx -> 0), 3 output capacitor voltage. Switch S (sw -> 0), diode D (anode cx,
// cathode out). With both devices open the nodes sw and cx hang on L1 and L2 only: their cutset
// current i1 - i2 is zero and the DCM idle current circulates through L1, C1 and L2.
template <class T>
struct DcmSepic {
  static constexpr int kStates = 4, kSwitches = 1, kDiodes = 1, kOutput = 3;
  static constexpr std::string_view kName = "case4";
  T vin = T(12.0), l1 = T(22e-6), r1 = T(20e-3), c1 = T(10e-6), l2 = T(22e-6), r2 = T(20e-3);
  T rs = T(20e-3), rd = T(20e-3), vf = T(0.4), cout = T(47e-6), r = T(50.0);
  T gs = 1 / rs, gd = 1 / rd, inv_l1 = 1 / l1, inv_l2 = 1 / l2, inv_c1 = 1 / c1;
  T inv_cout = 1 / cout, inv_r = 1 / r, idle_weight = 1 / (inv_l1 + inv_l2);
  double frequency_hz = 200e3;
  std::array<GateWindow, 1> gates{{{0.0, 0.3}}};
  static constexpr int kEdgeGrid = 10;

  T switch_node(unsigned sw, unsigned di, const T* x, bool& cutset) const {
    const T g_s = bit(sw, 0) ? gs : T(0), g_d = bit(di, 0) ? gd : T(0);
    cutset = g_s + g_d == 0;
    if (!cutset) return (x[0] - x[2] + g_d * (x[1] + x[3] + vf)) / (g_s + g_d);
    // d(i1 - i2)/dt = 0 fixes the potential of the isolated pair of nodes.
    return ((vin - r1 * x[0]) * inv_l1 + (x[1] + r2 * x[2]) * inv_l2) * idle_weight;
  }
  void derivative(unsigned sw, unsigned di, const T* x, T* dx) const {
    bool cutset = false;
    const T vs = switch_node(sw, di, x, cutset);
    const T vcx = vs - x[1];
    const T is = bit(sw, 0) ? vs * gs : T(0);
    const T id = bit(di, 0) ? (vcx - x[3] - vf) * gd : T(0);
    dx[0] = (vin - r1 * x[0] - vs) * inv_l1;
    dx[1] = (x[0] - is) * inv_c1;
    dx[2] = (vcx - r2 * x[2]) * inv_l2;
    dx[3] = (id - x[3] * inv_r) * inv_cout;
  }
  T diode_margin(unsigned sw, unsigned di, int /*d*/, const T* x) const {
    bool cutset = false;
    const T vs = switch_node(sw, di, x, cutset);
    const T v_ak = vs - x[1] - x[3];
    if (bit(di, 0)) return (v_ak - vf) * gd;
    const T cutset_current = x[0] - x[2];
    if (cutset && std::abs(cutset_current) > kCutsetTolerance<T>)
      return cutset_current > 0 ? -kHuge<T> : kHuge<T>;
    return vf - v_ak;
  }
  void project(unsigned sw, unsigned di, T* x) const {
    if (bit(sw, 0) || bit(di, 0)) return;
    const T i = (l1 * x[0] + l2 * x[2]) / (l1 + l2);  // flux linkage is conserved
    x[0] = x[2] = i;
  }
};

// Switch pattern at fraction f of the period (f in [0, 1)).
template <class Model>
unsigned switch_pattern_at(const Model& m, double f) {
  unsigned sw = 0;
  for (int k = 0; k < Model::kSwitches; ++k) {
    double tau = f - m.gates[k].on;
    tau -= std::floor(tau);
    if (tau < m.gates[k].width) sw |= 1u << k;
  }
  return sw;
}

// Makes the diode pattern consistent with the state: flips the most violated diode until none
// is violated by more than `tolerance`, then projects cutset currents. Returns false when it
// cycles.
template <class Model, class T>
bool settle(const Model& m, unsigned sw, unsigned& di, T* x, T tolerance) {
  for (int iteration = 0; iteration < 4 * Model::kDiodes + 4; ++iteration) {
    int worst = -1;
    T worst_margin = -tolerance;
    for (int d = 0; d < Model::kDiodes; ++d) {
      const T g = m.diode_margin(sw, di, d, x);
      if (g < worst_margin) {
        worst_margin = g;
        worst = d;
      }
    }
    if (worst < 0) {
      m.project(sw, di, x);
      return true;
    }
    di ^= 1u << worst;
  }
  return false;
}

}  // namespace pwbench
