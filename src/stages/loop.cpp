// The loop gain by double injection (loop.hpp). With the loop broken at node x (the return
// side, e.g. the collector) and y (the forward side, the moved end of the feedback resistor):
//  - voltage injection: a source in series, y = x + v; Tv = -V(x) / V(y);
//  - current injection: the series source at 0 V (a closed loop), a current into y;
//    Ti = -i_r / i_f, i_f the current leaving y into the forward side, i_r the one arriving
//    from the return side;
//  - T = (Tv Ti - 1) / (Tv + Ti + 2), exact for a loop through one point whatever the
//    impedances on either side (from T = A Zf / (Zf + Zr), Tv = T (1 + Zr/Zf) + Zr/Zf and
//    Ti = T (1 + Zf/Zr) + Zf/Zr; R. D. Middlebrook, "Measurement of loop gain in feedback
//    systems", Int. J. Electronics, 1975, and M. Tian, V. Visvanathan, J. Hantgan, K. Kundert,
//    "Striving for small-signal stability", IEEE Circuits and Devices, 2001; from memory).
// The solver has no current source: the current comes from a source of 1 V behind 1 TOhm,
// whose loading (1 pS) is far below any node's here, and whose current is read off the
// node voltages, as are both sides' currents (the forward side is the resistor moved, with
// every resistor or capacitor beside it between the same two nets: a compensation capacitor
// across it carries part of the feedback, and a break that left it in place would let the
// loop close around the injection).
#include "shelfstage/stages/loop.hpp"

#include <cmath>
#include <complex>
#include <fmt/format.h>
#include <algorithm>
#include <array>
#include <numbers>
#include <optional>
#include <vector>

#include "shelfstage/circuit/solver.hpp"
#include "shelfstage/error.hpp"

namespace shelfstage::stages {

namespace {

using cd = std::complex<double>;

constexpr double kInjectOhm = 1e12;
constexpr const char* kBreakNet = "loop_y";
constexpr const char* kInjectNet = "loop_i";

// The circuit with the loop broken: the moved parts' ends on end_net moved to kBreakNet, a
// series source VLOOP (+ at the break, - at end_net), and the current injection VINJ behind
// RINJ into the break. Every other AC source silenced; both injections at 0 V DC (the
// operating point is the closed loop's), each driven alone by AcSystem::solve_each.
circuit::Circuit broken(const circuit::Circuit& net, const std::vector<std::string>& moved,
                        const std::string& end_net) {
  circuit::Circuit b;
  circuit::Circuit::Carry carry;
  carry.net = [&](const circuit::Component& c, const std::string& n) {
    return n == end_net && std::find(moved.begin(), moved.end(), c.designator) != moved.end() ? std::string(kBreakNet)
                                                                                              : n;
  };
  carry.keep = [](const circuit::Component& c) {
    return !(c.kind == circuit::ElementKind::vsource && c.ac_volts != 0);
  };
  b.append(net, carry);
  // The silenced sources again, at their DC alone.
  for (const auto& el : net.elements())
    if (el.c.kind == circuit::ElementKind::vsource && el.c.ac_volts != 0)
      b.vsource(el.c.designator, el.c.role, net.net_name(el.c.pins[0]), net.net_name(el.c.pins[1]), el.c.value, 0.0);
  b.vsource("VLOOP", "loop injection", kBreakNet, end_net, 0.0, 0.0);
  b.vsource("VINJ", "loop injection", kInjectNet, "0", 0.0, 0.0);
  b.resistor("RINJ", "loop injection", kInjectNet, kBreakNet, kInjectOhm);
  return b;
}

// What the two injections need to read at one frequency.
struct Probe {
  std::optional<circuit::AcSystem> system;
  std::size_t x = 0, y = 0, far = 0, inj = 0;  // nets: return side, break, the moved parts' other end, injection
  double g_moved = 0, c_moved = 0;             // the moved parts' conductance and capacitance
  cd loop(double f_hz) const {
    static const std::array<std::string, 2> kSources = {"VLOOP", "VINJ"};
    const auto both = system->solve_each(f_hz, kSources);
    const auto& v = both[0];
    const cd tv = -v[x] / v[y];
    const auto& i = both[1];
    const cd i_f = (i[y] - i[far]) * cd(g_moved, 2 * std::numbers::pi * f_hz * c_moved);
    const cd i_inj = (i[inj] - i[y]) / kInjectOhm;
    const cd i_r = i_f - i_inj;
    const cd ti = -i_r / i_f;
    return (tv * ti - 1.0) / (tv + ti + 2.0);
  }
};

}  // namespace

struct LoopMemo::Seen {
  circuit::AcSystem system;
  std::array<std::size_t, 4> nets;
  double g_moved, c_moved, f_mid_hz;
  LoopGain gain;
};
LoopMemo::LoopMemo() = default;
LoopMemo::~LoopMemo() = default;
std::size_t LoopMemo::measured() const { return seen_.size(); }
std::size_t LoopMemo::reused() const { return reused_; }

LoopGain loop_gain_of_circuit(const circuit::Circuit& net, const std::string& designator, const std::string& end_net,
                              double celsius, double f_mid_hz, LoopMemo* memo) {
  const circuit::Element* part = net.find(designator);
  if (!part || part->c.kind != circuit::ElementKind::resistor)
    throw InputError(fmt::format("loop: no resistor {} to break the loop at", designator));
  const auto end = net.find_net(end_net);
  if (!end || (part->c.pins[0] != *end && part->c.pins[1] != *end))
    throw InputError(fmt::format("loop: {} has no end on net {}", designator, end_net));
  const std::size_t far = part->c.pins[0] == *end ? part->c.pins[1] : part->c.pins[0];
  const std::string far_net = net.net_name(far);
  Probe p;
  // The resistor and whatever sits beside it between the same two nets.
  std::vector<std::string> moved;
  for (const auto& el : net.elements()) {
    const bool rc = el.c.kind == circuit::ElementKind::resistor || el.c.kind == circuit::ElementKind::capacitor;
    const auto [a, b] = std::pair(el.c.pins[0], el.c.pins[1]);
    if (!rc || !((a == *end && b == far) || (a == far && b == *end))) continue;
    moved.push_back(el.c.designator);
    (el.c.kind == circuit::ElementKind::resistor ? p.g_moved : p.c_moved) +=
        el.c.kind == circuit::ElementKind::resistor ? 1.0 / el.c.value : el.c.value;
  }
  const circuit::Circuit b = broken(net, moved, end_net);
  circuit::SolverOptions o;
  o.celsius = celsius;
  p.system.emplace(b, memo ? circuit::solve_dc_next(b, o, memo->last_) : circuit::solve_dc(b, o));
  p.x = *b.find_net(end_net);
  p.y = *b.find_net(kBreakNet);
  p.far = *b.find_net(far_net);
  p.inj = *b.find_net(kInjectNet);
  const std::array<std::size_t, 4> nets = {p.x, p.y, p.far, p.inj};
  if (memo)
    for (const LoopMemo::Seen& seen : memo->seen_)
      if (seen.nets == nets && seen.g_moved == p.g_moved && seen.c_moved == p.c_moved && seen.f_mid_hz == f_mid_hz &&
          seen.system.same_as(*p.system, 1e-9)) {
        ++memo->reused_;
        return seen.gain;
      }

  LoopGain g;
  const cd t_mid = p.loop(f_mid_hz);
  g.mid = std::abs(t_mid);
  g.mid_phase_deg = std::arg(t_mid) * 180.0 / std::numbers::pi;
  // Up from mid-band, eight points a decade, the phase unwrapped as it goes; the last fall of
  // |T| through one is bisected in log f.
  const double f_top = 1e10;
  double f_prev = f_mid_hz, phase_prev = std::arg(t_mid);
  cd t_prev = t_mid;
  double cross_lo = 0, cross_hi = 0, phase_at_lo = 0;
  const double step = std::pow(10.0, 0.125);
  for (double f = f_mid_hz * step; f <= f_top * 1.0001; f *= step) {
    const cd t = p.loop(f);
    double d = std::arg(t) - std::arg(t_prev);
    while (d > std::numbers::pi) d -= 2 * std::numbers::pi;
    while (d <= -std::numbers::pi) d += 2 * std::numbers::pi;
    const double phase = phase_prev + d;
    if (std::abs(t_prev) >= 1.0 && std::abs(t) < 1.0) {
      cross_lo = f_prev;
      cross_hi = f;
      phase_at_lo = phase_prev;
    }
    f_prev = f;
    phase_prev = phase;
    t_prev = t;
  }
  if (cross_lo > 0) {
    double lo = cross_lo, hi = cross_hi, phase_lo = phase_at_lo;
    cd t_lo = p.loop(lo);
    for (int i = 0; i < 22; ++i) {
      const double mid = std::sqrt(lo * hi);
      const cd t = p.loop(mid);
      if (std::abs(t) >= 1.0) {
        double d = std::arg(t) - std::arg(t_lo);
        while (d > std::numbers::pi) d -= 2 * std::numbers::pi;
        while (d <= -std::numbers::pi) d += 2 * std::numbers::pi;
        phase_lo += d;
        t_lo = t;
        lo = mid;
      } else {
        hi = mid;
      }
    }
    g.f_cross_hz = std::sqrt(lo * hi);
    g.phase_margin_deg = 180.0 + phase_lo * 180.0 / std::numbers::pi;
  }
  if (memo) memo->seen_.push_back({*p.system, nets, p.g_moved, p.c_moved, f_mid_hz, g});
  return g;
}

std::optional<LoopGain> loop_gain(const Topology& t, const Values& values, const Transistor& q, const Conditions& c,
                                  double f_mid_hz, LoopMemo* memo) {
  const auto brk = t.feedback_loop();
  if (!brk) return std::nullopt;
  const std::size_t role = t.role_index(brk->role);
  if (role >= t.roles().size() || !(values[role] > 0)) return std::nullopt;
  const circuit::Circuit net = t.netlist(values, q, c);
  return loop_gain_of_circuit(net, std::string(t.roles()[role].designator), std::string(brk->net), c.celsius, f_mid_hz,
                              memo);
}

}  // namespace shelfstage::stages
