// The exact evaluation of a stage: every figure from the MNA solver on the stage's netlist.
#include "shelfstage/stages/exact.hpp"

#include <algorithm>
#include <array>
#include <cmath>
#include <complex>
#include <numbers>

#include <fmt/format.h>
#include <span>

#include "distortion.hpp"
#include "opamp_model.hpp"
#include "shelfstage/error.hpp"

namespace shelfstage::stages {

namespace {

using circuit::Circuit;
using circuit::Element;
using circuit::ElementKind;
using circuit::OperatingPoint;

// The load's capacitance is open at mid-band, as the devices' are: it is not held.
// Open at mid-band (circuit::with_capacitors_held): the bench's load capacitance, and a
// compensation capacitor across a feedback resistor (kRoleCompensation), which like a
// device's capacitance only acts above the band.
bool is_load_capacitance(const circuit::Component& e) { return open_at_mid_band(e.role); }

struct SweepPoint {
  double out_v = 0;
  bool edge = false;  // the device has left its linear region
};

bool is_opamp(const Transistor& q) { return q.kind == devices::DeviceKind::opamp; }

// An op-amp has left its linear region: its output clamped, or an input outside the
// common-mode range its record states.
bool opamp_edge(const OperatingPoint& op, const detail::OpampModelAt& m, const devices::OpampInstance& a) {
  if (detail::clamp_current(op, m) > detail::kClampOnsetA) return true;
  const double vp = op.node_v[m.v_pos], vn = op.node_v[m.v_neg];
  for (const std::size_t pin : {m.plus, m.minus}) {
    const double v = op.node_v[pin];
    if (v > vp - a.cm_drop_hi_v || v < vn + a.cm_drop_lo_v) return true;
  }
  return false;
}

// One input level of the quasi-static sweep: the output, and whether any device has left its
// linear region (transistors in element order, as the solver reports them; op-amps in the
// order of their models).
// `last`: the sweep's last solution (circuit::solve_dc_next), replaced by this one's.
SweepPoint sweep_at(Circuit& h, std::span<const Transistor> qs, double x, const std::vector<double>& ic0,
                    const circuit::SolverOptions& so, OperatingPoint& last) {
  h.set_value("VSIG", x);
  SweepPoint s;
  const OperatingPoint* at = nullptr;
  try {
    at = &circuit::solve_dc_next(h, so, last);  // (last is this point's now)
  } catch (const Error&) {
    s.edge = true;
    return s;
  }
  const OperatingPoint& op = *at;
  s.out_v = op.v(h, std::string(kNetOut));
  std::size_t dev = 0, amp = 0;
  std::vector<detail::OpampModelAt> models;
  for (std::size_t i = 0; i < qs.size(); ++i) {
    if (is_opamp(qs[i])) {
      if (models.empty()) models = detail::opamp_models(h);
      if (amp < models.size()) s.edge = s.edge || opamp_edge(op, models[amp], qs[i].opamp);
      ++amp;
      continue;
    }
    if (dev >= op.devices.size()) break;
    const circuit::DeviceOp& d = op.devices[dev++];
    if (devices::is_jfet(qs[i].kind))
      s.edge = s.edge || d.jfet_region != devices::JfetRegion::saturation || d.v_ctrl_v > 0.0;
    else
      s.edge = s.edge || d.v_main_v < qs[i].bjt.vce_sat_v || d.i_main_a < 0.01 * ic0[i];
  }
  return s;
}

// Mid-band as Performance defines it: every coupling and bypass capacitor a short and every
// device capacitance open, i.e. the stage with its capacitors held at their DC voltages (AC
// shorts: `held`), solved at 0 Hz. Gain, input impedance (after the source resistance) and
// output impedance seen by the load (from the open-circuit and loaded outputs) come from it.
// (Read instead on the real circuit at some frequency inside the band, the coupling
// capacitors' reactance adds to a follower's few-ohm output impedance, and a follower's or a
// low-gain common source's response rises above mid-band toward its upper corner.)
// The flat divider of the input coupling capacitor (the capacitor on "in") against the input's
// capacitance (topology.hpp, input_divider), read from the held circuit `h` at 10 Hz, where
// the coupling is a short and the devices' capacitances (Miller or bootstrap included) draw
// their current: the input admittance's imaginary part over omega, with RSIG set to the input
// resistance for the reading, so that the current through it is well conditioned.
double input_divider_of(const Circuit& net, Circuit h, const OperatingPoint& hop, double zin_ohm) {
  const auto in = net.find_net(std::string(kNetIn));
  if (!in || !(zin_ohm > 0)) return 1.0;
  double c_couple = 0;
  for (const auto& el : net.elements())
    if (el.c.kind == ElementKind::capacitor && !is_bench_role(el.c.role) &&
        (el.c.pins[0] == *in || el.c.pins[1] == *in))
      c_couple = el.c.value;
  if (!(c_couple > 0)) return 1.0;
  const double rsig = h.find("RSIG")->c.value, r_probe = std::min(zin_ohm, 1e9);
  h.set_value("RSIG", r_probe);
  const double w = 2 * std::numbers::pi * 10.0;
  const auto v = circuit::solve_ac(h, hop, w / (2 * std::numbers::pi));
  const auto hin = *h.find_net(std::string(kNetIn)), hsig = *h.find_net(std::string(kNetSignal));
  const std::complex<double> y = (v[hsig] - v[hin]) / r_probe / v[hin];
  return input_divider(rsig, zin_ohm, y.imag() / w, c_couple);
}

struct MidBand {
  double gain = 0, zin_ohm = 0, zout_ohm = 0;
  OperatingPoint held;  // the circuit's with its capacitors held: where the sweeps start
};

MidBand mid_band(const Circuit& net, const OperatingPoint& op, const circuit::SolverOptions& so, double load_ohm) {
  Circuit h = circuit::with_capacitors_held(net, op, is_load_capacitance);
  const OperatingPoint hop = circuit::solve_dc(h, so);
  const auto in = *h.find_net(std::string(kNetIn)), sig = *h.find_net(std::string(kNetSignal));
  const auto out = *h.find_net(std::string(kNetOut));
  const auto vs = circuit::solve_ac(h, hop, 0.0);
  MidBand m;
  m.gain = vs[out].real();
  const double rsig = h.find("RSIG")->c.value;
  m.zin_ohm = std::abs(vs[in] / ((vs[sig] - vs[in]) / rsig));
  // No DC flows in RL (the held output capacitor carries the output's DC), so the operating
  // point stands with the load removed.
  h.set_value("RL", 1e12);
  const auto vo = circuit::solve_ac(h, hop, 0.0);
  m.zout_ohm = std::abs(load_ohm * (vo[out] / vs[out] - 1.0));
  h.set_value("RL", load_ohm);
  m.gain *= input_divider_of(net, h, hop, std::abs(vs[in]) > 0 ? m.zin_ohm : 0.0);
  m.held = hop;
  return m;
}

// The -3 dB points relative to the mid-band gain, found outward from the part of the swept
// response closest to it; 0 where the response does not fall that far within 0.01 Hz..10 GHz.
struct Band {
  double f_low_hz = 0, f_high_hz = 0;
};

Band band_edges(const Circuit& net, const OperatingPoint& op, double mid) {
  constexpr double kLo = 0.01, kHi = 1e10;
  const auto out = *net.find_net(std::string(kNetOut));
  auto mag = [&](double f) { return std::abs(circuit::solve_ac(net, op, f)[out]); };
  const double target = mid / std::numbers::sqrt2;
  const std::vector<double> fs = circuit::log_sweep(kLo, kHi, 10);
  std::vector<double> m(fs.size());
  std::size_t centre = 0;
  for (std::size_t i = 0; i < fs.size(); ++i) {
    m[i] = mag(fs[i]);
    if (std::abs(std::log(m[i] / mid)) < std::abs(std::log(m[centre] / mid))) centre = i;
  }
  auto bisect = [&](double inside, double outside) {
    for (int i = 0; i < 40; ++i) {
      const double f = std::sqrt(inside * outside);
      (mag(f) >= target ? inside : outside) = f;
    }
    return std::sqrt(inside * outside);
  };
  Band b;
  for (std::size_t i = centre; i-- > 0;) {
    if (m[i] < target) {
      b.f_low_hz = bisect(fs[i + 1], fs[i]);
      break;
    }
  }
  for (std::size_t i = centre + 1; i < fs.size(); ++i) {
    if (m[i] < target) {
      b.f_high_hz = bisect(fs[i - 1], fs[i]);
      break;
    }
  }
  return b;
}

// The bias figures from the operating point: validity and the linear region for every device,
// the first device's currents and voltages; returns each device's bias current (|IC| or |ID|;
// an op-amp's supply current).
std::vector<double> read_bias(const Circuit& net, const OperatingPoint& op, std::span<const Transistor> qs,
                              Performance& p) {
  const std::vector<detail::OpampModelAt> models = detail::opamp_models(net);
  std::vector<const Element*> transistors;
  for (const auto& el : net.elements())
    if (el.c.kind == ElementKind::jfet || el.c.kind == ElementKind::bjt) transistors.push_back(&el);
  p.valid = true;
  p.active = true;
  std::vector<double> ic0;
  std::size_t dev = 0, amp = 0;
  for (std::size_t i = 0; i < qs.size(); ++i) {
    if (is_opamp(qs[i])) {
      const detail::OpampModelAt& m = models.at(amp++);
      ic0.push_back(qs[i].opamp.iq_a);
      if (opamp_edge(op, m, qs[i].opamp)) {
        p.active = false;
        if (p.problem.empty()) p.problem = m.designator + ": output clamped or inputs outside their range";
      }
      if (i == 0) {
        p.bias_current_a = qs[i].opamp.iq_a;
        p.v_out = op.node_v[m.out];
        p.v_in = op.node_v[m.plus];
        p.v_common = op.node_v[m.minus];
      }
      continue;
    }
    const circuit::DeviceOp& di = op.devices.at(dev);
    const Element* el = transistors.at(dev++);
    ic0.push_back(std::abs(di.i_main_a));
    if (!(std::abs(di.i_main_a) > 1e-9)) {
      p.valid = false;
      p.problem = qs.size() == 1 ? std::string("cut off") : di.designator + " cut off";
    }
    if (devices::is_jfet(qs[i].kind))
      p.active = p.active && di.jfet_region == devices::JfetRegion::saturation && di.v_ctrl_v <= 0.0;
    else
      p.active = p.active && di.v_main_v > qs[i].bjt.vce_sat_v;
    if (i == 0) {
      p.bias_current_a = std::abs(di.i_main_a);
      p.v_out = op.node_v[el->c.pins[0]];
      p.v_in = op.node_v[el->c.pins[1]];
      p.v_common = op.node_v[el->c.pins[2]];
    }
  }
  p.supply_current_a = std::abs(op.source_i.front());
  return ic0;
}

// The loss at each band edge asked for, relative to the mid-band gain.
void band_losses(const Circuit& net, const OperatingPoint& op, const Conditions& c, double gain, Performance& p) {
  const auto out = *net.find_net(std::string(kNetOut));
  const double mid = std::abs(gain);
  if (c.band_lo_hz > 0)
    p.loss_lo_db = std::max(0.0, -20.0 * std::log10(std::abs(circuit::solve_ac(net, op, c.band_lo_hz)[out]) / mid));
  if (c.band_hi_hz > 0)
    p.loss_hi_db = std::max(0.0, -20.0 * std::log10(std::abs(circuit::solve_ac(net, op, c.band_hi_hz)[out]) / mid));
}

// The stage with its capacitors held, driven quasi-statically: what the swing and distortion
// sweeps step through.
struct Probe {
  Circuit h;
  std::span<const Transistor> qs;
  const std::vector<double>& ic0;
  const circuit::SolverOptions& so;
  double out0 = 0;      // the output at rest
  OperatingPoint last;  // the last point solved (where the next solve starts)
  SweepPoint at(double x) { return sweep_at(h, qs, x, ic0, so, last); }
};

// How far the output moves with the input of one sign before a device leaves its linear region.
double excursion_toward(Probe& pr, double sgn, double x_max) {
  double lo = 0, hi = x_max / 256;
  SweepPoint at_hi = pr.at(sgn * hi);
  while (!at_hi.edge && hi < x_max) {
    lo = hi;
    hi *= 2;
    at_hi = pr.at(sgn * hi);
  }
  for (int i = 0; i < 40 && at_hi.edge; ++i) {
    const double mid = 0.5 * (lo + hi);
    (pr.at(sgn * mid).edge ? hi : lo) = mid;
  }
  return std::abs(pr.at(sgn * lo).out_v - pr.out0);
}

// Swing: step the input each way until the device leaves its linear region.
void measure_swing(Probe& pr, const Conditions& c, double k, Performance& p) {
  const double x_max = 4.0 * c.supply_v / std::max(0.05, std::abs(p.gain));
  double excursion[2] = {0, 0};  // by the input's sign
  for (int side = 0; side < 2; ++side) excursion[side] = excursion_toward(pr, side == 0 ? 1.0 : -1.0, x_max);
  // "Up" in the N frame is the drain or collector (or follower output) rising toward the
  // positive rail; the input's sign that moves the output up depends on the gain's sign.
  const bool inverting = p.gain < 0;
  const double out_up_actual = inverting ? excursion[1] : excursion[0];
  const double out_down_actual = inverting ? excursion[0] : excursion[1];
  p.swing_up_v = k > 0 ? out_up_actual : out_down_actual;
  p.swing_down_v = k > 0 ? out_down_actual : out_up_actual;
  p.swing_peak_v = std::min(p.swing_up_v, p.swing_down_v);
  p.clip_peak_v = p.swing_peak_v;
}

using Harmonics = std::array<double, 10>;

// Distortion from the quasi-static transfer: a cosine at the input, Fourier coefficients of
// the output over n points, harmonics 1 to 9.
Harmonics harmonics(Probe& pr, double amp, int n) {
  std::array<double, 10> ak{}, bk{}, mag{};
  for (int i = 0; i < n; ++i) {
    const double th = 2 * std::numbers::pi * i / n;
    const double y = pr.at(amp * std::cos(th)).out_v - pr.out0;
    for (int m = 1; m < 10; ++m) {
      ak[m] += 2.0 / n * y * std::cos(m * th);
      bk[m] += 2.0 / n * y * std::sin(m * th);
    }
  }
  for (int m = 1; m < 10; ++m) mag[m] = std::hypot(ak[m], bk[m]);
  return mag;
}

double thd_of(const Harmonics& mag) {
  double sum = 0;
  for (int m = 2; m < 10; ++m) sum += mag[m] * mag[m];
  return std::sqrt(sum) / mag[1];
}

// HD2, HD3 and THD at the requested level: the amplitude set so the fundamental equals
// hd2_peak_v. Returns the harmonics there.
Harmonics distortion_at_level(Probe& pr, const Conditions& c, Performance& p) {
  double amp = c.hd2_peak_v / std::abs(p.gain);
  Harmonics mag = harmonics(pr, amp, 64);
  amp *= c.hd2_peak_v / mag[1];
  mag = harmonics(pr, amp, 64);
  p.hd2 = mag[2] / mag[1];
  p.hd3 = mag[3] / mag[1];
  p.thd = thd_of(mag);
  return mag;
}

// The rated level: where THD reaches the bound, below clipping (bisection on the input in
// ratio, from the level HD2 and HD3 alone would give, 32 points a sweep).
void rated_peak(Probe& pr, const Conditions& c, const Harmonics& mag, Performance& p) {
  const double amp_clip = p.clip_peak_v / std::abs(p.gain);
  const auto at_clip = harmonics(pr, amp_clip, 32);
  if (!(thd_of(at_clip) > c.max_thd)) return;
  Transfer guess;
  const double level = mag[1];
  guess.o[1] = 1.0;  // a series with these HD2 and HD3 per level, for the first guess
  guess.o[2] = 2.0 * p.hd2 / level;
  guess.o[3] = 4.0 * p.hd3 / (level * level);
  double hi = std::min(amp_clip, guess.level_for(c.max_thd, p.clip_peak_v) / std::abs(p.gain));
  auto over = [&](double a) { return thd_of(harmonics(pr, a, 32)) > c.max_thd; };
  while (!over(hi) && hi < amp_clip) hi = std::min(amp_clip, 2 * hi);
  double lo = 0.5 * hi;
  for (int i = 0; i < 60 && over(lo); ++i) {
    hi = lo;
    lo *= 0.5;
  }
  for (int i = 0; i < 12; ++i) {
    const double mid = std::sqrt(lo * hi);
    (over(mid) ? hi : lo) = mid;
  }
  p.swing_peak_v = std::min(p.clip_peak_v, harmonics(pr, lo, 32)[1]);
}

}  // namespace

Performance evaluate_circuit(const Circuit& net, std::span<const Transistor> qs, const Conditions& c, Detail detail,
                             OperatingPoint* op_out) {
  Performance p;
  if (qs.empty()) throw InputError("evaluate_circuit: no transistor given");
  circuit::SolverOptions so;
  so.celsius = c.celsius;
  const OperatingPoint op = circuit::solve_dc(net, so);
  const auto transistors =
      static_cast<std::size_t>(std::count_if(qs.begin(), qs.end(), [](const Transistor& q) { return !is_opamp(q); }));
  const std::size_t opamps = detail::opamp_models(net).size();
  if (op.devices.size() != transistors || opamps != qs.size() - transistors)
    throw InputError(fmt::format("evaluate_circuit: {} devices given for {} transistors and {} op-amps in the circuit",
                                 qs.size(), op.devices.size(), opamps));
  const double k = is_opamp(qs.front()) ? 1.0 : devices::polarity(qs.front().kind);
  const std::vector<double> ic0 = read_bias(net, op, qs, p);

  const MidBand mb = mid_band(net, op, so, c.load_ohm);
  p.gain = mb.gain;
  p.zin_ohm = mb.zin_ohm;
  p.zout_ohm = mb.zout_ohm;
  if (detail == Detail::full) {  // as in the closed form: the corners' searches cost the most
    const Band band = band_edges(net, op, std::abs(mb.gain));
    p.f_low_hz = band.f_low_hz;
    p.f_high_hz = band.f_high_hz;
  }
  band_losses(net, op, c, mb.gain, p);
  Probe pr{circuit::with_capacitors_held(net, op, is_load_capacitance),
           qs,
           ic0,
           so,
           op.v(net, std::string(kNetOut)),
           mb.held};
  measure_swing(pr, c, k, p);
  if (detail == Detail::full && p.swing_peak_v > 0) {
    const Harmonics mag = distortion_at_level(pr, c, p);
    if (c.max_thd > 0) rated_peak(pr, c, mag, p);
  }

  if (detail == Detail::full)
    p.noise_v_rthz = circuit::noise(net, op, std::string(kNetOut), c.noise_f_hz, c.celsius).input_v_rthz;
  if (op_out) *op_out = op;
  return p;
}

std::pair<double, double> band_of_circuit(const Circuit& net, const Conditions& c) {
  circuit::SolverOptions so;
  so.celsius = c.celsius;
  const OperatingPoint op = circuit::solve_dc(net, so);
  const MidBand mb = mid_band(net, op, so, c.load_ohm);
  const Band b = band_edges(net, op, std::abs(mb.gain));
  return {b.f_low_hz, b.f_high_hz};
}

Performance evaluate_exact(const Topology& t, const Values& v, const Transistor& q, const Conditions& c,
                           Detail detail) {
  const Circuit net = t.netlist(v, q, c);
  OperatingPoint op;
  const std::vector<Transistor> qs = transistors_of(q);
  Performance p = evaluate_circuit(net, qs, c, detail, &op);
  if (q.paired && op.devices.size() > 1) {  // Q2: its current, its VCE and its collector
    p.q2_current_a = std::abs(op.devices[1].i_main_a);
    p.q2_v_main = std::abs(op.devices[1].v_main_v);
    int seen = 0;
    for (const auto& el : net.elements())
      if ((el.c.kind == ElementKind::jfet || el.c.kind == ElementKind::bjt) && seen++ == 1)
        p.v_out2 = op.node_v[el.c.pins[0]];
  }
  if (detail == Detail::full) {
    const auto roles = t.roles();
    for (const auto& el : net.elements()) {
      const auto& e = el.c;
      const std::size_t r = t.role_index(e.role);
      if (r >= roles.size()) continue;
      const double dv = op.node_v[e.pins[0]] - op.node_v[e.pins[1]];
      Stress s;
      s.role = r;
      if (e.kind == ElementKind::resistor) s.power_w = dv * dv / e.value;
      if (e.kind == ElementKind::capacitor) {
        // The netlist's own nets (on the user's rail), as the fast evaluator names them.
        s.dc_v = std::abs(dv);
        const auto end = [&](std::size_t pin) -> std::string_view {
          const std::string& n = net.net_name(e.pins[pin]);
          for (std::string_view known : {std::string_view("0"), kNetSupply, kNetIn, kNetOut, std::string_view("x"),
                                         t.node_names()[0], t.node_names()[1], t.node_names()[2]})
            if (n == known) return known;
          for (const InnerNet& inner : t.inner_nets())
            if (n == inner.name) return inner.name;
          return roles[r].pos_net;  // not reached for a topology's own netlist
        };
        s.plus_net = end(dv >= 0 ? 0 : 1);
        s.minus_net = end(dv >= 0 ? 1 : 0);
      }
      p.stress.push_back(s);
    }
  }
  return p;
}

}  // namespace shelfstage::stages
