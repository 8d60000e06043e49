// The worst case as a promise, checked from outside with ngspice (Debian package ngspice): the
// candidates listed for varied requests on the demo shelf are built as netlists with every
// transistor at pieces the datasheet allows (both diagonal pieces of a JFET's IDSS-VP box, its
// pieces at each VP limit, a BJT's hFE ends; the whole box's corners for --spread box), the
// parts at nominal, all at one end of their tolerance, all at the other and at seeded mixes of
// ends, and the supply at both ends. Every figure ngspice gives (mid-band gain, -3 dB corners,
// input and output impedance, bias and supply current, node voltages) must lie in the range
// the design claims, and every electrolytic must have V(+) >= V(-) at every one of those
// builds (its + lead as the design names it: plus_node).
#include <doctest/doctest.h>

#include <algorithm>
#include <cmath>
#include <cstdlib>
#include <fmt/format.h>
#include <fstream>
#include <map>
#include <random>
#include <sstream>
#include <string>
#include <vector>

#include "shelfstage/circuit/solver.hpp"
#include "shelfstage/circuit/spice.hpp"
#include "shelfstage/stages/chain.hpp"
#include "shelfstage/store/csv.hpp"
#include "shelfstage/synth/design.hpp"
#include "demo_shelf.hpp"
#include "support/ngspice.hpp"

namespace shelfstage::test {

namespace {

/// The pieces a practitioner would try for one stage: the datasheet's limits.
std::vector<devices::PieceFigures> limit_pieces(const devices::DeviceSpread& s) {
  std::vector<devices::PieceFigures> out;
  if (devices::is_jfet(s.record().kind)) {
    for (const auto& p : s.diagonal_pieces()) out.push_back(p);
    // Pieces at each VP limit that the model allows (for the box, its anti-diagonal corners).
    for (const auto& c : s.corners())
      if (std::none_of(out.begin(), out.end(), [&](const devices::PieceFigures& o) {
            return std::abs(o.idss_a - c.idss_a) < 1e-9 && std::abs(o.vp_abs_v - c.vp_abs_v) < 1e-9;
          }))
        out.push_back(c);
  } else if (s.record().kind == devices::DeviceKind::opamp) {
    out = s.corners();  // every limit the datasheet states, each way (devices/opamp.hpp)
  } else {
    const devices::Range& h = s.record().bjt.hfe;
    out.push_back({0, 0, std::min(h.min, h.max), "hFE min"});
    out.push_back({0, 0, std::max(h.min, h.max), "hFE max"});
  }
  out.push_back(s.nominal());
  return out;
}

/// The same for a stage of one or two devices: every limit piece of Q1 with every one of Q2.
std::vector<synth::StagePiece> limit_pieces(const synth::StageSpread& s) {
  std::vector<synth::StagePiece> out;
  for (const auto& a : limit_pieces(s.first())) {
    if (!s.second()) {
      out.push_back({a, std::nullopt, a.tag});
      continue;
    }
    for (const auto& b : limit_pieces(*s.second())) out.push_back({a, b, "Q1 " + a.tag + ", Q2 " + b.tag});
  }
  return out;
}

/// One build of a listed design, ready to simulate.
struct Build {
  std::string label;
  std::vector<stages::ChainStage> stages;
  stages::Conditions cond;
};

/// What ngspice says of a build.
struct Sim {
  double gain = 0, f_low = 0, f_high = 0, zin = 0, zout = 0, supply_a = 0, bias_a = 0;
  double v_in = 0, v_common = 0, v_out = 0;
  double thd = 0;                    ///< at the requested swing's peak (0: no swing requested)
  std::map<std::string, double> dc;  ///< V(plus_node) - V(minus_node) by designator
};

circuit::Circuit netlist_of(const synth::Candidate& c, const Build& b) {
  if (c.is_chain()) return stages::chain_netlist(b.stages, b.cond);
  return b.stages.front().topology->netlist(b.stages.front().values, b.stages.front().q, b.cond);
}

/// A build's netlist for ngspice (operating point, then the AC figures) and what reading its
/// output needs.
struct Probe {
  std::string netlist;
  std::string pins[3];  ///< gate/base/+ input, source/emitter/- input, drain/collector/output
  bool transistor = false;
  std::map<std::string, std::pair<std::string, std::string>> caps;  ///< polarised: + and - nodes
};

Probe probe_of(const synth::Candidate& c, const Build& b, double f_mid, double f_zin) {
  const circuit::Circuit net = netlist_of(c, b);
  // The first device: a transistor, or an op-amp's model (its elements U1.VOS, U1.G1 and
  // U1.ROUT name its + input, - input and output: docs/physics.md).
  const circuit::Element* q = nullptr;
  const circuit::Element* vos = nullptr;
  for (const auto& el : net.elements()) {
    if (q || vos) break;
    if (el.c.kind == circuit::ElementKind::jfet || el.c.kind == circuit::ElementKind::bjt) q = &el;
    if (el.c.role == stages::kRoleDeviceModel && el.c.designator.ends_with(".VOS")) vos = &el;
  }
  REQUIRE((q != nullptr || vos != nullptr));
  Probe p;
  p.transistor = q != nullptr;
  // The bias current through a 0 V source in series with the drain or collector: ngspice 39's
  // own reading of a transistor's collector current, @Q[ic], can disagree with the circuit it
  // solved. A PNP follower's read 496 uA where the emitter resistor carried 479 uA and the base
  // gave 2 uA (its Early term, VAF 90 V, in play: without it the two agree); the series source
  // reads the 478 uA that Kirchhoff's current law leaves.
  circuit::Circuit probed;
  if (q) {
    const std::string main = net.net_name(q->c.pins[0]), des = q->c.designator;
    circuit::Circuit::Carry carry;
    carry.net = [&](const circuit::Component& e, const std::string& n) {
      return e.designator == des && n == main ? std::string("iq_probe") : n;
    };
    probed.append(net, carry);
    probed.vsource("VIQ", "bias current probe", main, "iq_probe", 0.0);
  }
  std::vector<std::string> lines = {".control", "op"};
  auto v_at = [&](std::size_t net_index) {
    const std::string n = circuit::spice_net(net, net_index);
    return n == "0" ? std::string("0") : "v(" + n + ")";
  };
  if (q) {
    p.pins[0] = v_at(q->c.pins[1]);
    p.pins[1] = v_at(q->c.pins[2]);
    p.pins[2] = v_at(q->c.pins[0]);
  } else {
    const std::string u = vos->c.designator.substr(0, vos->c.designator.size() - 4);
    p.pins[0] = v_at(vos->c.pins[1]);
    p.pins[1] = v_at(net.find(u + ".G1")->c.pins[3]);
    p.pins[2] = v_at(net.find(u + ".ROUT")->c.pins[1]);
  }
  std::string print = "print";
  for (const auto& pin : p.pins)
    if (pin != "0") print += " " + pin;
  for (const auto& rp : c.parts)
    if (rp.kind == 'C' && rp.polarised) {
      REQUIRE_MESSAGE(!rp.plus_node.empty(), rp.designator, " has no + lead named");
      p.caps[rp.designator] = {rp.plus_node, rp.minus_node};
      for (const auto& n : {rp.plus_node, rp.minus_node})
        if (n != "0") print += " v(" + n + ")";
    }
  lines.push_back(print);
  if (q) {
    lines.push_back(fmt::format("let iq = abs(i({}))", circuit::spice_name(probed.find("VIQ")->c)));
    lines.push_back("print iq");
  }
  lines.push_back("let supply_current = abs(i(vdd))");
  lines.push_back("print supply_current");
  lines.push_back("ac dec 40 0.01 1e10");
  lines.push_back(fmt::format("meas ac gmid find vm(out) at={:.6g}", f_mid));
  lines.push_back(fmt::format("meas ac gre find vr(out) at={:.6g}", f_mid));
  lines.push_back(fmt::format("meas ac gdb find vdb(out) at={:.6g}", f_mid));
  // Zin where neither the coupling capacitor nor the input capacitance counts (the figure is
  // the mid-band resistance: capacitances open, coupling capacitors shorts).
  lines.push_back(fmt::format("meas ac vinm find vm(in) at={:.6g}", f_zin));
  lines.push_back("let isig = mag(i(vsig))");
  lines.push_back(fmt::format("meas ac isigm find isig at={:.6g}", f_zin));
  lines.push_back("let edge_db = gdb - 3.0103");
  lines.push_back("meas ac f_low when vdb(out)=$&edge_db rise=1");
  lines.push_back("meas ac f_high when vdb(out)=$&edge_db fall=last");
  lines.push_back("alter rl = 1e12");
  lines.push_back(fmt::format("ac lin 3 {:.6g} {:.6g}", 0.99 * f_mid, 1.01 * f_mid));
  lines.push_back(fmt::format("meas ac vopen find vm(out) at={:.6g}", f_mid));
  lines.push_back(".endc");
  circuit::SpiceOptions o;
  o.title = c.topology_name() + " " + b.label;
  o.celsius = b.cond.celsius;
  o.analyses = lines;
  p.netlist = circuit::to_spice(q ? probed : net, o);
  return p;
}

/// What ngspice says of a build, from the output of its probe.
Sim read_probe(const Probe& p, const Build& b, const SpiceRun& r) {
  INFO(r.output);
  Sim s;
  s.gain = (r.get("gre") < 0 ? -1.0 : 1.0) * r.get("gmid");
  s.f_low = r.find("f_low").value_or(0.0);
  s.f_high = r.find("f_high").value_or(0.0);
  s.zin = r.get("vinm") / r.get("isigm");
  s.zout = b.cond.load_ohm * (r.get("vopen") / r.get("gmid") - 1.0);
  s.supply_a = r.get("supply_current");
  s.bias_a = p.transistor ? r.get("iq") : -1.0;  // an op-amp's is its record's supply current: not simulated
  auto v = [&](const std::string& pin) { return pin == "0" ? 0.0 : r.get(pin); };
  s.v_in = v(p.pins[0]);
  s.v_common = v(p.pins[1]);
  s.v_out = v(p.pins[2]);
  for (const auto& [des, nodes] : p.caps)
    s.dc[des] = v(nodes.first == "0" ? "0" : "v(" + nodes.first + ")") -
                v(nodes.second == "0" ? "0" : "v(" + nodes.second + ")");
  return s;
}

/// THD (harmonics 2 to 9 over the fundamental, as the trade defines it) of a build at the
/// output peak `level`: a transient at f_hz, six periods of 1000 steps, `fourier` over the
/// last. The coupling and bypass capacitors are held at the DC they charged to (sources of
/// that voltage, from shelfstage's operating point of the build): the figure is a mid-band
/// one, and a transient long enough for 2 Hz coupling corners to settle would take minutes.
/// The input is sized from the build's own gain (ngspice's, from the probe). This is the
/// netlist; read_thd() reads its output.
std::string thd_netlist(const synth::Candidate& c, const Build& b, double gain, double level, double f_hz) {
  const circuit::Circuit net = netlist_of(c, b);
  circuit::SolverOptions so;
  so.celsius = b.cond.celsius;
  // The capacitors that act above the band stay capacitors: the load's (a cable), a
  // compensation capacitor, an op-amp model's own (the amplifier's poles).
  auto stays = [](const circuit::Component& e) { return stages::open_at_mid_band(e.role); };
  circuit::Circuit held = circuit::with_capacitors_held(net, circuit::solve_dc(net, so), stays);
  for (const auto& el : net.elements())
    if (el.c.kind == circuit::ElementKind::capacitor && stays(el.c))
      held.copy_element(net, el.c, el.c.designator, {net.net_name(el.c.pins[0]), net.net_name(el.c.pins[1])});
  circuit::SpiceOptions o;
  o.title = c.topology_name() + " " + b.label + " (THD)";
  o.celsius = b.cond.celsius;
  const double period = 1.0 / f_hz;
  o.analyses = {".control", "option reltol=1e-5",
                fmt::format("tran {0:.6g} {1:.6g} 0 {0:.6g}", period / 1000, 6 * period),
                fmt::format("fourier {:.6g} v(out)", f_hz), ".endc"};
  o.signal_transient = fmt::format("SIN(0 {:.6g} {:.6g})", level / std::abs(gain), f_hz);
  return circuit::to_spice(held, o);
}

double read_thd(const SpiceRun& r) {
  const auto it = r.fourier.find("v(out)");
  REQUIRE_MESSAGE((it != r.fourier.end() && it->second.size() >= 4), "no Fourier table:\n", r.output);
  const std::vector<double>& h = it->second;
  double sum = 0;
  for (std::size_t k = 2; k < h.size(); ++k) sum += h[k] * h[k];
  return std::sqrt(sum) / h[1];
}

/// The builds a practitioner checks: every stage at a limit piece (all stages at the same
/// kind of limit at once, for a chain), parts at nominal, at either end of their tolerance
/// and at seeded mixes of ends, the supply at both ends.
std::vector<Build> builds_of(const synth::Candidate& c, const synth::Spec& spec) {
  const std::vector<synth::Candidate> stages = c.is_chain() ? c.stages : std::vector<synth::Candidate>{c};
  std::vector<std::vector<synth::StagePiece>> pieces;
  std::vector<synth::StageSpread> spreads;
  for (const auto& s : stages) {
    spreads.push_back(synth::spread_of(s));
    pieces.push_back(limit_pieces(spreads.back()));
  }
  std::size_t piece_sets = 0;
  for (const auto& p : pieces) piece_sets = std::max(piece_sets, p.size());
  std::mt19937 rng(7);
  std::vector<Build> out;
  for (std::size_t ps = 0; ps < piece_sets; ++ps) {
    // Part settings: 0 nominal, 1 all low, 2 all high, 3.. seeded mixes of ends; the supply
    // at both ends; the temperature at both ends of a range.
    std::vector<double> temps = {spec.temp_nominal_c()};
    if (spec.temp_c) temps = {spec.temp_c->first, spec.temp_c->second};
    for (int parts = 0; parts < 5; ++parts) {
      for (double supply : {spec.supply_lo_v, spec.supply_hi_v})
        for (double temp : temps) {
          Build b;
          b.cond = c.conditions;
          b.cond.supply_v = supply;
          b.cond.celsius = temp;
          b.cond.negative_rail = spec.negative_rail;
          std::string label = fmt::format("supply {:g} V, {:g} °C, parts {}", supply, temp,
                                          parts == 0   ? "nominal"
                                          : parts == 1 ? "all low"
                                          : parts == 2 ? "all high"
                                                       : "mixed");
          for (std::size_t k = 0; k < stages.size(); ++k) {
            const synth::Candidate& s = stages[k];
            const auto& f = pieces[k][std::min(ps, pieces[k].size() - 1)];
            stages::ChainStage st = synth::chain_stage(s);
            st.q = synth::make_transistor(spreads[k], f, temp);
            for (const auto& rp : s.parts) {
              const std::size_t i = s.topology->role_index(rp.role);
              int way = parts == 1 ? -1 : parts == 2 ? 1 : 0;
              if (parts >= 3) way = static_cast<int>(rng() % 2) * 2 - 1;
              if (way != 0) st.values[i] = way > 0 ? rp.combo.hi : rp.combo.lo;
            }
            b.stages.push_back(st);
            label += fmt::format("; stage {} {}", k + 1, f.tag);
          }
          b.label = label;
          out.push_back(std::move(b));
        }
    }
  }
  return out;
}

/// CHECKs lo <= v <= hi with a relative slack (the fast evaluator's agreement with ngspice)
/// and an absolute floor.
void check_in(const std::string& what, double v, const synth::Range& r, double rel, double floor,
              const std::string& where) {
  REQUIRE_MESSAGE(!r.empty, what, ": no range claimed");
  const double lo = r.min - rel * std::abs(r.min) - floor, hi = r.max + rel * std::abs(r.max) + floor;
  CHECK_MESSAGE((v >= lo && v <= hi),
                fmt::format("{} = {:.6g} outside the claimed {:.6g} .. {:.6g} ({})", what, v, r.min, r.max, where));
}

struct Request {
  std::string label;
  synth::Spec spec;
};

synth::Spec base(double gain, double load, double supply_lo, double supply_hi, double zin) {
  synth::Spec s;
  s.gain = gain;
  s.load_ohm = load;
  s.supply_lo_v = supply_lo;
  s.supply_hi_v = supply_hi;
  s.zin_min_ohm = zin;
  s.top = 2;
  s.mc_samples = 0;
  return s;
}

std::vector<Request> requests() {
  std::vector<Request> out;
  {
    synth::Spec s = base(0.9, 10e3, 7, 9.6, 1e6);  // a high-impedance buffer from a 9 V battery
    s.gain_tol = 0.2;
    s.band_hz = std::pair{20.0, 20e3};
    out.push_back({"buffer from a 9 V battery", s});
  }
  {
    synth::Spec s = base(10, 10e3, 12, 12, 100e3);  // a sensor preamp from a 10k source
    s.source_ohm = 10e3;
    s.band_hz = std::pair{10.0, 10e3};
    s.swing_vpp = 2;
    out.push_back({"sensor preamp", s});
  }
  {
    synth::Spec s = base(3, 600, 15, 15, 47e3);  // a 600 ohm line driver
    s.swing_vpp = 4;
    out.push_back({"600 ohm line driver", s});
  }
  {
    synth::Spec s = base(4, 10e3, 9, 9, 47e3);  // P-channel and PNP only, on a positive rail
    s.devices = {"SJ-P31", "SQ-510"};
    s.band_hz = std::pair{20.0, 20e3};
    s.stages_max = 1;
    out.push_back({"P-type shelf, +9 V", s});
  }
  {
    synth::Spec s = base(4, 10e3, 9, 9, 47e3);  // the same on a negative rail
    s.devices = {"SJ-P31", "SQ-510"};
    s.negative_rail = true;
    s.stages_max = 1;
    out.push_back({"P-type shelf, -9 V", s});
  }
  {
    synth::Spec s = base(2, 10e3, 12, 12, 1e6);  // JFETs over the whole box
    s.topologies = {"jfet-cs-divider", "jfet-follower", "jfet-cs-self"};
    s.spread = devices::SpreadModel::box;
    s.gain_tol = 0.3;
    s.stages_max = 1;
    out.push_back({"JFET stage, whole-box spread", s});
  }
  {
    synth::Spec s = base(100, 10e3, 9, 9, 1e6);  // a chain: gain 100 from a 1 MOhm input
    s.stages_min = 2;
    s.top = 1;
    out.push_back({"gain-100 chain", s});
  }
  {
    synth::Spec s = base(3, 220, 4.5, 5.5, 10e3);  // a 5 V stage into 220 ohm, over 0..50 C
    s.temp_c = std::pair{0.0, 50.0};
    s.swing_vpp = 0.5;
    s.max_thd = 0.03;  // 1 % is out of reach for a single stage into 220 ohm at 4.5 V
    s.top = 1;
    out.push_back({"5 V into 220 ohm, 0..50 C", s});
  }
  {
    // A follower into a gain stage into 150 ohm with a swing: a buffer's pool takes stages
    // ranked by distortion as well as by score (chain.cpp), and the best chain on the demo
    // shelf puts a PNP follower in front of an NPN stage.
    synth::Spec s = base(5, 150, 12, 12, 100e3);
    s.devices = {"SJ-101", "SJ-202", "SJ-P31", "SQ-410", "SQ-420", "SQ-510"};
    s.band_hz = std::pair{20.0, 20e3};
    s.swing_vpp = 1.0;
    s.max_thd = 0.02;
    s.stages_min = 2;
    s.top = 1;
    out.push_back({"follower-led chain into 150 ohm", s});
  }
  {
    synth::Spec s = base(30, 10e3, 9, 9, 470e3);  // a chain from P-type parts only, +9 V
    s.devices = {"SJ-P31", "SQ-510"};
    s.stages_min = 2;
    s.band_hz = std::pair{20.0, 20e3};
    s.top = 1;
    out.push_back({"P-type chain, +9 V", s});
  }
  {
    synth::Spec s = base(30, 10e3, 9, 9, 470e3);  // the same on a negative rail
    s.devices = {"SJ-P31", "SQ-510"};
    s.negative_rail = true;
    s.stages_min = 2;
    s.top = 1;
    out.push_back({"P-type chain, -9 V", s});
  }
  {
    synth::Spec s = base(20, 2.2e3, 12, 12, 1e6);  // N and P types free to mix in a chain
    s.devices = {"SJ-101", "SQ-510", "SQ-410"};
    s.stages_min = 2;
    s.top = 2;
    out.push_back({"chain of N and P types", s});
  }
  {
    // A 20 MOhm buffer fed from 100k on a negative 9 V rail: the input's capacitive divider
    // counts at this impedance (docs/physics.md).
    synth::Spec s = base(0.8, 4.7e3, 9, 9, 20e6);
    s.source_ohm = 100e3;
    s.negative_rail = true;
    s.gain_tol = 0.25;
    s.stages_max = 1;
    out.push_back({"20 MOhm buffer from 100k, -9 V", s});
  }
  {
    // Collector-to-base feedback only, with a band and a swing: RF, RB and RIN at their
    // tolerance ends move both the bias and the ratio.
    synth::Spec s = base(10, 10e3, 12, 12, 10e3);
    s.topologies = {"bjt-ce-shunt"};
    s.band_hz = std::pair{20.0, 20e3};
    s.swing_vpp = 2;
    s.gain_tol = 0.2;
    s.stages_max = 1;
    out.push_back({"shunt-feedback stage, 12 V", s});
  }
  {
    // The two-transistor pair alone: both devices at their limit pieces, every pairing.
    synth::Spec s = base(100, 10e3, 8.4, 9.6, 100e3);
    s.topologies = {"bjt-fb-pair"};
    s.band_hz = std::pair{20.0, 20e3};
    s.swing_vpp = 2;
    s.stages_max = 1;
    s.top = 1;
    out.push_back({"feedback pair, gain 100, 8.4..9.6 V", s});
  }
  {
    // The JFET-input pair turned over on a negative rail (P-channel JFET, NPN Q2 or the N mirror).
    synth::Spec s = base(20, 22e3, 15, 15, 1e6);
    s.topologies = {"jfet-fb-pair"};
    s.negative_rail = true;
    s.band_hz = std::pair{20.0, 20e3};
    s.stages_max = 1;
    s.top = 1;
    out.push_back({"JFET-input pair, -15 V", s});
  }
  {
    // The same-polarity pair from a drawer of one NPN type, on 12 V: Q1 and Q2 both SQ-410,
    // each at its own limit piece, every pairing.
    synth::Spec s = base(10, 10e3, 12, 12, 47e3);
    s.topologies = {"bjt-fb-pair-same"};
    s.devices = {"SQ-410"};
    s.band_hz = std::pair{20.0, 20e3};
    s.swing_vpp = 2;
    s.stages_max = 1;
    s.top = 1;
    out.push_back({"same-polarity pair, NPN only, 12 V", s});
  }
  {
    // A pair into 100 nF of cable: the load capacitance inside the loop lowers the loop gain,
    // and the closed-loop gain with it, well inside the band (worst.cpp NOTES 7).
    synth::Spec s = base(10, 10e3, 12, 12, 10e3);
    s.topologies = {"bjt-fb-pair"};
    s.load_farads = 100e-9;
    s.band_hz = std::pair{20.0, 20e3};
    s.stages_max = 1;
    s.top = 1;
    out.push_back({"feedback pair into 100 nF, 12 V", s});
  }
  {
    // Op-amp stages: the macro-model from the record at every one of its 16 limit pieces.
    synth::Spec s = base(10, 10e3, 11, 13, 100e3);  // non-inverting on one supply
    s.topologies = {"opamp-noninv"};
    s.band_hz = std::pair{20.0, 20e3};
    s.swing_vpp = 4;
    s.top = 1;
    out.push_back({"op-amp non-inverting, 11..13 V", s});
  }
  {
    synth::Spec s = base(4.7, 2.2e3, 15, 15, 10e3);  // inverting on +/-15 V into a cable
    s.topologies = {"opamp-inv-split"};
    s.split_supply = true;
    s.load_farads = 2.2e-9;
    s.band_hz = std::pair{200.0, 20e3};
    s.swing_vpp = 10;
    s.top = 1;
    out.push_back({"op-amp inverting, +/-15 V, 2n2 cable", s});
  }
  {
    synth::Spec s = base(1, 10e3, 4.5, 5.5, 1e6);  // a rail-to-rail buffer on 5 V
    s.topologies = {"opamp-buffer"};
    s.band_hz = std::pair{20.0, 20e3};
    s.swing_vpp = 2;
    s.top = 1;
    out.push_back({"op-amp buffer, 4.5..5.5 V", s});
  }
  {
    synth::Spec s = base(21, 4.7e3, 12, 12, 47e3);  // non-inverting on +/-12 V, DC-coupled out
    s.topologies = {"opamp-noninv-split"};
    s.split_supply = true;
    s.band_hz = std::pair{20.0, 20e3};
    s.top = 1;
    out.push_back({"op-amp non-inverting, +/-12 V", s});
  }
  {
    // A JFET follower into an op-amp stage (or whatever chain ranks first from these types).
    synth::Spec s = base(20, 10e3, 12, 12, 10e6);
    s.devices = {"SJ-101", "SA-430"};
    s.stages_min = 2;
    s.band_hz = std::pair{20.0, 20e3};
    s.top = 1;
    out.push_back({"chain with an op-amp, 10 MOhm in", s});
  }
  return out;
}

}  // namespace

TEST_CASE("every claimed worst range holds ngspice at datasheet-limit pieces, tolerance ends and supply ends") {
  const synth::Inventory inv = demo_shelf();
  int designs = 0, runs = 0, thd_runs = 0;
  double thd_share = 0;  // the largest THD measured, over its bound
  // WORST_CASE_ONLY=text runs only the requests whose label holds the text (while working on one).
  const char* only = std::getenv("WORST_CASE_ONLY");
  for (const auto& req : requests()) {
    if (only && std::string(req.label).find(only) == std::string::npos) continue;
    CAPTURE(req.label);
    const synth::DesignResult r = synth::design(req.spec, inv);
    REQUIRE_MESSAGE(!r.candidates.empty(), req.label, ": ", r.diagnosis.detail);
    for (const auto& c : r.candidates) {
      CAPTURE(c.topology_name());
      ++designs;
      std::string devices;
      for (const auto& st : c.is_chain() ? c.stages : std::vector<synth::Candidate>{c})
        devices += (devices.empty() ? "" : " > ") + st.device.name + (st.device2 ? "+" + st.device2->name : "");
      MESSAGE(fmt::format("{}: {} with {}, gain {:.4g} ({:.4g}..{:.4g})", req.label, c.topology_name(), devices,
                          c.nominal.gain, c.worst.gain.min, c.worst.gain.max));
      const auto& w = c.worst;
      // Every range contains its nominal (the figures shown).
      for (const auto& [name, range, v] : std::vector<std::tuple<std::string, synth::Range, double>>{
               {"gain", w.gain, c.nominal.gain},
               {"zin", w.zin, c.nominal.zin_ohm},
               {"zout", w.zout, c.nominal.zout_ohm},
               {"f_low", w.f_low, c.nominal.f_low_hz},
               {"f_high", w.f_high, c.nominal.f_high_hz},
               {"swing", w.swing_peak, c.nominal.swing_peak_v},
               {"supply current", w.supply_current, c.nominal.supply_current_a}}) {
        CAPTURE(name);
        REQUIRE_FALSE(range.empty);
        CHECK(range.min <= v * (1 + 1e-9) + 1e-12);
        CHECK(range.max >= v * (1 - 1e-9) - 1e-12);
      }
      // No swing beyond the supply.
      CHECK(w.swing_peak.max <= req.spec.supply_hi_v);
      // Nodes on the user's rail (a node at ground may claim the model margin's 2 mV floor
      // either side, docs/worst-case.md).
      for (double v : {w.v_in.min, w.v_in.max, w.v_out.min, w.v_out.max, w.v_common.min, w.v_common.max}) {
        if (req.spec.split_supply) {
          CHECK(std::abs(v) <= req.spec.supply_hi_v);  // between the rails
        } else if (req.spec.negative_rail) {
          CHECK(v <= 2.001e-3);
        } else {
          CHECK(v >= -2.001e-3);
        }
      }
      double f_mid = req.spec.band_hz ? std::sqrt(req.spec.band_hz->first * req.spec.band_hz->second) : 1e3;
      REQUIRE(f_mid > 20 * w.f_low.max);
      REQUIRE((w.f_high.min == 0 || f_mid < w.f_high.min / 20));
      const double f_zin = 40 * w.f_low.max;
      const std::vector<Build> builds = builds_of(c, req.spec);
      std::vector<Probe> probes;
      std::vector<std::string> netlists;
      for (const auto& b : builds) {
        probes.push_back(probe_of(c, b, f_mid, f_zin));
        netlists.push_back(probes.back().netlist);
      }
      const std::vector<SpiceRun> probed = run_ngspice_batches(netlists);
      std::vector<Sim> sims;
      for (std::size_t i = 0; i < builds.size(); ++i) sims.push_back(read_probe(probes[i], builds[i], probed[i]));
      // With a swing requested, THD at its peak too (at 1 kHz, or mid-band without a band).
      const double level = req.spec.swing_vpp ? *req.spec.swing_vpp / 2 : 0.0;
      const double f_thd = req.spec.band_hz ? std::min(1e3, f_mid) : 1e3;
      if (level > 0) {
        netlists.clear();
        for (std::size_t i = 0; i < builds.size(); ++i)
          netlists.push_back(thd_netlist(c, builds[i], sims[i].gain, level, f_thd));
        const std::vector<SpiceRun> thd = run_ngspice_batches(netlists);
        for (std::size_t i = 0; i < builds.size(); ++i) sims[i].thd = read_thd(thd[i]);
      }
      for (std::size_t i = 0; i < builds.size(); ++i) {
        const Sim& s = sims[i];
        const std::string& where = builds[i].label;
        ++runs;
        // No slack: the claimed ranges carry the model margin (docs/worst-case.md), so ngspice
        // lands inside them; the floors are ngspice's printed precision only.
        check_in("gain", s.gain, w.gain, 0, 0, where);
        if (s.bias_a >= 0) check_in("bias current", s.bias_a, w.bias_current, 0, 1e-12, where);
        check_in("supply current", s.supply_a, w.supply_current, 0, 1e-12, where);
        check_in("V(gate/base)", s.v_in, w.v_in, 0, 1e-6, where);
        check_in("V(source/emitter)", s.v_common, w.v_common, 0, 1e-6, where);
        check_in("V(drain/collector)", s.v_out, w.v_out, 0, 1e-6, where);
        check_in("zin", s.zin, w.zin, 0, 0, where);
        check_in("zout", s.zout, w.zout, 0, 0.05, where);
        if (s.f_low > 0) check_in("f_low", s.f_low, w.f_low, 0, 0, where);
        if (s.f_high > 0 && s.f_high < 1e9) check_in("f_high", s.f_high, w.f_high, 0, 0, where);
        // The promise: within the bound at the requested level, and inside the claim.
        if (level > 0) {
          CHECK_MESSAGE(s.thd <= req.spec.max_thd, fmt::format("THD {:.4f} at {:g} V peak above the bound {:g} ({})",
                                                               s.thd, level, req.spec.max_thd, where));
          check_in("THD", s.thd, synth::Range{0.0, w.thd.max, false}, 0, 1e-5, where);
          ++thd_runs;
          thd_share = std::max(thd_share, s.thd / req.spec.max_thd);
        }
        for (const auto& [des, dc] : s.dc)
          CHECK_MESSAGE(dc >= 0, fmt::format("{} (polarised) holds {:.4f} V from its + lead ({})", des, dc, where));
      }
    }
  }
  MESSAGE(
      fmt::format("{} listed designs, {} ngspice builds, {} with THD at the requested level (at most {:.0f} % "
                  "of the bound)",
                  designs, runs, thd_runs, 100 * thd_share));
}

}  // namespace shelfstage::test
