// Modified nodal analysis: DC by damped Newton-Raphson (junction limiting, gmin stepping,
// source stepping), AC by complex linear solves at the operating point, noise by the adjoint.
#include "shelfstage/circuit/solver.hpp"

#include <Eigen/Dense>
#include <algorithm>
#include <cmath>
#include <fmt/format.h>
#include <numbers>

#include "shelfstage/circuit/complex_pivot.hpp"
#include "shelfstage/error.hpp"

namespace shelfstage::circuit {

namespace {

using devices::BjtInstance;
using devices::JfetInstance;

constexpr double kGminJunction = 1e-12;  // SPICE's GMIN across every junction

struct Layout {
  std::size_t nodes = 0;                // non-ground nets
  std::size_t sources = 0;              // voltage sources and VCVS: one branch current each
  std::vector<std::size_t> source_row;  // per element index, for vsources and VCVS
  std::size_t size() const { return nodes + sources; }
};

bool has_branch(ElementKind k) { return k == ElementKind::vsource || k == ElementKind::vcvs; }

Layout layout(const Circuit& c) {
  Layout l;
  l.nodes = c.net_count() - 1;
  l.source_row.assign(c.elements().size(), 0);
  for (std::size_t i = 0; i < c.elements().size(); ++i) {
    if (has_branch(c.elements()[i].c.kind)) l.source_row[i] = l.nodes + l.sources++;
  }
  return l;
}

// Index of net v in the unknown vector, or -1 for ground.
inline long row(std::size_t v) { return static_cast<long>(v) - 1; }

template <class M, class T>
void stamp_g(M& A, std::size_t a, std::size_t b, T g) {
  const long ra = row(a), rb = row(b);
  if (ra >= 0) A(ra, ra) += g;
  if (rb >= 0) A(rb, rb) += g;
  if (ra >= 0 && rb >= 0) {
    A(ra, rb) -= g;
    A(rb, ra) -= g;
  }
}

// A voltage source's branch row k (DC or AC): its current variable into its + and - pins, and
// the source's equation v(+) - v(-) = right-hand side.
template <class M>
void stamp_branch(M& A, const Component& e, long k) {
  if (row(e.pins[0]) >= 0) {
    A(row(e.pins[0]), k) += 1.0;
    A(k, row(e.pins[0])) += 1.0;
  }
  if (row(e.pins[1]) >= 0) {
    A(row(e.pins[1]), k) -= 1.0;
    A(k, row(e.pins[1])) -= 1.0;
  }
}

// A current into terminal `into` (leaving it toward the device) that depends on v(p)-v(n)
// with transconductance g: adds g to A(into, p) and -g to A(into, n).
template <class M, class T>
void stamp_vccs(M& A, std::size_t into, std::size_t p, std::size_t n, T g) {
  const long r = row(into);
  if (r < 0) return;
  if (row(p) >= 0) A(r, row(p)) += g;
  if (row(n) >= 0) A(r, row(n)) -= g;
}

// A BJT's small-signal conductances at collector cn, base bn and emitter en (the derivatives
// of its collector and base currents in VBE and VBC; the emitter carries their negative sum).
template <class M>
void stamp_bjt(M& A, std::size_t cn, std::size_t bn, std::size_t en, const devices::BjtEval& ev) {
  stamp_vccs(A, cn, bn, en, ev.dic_dvbe);
  stamp_vccs(A, cn, bn, cn, ev.dic_dvbc);
  stamp_vccs(A, bn, bn, en, ev.dib_dvbe);
  stamp_vccs(A, bn, bn, cn, ev.dib_dvbc);
  stamp_vccs(A, en, bn, en, -(ev.dic_dvbe + ev.dib_dvbe));
  stamp_vccs(A, en, bn, cn, -(ev.dic_dvbc + ev.dib_dvbc));
}

template <class V, class T>
void stamp_i(V& b, std::size_t node, T current_out) {
  if (row(node) >= 0) b(row(node)) -= current_out;
}

double node_v(const Eigen::VectorXd& x, std::size_t v) { return v == 0 ? 0.0 : x(row(v)); }

// SPICE's pnjlim: limits the step of a junction voltage so the exponential stays tame.
double pnjlim(double vnew, double vold, double vt, double vcrit) {
  if (vnew > vcrit && std::abs(vnew - vold) > 2 * vt) {
    if (vold > 0) {
      const double arg = 1 + (vnew - vold) / vt;
      return arg > 0 ? vold + vt * std::log(arg) : vcrit;
    }
    return vt * std::log(vnew / vt);
  }
  return vnew;
}

struct JunctionState {
  double vbe = 0, vbc = 0;  // BJT, N frame, last limited values
};

struct DcState {
  std::vector<JunctionState> bjt;
  std::vector<double> diode_v;  // each diode's last limited voltage
  double vt = 0;                // thermal voltage of the diodes
  DcState(const Circuit& c, double celsius)
      : bjt(c.bjts().size()), diode_v(c.diodes().size(), 0.0), vt(devices::thermal_voltage(celsius)) {}
  void reset() {
    std::fill(bjt.begin(), bjt.end(), JunctionState{});
    std::fill(diode_v.begin(), diode_v.end(), 0.0);
  }
};

// A voltage source's branch row k: the current variable into its pins, and its value (scaled
// for source stepping) on the right-hand side.
void stamp_vsource_dc(const Component& e, long k, double scale, Eigen::MatrixXd& A, Eigen::VectorXd& b) {
  stamp_branch(A, e, k);
  b(k) = scale * e.value;
}

// A current source's share of the right-hand side: `amps` from pins[0] through it to pins[1].
template <class V, class T>
void stamp_isource(V& b, const Component& e, T amps) {
  stamp_i(b, e.pins[0], amps);
  stamp_i(b, e.pins[1], -amps);
}

// A VCCS: gm (v(ctrl+) - v(ctrl-)) from out+ through it to out-.
template <class M, class T>
void stamp_vccs_element(M& A, const Component& e, T gm) {
  stamp_vccs(A, e.pins[0], e.pins[2], e.pins[3], gm);
  stamp_vccs(A, e.pins[1], e.pins[2], e.pins[3], -gm);
}

// A VCVS on branch row k: v(out+) - v(out-) - gain (v(ctrl+) - v(ctrl-)) = 0, its branch
// current into out+ as a voltage source's.
template <class M>
void stamp_vcvs(M& A, const Component& e, long k) {
  stamp_branch(A, e, k);
  if (row(e.pins[2]) >= 0) A(k, row(e.pins[2])) -= e.value;
  if (row(e.pins[3]) >= 0) A(k, row(e.pins[3])) += e.value;
}

// The diode's exponential at v: current and conductance (gmin not included).
struct DiodeEval {
  double i = 0, g = 0;
};
DiodeEval diode_eval(const DiodeModel& d, double vt, double v) {
  const double nvt = d.n * vt;
  const double ex = std::exp(v / nvt);
  return {d.is_a * (ex - 1.0), d.is_a * ex / nvt};
}

// A diode linearised at x, its voltage limited against the last one (if `limit`) as a BJT
// junction's, with gmin across it.
void stamp_diode_dc(const Circuit& c, const Component& e, const Eigen::VectorXd& x, DcState& st, bool limit,
                    Eigen::MatrixXd& A, Eigen::VectorXd& b) {
  const DiodeModel& d = c.diodes()[e.device];
  const std::size_t an = e.pins[0], ca = e.pins[1];
  double v = node_v(x, an) - node_v(x, ca);
  double& last = st.diode_v[e.device];
  if (limit) {
    const double nvt = d.n * st.vt;
    v = pnjlim(v, last, nvt, nvt * std::log(nvt / (std::numbers::sqrt2 * d.is_a)));
  }
  last = v;
  const auto ev = diode_eval(d, st.vt, v);
  stamp_g(A, an, ca, ev.g + kGminJunction);
  const double ieq = ev.i - ev.g * v;
  stamp_i(b, an, ieq);
  stamp_i(b, ca, -ieq);
}

// A JFET linearised at x.
void stamp_jfet_dc(const Circuit& c, const Component& e, const Eigen::VectorXd& x, Eigen::MatrixXd& A,
                   Eigen::VectorXd& b) {
  const JfetInstance& q = c.jfets()[e.device];
  const double p = devices::polarity(q.kind);
  const std::size_t d = e.pins[0], g = e.pins[1], s = e.pins[2];
  const double vgs = p * (node_v(x, g) - node_v(x, s));
  const double vds = p * (node_v(x, d) - node_v(x, s));
  const auto ev = devices::jfet_eval(q, vgs, vds);
  // Current into the drain (actual frame) and its linearisation.
  const double id = p * ev.id_a;
  const double ieq = id - ev.gm_s * (p * vgs) - ev.gds_s * (p * vds);
  stamp_vccs(A, d, g, s, ev.gm_s);
  stamp_vccs(A, d, d, s, ev.gds_s);
  stamp_vccs(A, s, g, s, -ev.gm_s);
  stamp_vccs(A, s, d, s, -ev.gds_s);
  stamp_i(b, d, ieq);
  stamp_i(b, s, -ieq);
  stamp_g(A, g, s, kGminJunction);
  stamp_g(A, g, d, kGminJunction);
}

// A BJT linearised at x, its junction voltages limited against the last ones (if `limit`)
// and kept in st for the next iteration.
void stamp_bjt_dc(const Circuit& c, const Component& e, const Eigen::VectorXd& x, DcState& st, bool limit,
                  Eigen::MatrixXd& A, Eigen::VectorXd& b) {
  const BjtInstance& q = c.bjts()[e.device];
  const double p = devices::polarity(q.kind);
  const std::size_t cn = e.pins[0], bn = e.pins[1], en = e.pins[2];
  double vbe = p * (node_v(x, bn) - node_v(x, en));
  double vbc = p * (node_v(x, bn) - node_v(x, cn));
  JunctionState& js = st.bjt[e.device];
  if (limit) {
    const double vcrit = q.vt_v * std::log(q.vt_v / (std::numbers::sqrt2 * q.is_a));
    vbe = pnjlim(vbe, js.vbe, q.vt_v, vcrit);
    vbc = pnjlim(vbc, js.vbc, q.vt_v, vcrit);
  }
  js.vbe = vbe;
  js.vbc = vbc;
  const auto ev = devices::bjt_eval(q, vbe, vbc);
  // Actual-frame currents into collector and base; derivatives are frame-invariant.
  const double ic = p * ev.ic_a, ib = p * ev.ib_a;
  const double ic_eq = ic - ev.dic_dvbe * (p * vbe) - ev.dic_dvbc * (p * vbc);
  const double ib_eq = ib - ev.dib_dvbe * (p * vbe) - ev.dib_dvbc * (p * vbc);
  stamp_bjt(A, cn, bn, en, ev);
  stamp_i(b, cn, ic_eq);
  stamp_i(b, bn, ib_eq);
  stamp_i(b, en, -(ic_eq + ib_eq));
  stamp_g(A, bn, en, kGminJunction);
  stamp_g(A, bn, cn, kGminJunction);
}

// Assembles the Newton system at x. gshunt: conductance from every node to ground (gmin
// stepping); scale: source stepping factor.
void assemble_dc(const Circuit& c, const Layout& l, const Eigen::VectorXd& x, double gshunt, double scale, DcState& st,
                 bool limit, Eigen::MatrixXd& A, Eigen::VectorXd& b) {
  A.setZero(static_cast<long>(l.size()), static_cast<long>(l.size()));
  b.setZero(static_cast<long>(l.size()));
  for (std::size_t n = 0; n < l.nodes; ++n) A(static_cast<long>(n), static_cast<long>(n)) += gshunt;
  const auto& els = c.elements();
  for (std::size_t i = 0; i < els.size(); ++i) {
    const Component& e = els[i].c;
    switch (e.kind) {
      case ElementKind::resistor: stamp_g(A, e.pins[0], e.pins[1], 1.0 / e.value); break;
      case ElementKind::capacitor: break;
      case ElementKind::vsource: stamp_vsource_dc(e, static_cast<long>(l.source_row[i]), scale, A, b); break;
      case ElementKind::jfet: stamp_jfet_dc(c, e, x, A, b); break;
      case ElementKind::bjt: stamp_bjt_dc(c, e, x, st, limit, A, b); break;
      case ElementKind::isource: stamp_isource(b, e, scale * e.value); break;
      case ElementKind::vccs: stamp_vccs_element(A, e, e.value); break;
      case ElementKind::vcvs: stamp_vcvs(A, e, static_cast<long>(l.source_row[i])); break;
      case ElementKind::diode: stamp_diode_dc(c, e, x, st, limit, A, b); break;
    }
  }
}

// Newton from x; true on convergence.
bool newton(const Circuit& c, const Layout& l, Eigen::VectorXd& x, double gshunt, double scale, DcState& st,
            const SolverOptions& o, int& iterations) {
  // The system's storage, the factorisation's and the step's, allocated once for every
  // iteration (a circuit's solve takes tens of them, and the sweeps thousands of solves).
  const auto size = static_cast<long>(l.size());
  Eigen::MatrixXd A(size, size), A2(size, size);
  Eigen::VectorXd b(size), b2(size), dx(size), r(size);
  Eigen::PartialPivLU<Eigen::MatrixXd> lu(size);
  for (int it = 0; it < o.max_iterations; ++it) {
    ++iterations;
    assemble_dc(c, l, x, gshunt, scale, st, true, A, b);
    lu.compute(A);
    dx.noalias() = lu.solve(b);
    if (!dx.allFinite()) return false;
    dx -= x;
    // Damping: no node moves more than 2 V in one step.
    double worst = 0;
    for (std::size_t n = 0; n < l.nodes; ++n) worst = std::max(worst, std::abs(dx(static_cast<long>(n))));
    if (worst > 2.0) dx *= 2.0 / worst;
    x += dx;
    bool done = worst <= 2.0;
    for (long k = 0; k < static_cast<long>(l.nodes) && done; ++k)
      done = std::abs(dx(k)) <= o.reltol * std::abs(x(k)) + o.vntol_v;
    if (done && it > 0) {
      // Confirm the junction limiting did not bend the last step.
      DcState check = st;
      assemble_dc(c, l, x, gshunt, scale, check, false, A2, b2);
      r.noalias() = A2 * x;
      r -= b2;
      if (r.head(static_cast<long>(l.nodes)).cwiseAbs().maxCoeff() < 1e-9 + o.abstol_a * 1e3) return true;
    }
  }
  return false;
}

DeviceOp device_op(const Circuit& c, const Component& e, const Eigen::VectorXd& x) {
  DeviceOp op;
  op.designator = e.designator;
  if (e.kind == ElementKind::jfet) {
    const JfetInstance& q = c.jfets()[e.device];
    const double p = devices::polarity(q.kind);
    const double vgs = p * (node_v(x, e.pins[1]) - node_v(x, e.pins[2]));
    const double vds = p * (node_v(x, e.pins[0]) - node_v(x, e.pins[2]));
    const auto ev = devices::jfet_eval(q, vgs, vds);
    op.i_main_a = ev.id_a;
    op.v_ctrl_v = vgs;
    op.v_main_v = vds;
    op.gm_s = ev.gm_s;
    op.go_s = ev.gds_s;
    op.jfet_region = ev.region;
    op.c_in_f = devices::depletion_capacitance(q.cgs_f, vgs, devices::kJfetPb, devices::kJfetM);
    op.c_fb_f = devices::depletion_capacitance(q.cgd_f, vgs - vds, devices::kJfetPb, devices::kJfetM);
  } else {
    const BjtInstance& q = c.bjts()[e.device];
    const double p = devices::polarity(q.kind);
    const double vbe = p * (node_v(x, e.pins[1]) - node_v(x, e.pins[2]));
    const double vbc = p * (node_v(x, e.pins[1]) - node_v(x, e.pins[0]));
    const auto ev = devices::bjt_eval(q, vbe, vbc);
    op.i_main_a = ev.ic_a;
    op.i_ctrl_a = ev.ib_a;
    op.v_ctrl_v = vbe;
    op.v_main_v = vbe - vbc;
    op.gm_s = ev.dic_dvbe;
    op.go_s = -ev.dic_dvbc;
    op.gpi_s = ev.dib_dvbe;
    op.bjt_saturated = vbc > 0.0;
    op.c_in_f = devices::depletion_capacitance(q.cje_f, vbe, devices::kBjtVj, devices::kBjtM);
    op.c_fb_f = devices::depletion_capacitance(q.cjc_f, vbc, devices::kBjtVj, devices::kBjtM);
  }
  return op;
}

}  // namespace

double OperatingPoint::v(const Circuit& c, const std::string& net) const {
  const auto n = c.find_net(net);
  if (!n) throw InputError(fmt::format("no net '{}' in the circuit", net));
  return node_v[*n];
}

// A start for Newton from a known solution: its node voltages, and the junction voltages they
// give as the limiting's last values (limited against nothing, the first step from a junction
// already forward-biased would be cut back to its critical voltage). Branch currents are left
// at nothing: Newton's next iterate depends on the node voltages alone.
void start_from(const Circuit& c, const OperatingPoint& start, Eigen::VectorXd& x, DcState& st) {
  for (std::size_t v = 1; v < c.net_count(); ++v) x(row(v)) = start.node_v[v];
  for (const auto& el : c.elements()) {
    const Component& e = el.c;
    if (e.kind == ElementKind::bjt) {
      const double p = devices::polarity(c.bjts()[e.device].kind);
      st.bjt[e.device].vbe = p * (node_v(x, e.pins[1]) - node_v(x, e.pins[2]));
      st.bjt[e.device].vbc = p * (node_v(x, e.pins[1]) - node_v(x, e.pins[0]));
    } else if (e.kind == ElementKind::diode) {
      st.diode_v[e.device] = node_v(x, e.pins[0]) - node_v(x, e.pins[1]);
    }
  }
}

const OperatingPoint& solve_dc_next(const Circuit& c, SolverOptions o, OperatingPoint& last) {
  if (!last.node_v.empty()) o.start = &last;
  OperatingPoint op = solve_dc(c, o);
  last = std::move(op);
  return last;
}

OperatingPoint solve_dc(const Circuit& c, const SolverOptions& o) {
  c.validate();
  const Layout l = layout(c);
  DcState st(c, o.celsius);
  Eigen::VectorXd x = Eigen::VectorXd::Zero(static_cast<long>(l.size()));
  int iterations = 0;
  std::string method = "newton";
  bool ok = false;
  if (o.start && o.start->node_v.size() == c.net_count()) {
    start_from(c, *o.start, x, st);
    ok = newton(c, l, x, 0.0, 1.0, st, o, iterations);
    if (!ok) {
      x.setZero();
      st.reset();
    }
  }
  if (!ok) ok = newton(c, l, x, 0.0, 1.0, st, o, iterations);
  if (!ok) {
    // gmin stepping: a shunt from every node to ground, relaxed decade by decade.
    method = "gmin stepping";
    x.setZero();
    st.reset();
    ok = true;
    for (double g = 1e-2; g >= 1e-13 && ok; g /= 10) ok = newton(c, l, x, g, 1.0, st, o, iterations);
    ok = ok && newton(c, l, x, 0.0, 1.0, st, o, iterations);
  }
  if (!ok) {
    // Source stepping: ramp every source from zero, halving the step on failure.
    method = "source stepping";
    x.setZero();
    st.reset();
    double scale = 0, step = 0.1;
    ok = true;
    while (scale < 1.0 && step > 1e-4) {
      Eigen::VectorXd keep = x;
      DcState keep_st = st;
      const double next = std::min(1.0, scale + step);
      if (newton(c, l, x, 0.0, next, st, o, iterations)) {
        scale = next;
        step = std::min(step * 1.5, 0.25);
      } else {
        x = keep;
        st = keep_st;
        step /= 2;
      }
    }
    ok = scale >= 1.0;
  }
  if (!ok) throw InfeasibleError("DC operating point did not converge (Newton, gmin and source stepping all failed)");

  OperatingPoint op;
  op.iterations = iterations;
  op.method = method;
  op.node_v.assign(c.net_count(), 0.0);
  for (std::size_t v = 1; v < c.net_count(); ++v) op.node_v[v] = x(row(v));
  for (std::size_t i = 0; i < c.elements().size(); ++i) {
    const Component& e = c.elements()[i].c;
    if (e.kind == ElementKind::vsource) op.source_i.push_back(x(static_cast<long>(l.source_row[i])));
    if (e.kind == ElementKind::jfet || e.kind == ElementKind::bjt) op.devices.push_back(device_op(c, e, x));
    if (e.kind == ElementKind::diode) {
      const double v = node_v(x, e.pins[0]) - node_v(x, e.pins[1]);
      const auto ev = diode_eval(c.diodes()[e.device], st.vt, v);
      op.diodes.push_back({e.designator, v, ev.i, ev.g});
    }
  }
  return op;
}

namespace {

using cd = std::complex<double>;

// The small-signal system at op split by frequency: A = G + jw C, the right-hand side from the
// AC sources (every stamp is either independent of frequency or jw times a capacitance).
void ac_parts(const Circuit& c, const Layout& l, const OperatingPoint& op, Eigen::MatrixXd& G, Eigen::MatrixXd& C,
              Eigen::VectorXcd& rhs) {
  const auto n = static_cast<long>(l.size());
  G = Eigen::MatrixXd::Zero(n, n);
  C = Eigen::MatrixXd::Zero(n, n);
  rhs = Eigen::VectorXcd::Zero(n);
  std::size_t dev = 0, diode = 0;
  Eigen::VectorXd x(n);
  x.setZero();
  for (std::size_t v = 1; v < c.net_count(); ++v) x(row(v)) = op.node_v[v];
  const auto& els = c.elements();
  for (std::size_t i = 0; i < els.size(); ++i) {
    const Component& e = els[i].c;
    switch (e.kind) {
      case ElementKind::resistor: stamp_g(G, e.pins[0], e.pins[1], 1.0 / e.value); break;
      case ElementKind::capacitor: stamp_g(C, e.pins[0], e.pins[1], e.value); break;
      case ElementKind::vsource: {
        const long k = static_cast<long>(l.source_row[i]);
        stamp_branch(G, e, k);
        rhs(k) = e.ac_volts;
        break;
      }
      case ElementKind::jfet: {
        const DeviceOp& d = op.devices[dev++];
        const std::size_t dn = e.pins[0], g = e.pins[1], s = e.pins[2];
        stamp_vccs(G, dn, g, s, d.gm_s);
        stamp_vccs(G, dn, dn, s, d.go_s);
        stamp_vccs(G, s, g, s, -d.gm_s);
        stamp_vccs(G, s, dn, s, -d.go_s);
        stamp_g(G, g, s, kGminJunction);
        stamp_g(G, g, dn, kGminJunction);
        stamp_g(C, g, s, d.c_in_f);
        stamp_g(C, g, dn, d.c_fb_f);
        break;
      }
      case ElementKind::bjt: {
        ++dev;
        const BjtInstance& q = c.bjts()[e.device];
        const double p = devices::polarity(q.kind);
        const std::size_t cn = e.pins[0], bn = e.pins[1], en = e.pins[2];
        const double vbe = p * (node_v(x, bn) - node_v(x, en));
        const double vbc = p * (node_v(x, bn) - node_v(x, cn));
        const auto ev = devices::bjt_eval(q, vbe, vbc);
        stamp_bjt(G, cn, bn, en, ev);
        const DeviceOp& d = op.devices[dev - 1];
        stamp_g(G, bn, en, kGminJunction);
        stamp_g(G, bn, cn, kGminJunction);
        stamp_g(C, bn, en, d.c_in_f);
        stamp_g(C, bn, cn, d.c_fb_f);
        break;
      }
      case ElementKind::isource: stamp_isource(rhs, e, cd(e.ac_volts)); break;
      case ElementKind::vccs: stamp_vccs_element(G, e, e.value); break;
      case ElementKind::vcvs: stamp_vcvs(G, e, static_cast<long>(l.source_row[i])); break;
      case ElementKind::diode: stamp_g(G, e.pins[0], e.pins[1], op.diodes[diode++].g_s + kGminJunction); break;
    }
  }
}

// The system matrix G + j 2 pi f C.
Eigen::MatrixXcd at_frequency(const Eigen::MatrixXd& g, const Eigen::MatrixXd& c, double f_hz) {
  return g.cast<cd>() + cd(0, 2 * std::numbers::pi * f_hz) * c.cast<cd>();
}

}  // namespace

struct AcSystem::Parts {
  Layout layout;
  Eigen::MatrixXd g, c;
  Eigen::VectorXcd rhs;
  std::size_t nets = 0;
  Eigen::MatrixXcd at(double f_hz) const { return at_frequency(g, c, f_hz); }
};

AcSystem::AcSystem(const Circuit& c, const OperatingPoint& op) {
  auto p = std::make_shared<Parts>();
  p->layout = layout(c);
  p->nets = c.net_count();
  ac_parts(c, p->layout, op, p->g, p->c, p->rhs);
  parts_ = std::move(p);
  for (std::size_t i = 0; i < c.elements().size(); ++i)
    if (c.elements()[i].c.kind == ElementKind::vsource) source_rows_.emplace_back(c.elements()[i].c.designator, i);
}

std::vector<std::complex<double>> AcSystem::solve(double f_hz) const {
  const Parts& p = *parts_;
  const Eigen::VectorXcd sol = p.at(f_hz).partialPivLu().solve(p.rhs);
  std::vector<cd> v(p.nets, cd(0));
  for (std::size_t n = 1; n < p.nets; ++n) v[n] = sol(row(n));
  return v;
}

std::vector<std::vector<std::complex<double>>> AcSystem::solve_each(double f_hz,
                                                                    std::span<const std::string> sources) const {
  const Parts& p = *parts_;
  Eigen::MatrixXcd b = Eigen::MatrixXcd::Zero(static_cast<long>(p.layout.size()), static_cast<long>(sources.size()));
  for (std::size_t k = 0; k < sources.size(); ++k) {
    const auto it =
        std::find_if(source_rows_.begin(), source_rows_.end(), [&](const auto& sr) { return sr.first == sources[k]; });
    if (it == source_rows_.end()) throw InputError(fmt::format("no voltage source '{}' in the circuit", sources[k]));
    b(static_cast<long>(p.layout.source_row[it->second]), static_cast<long>(k)) = 1.0;
  }
  const Eigen::MatrixXcd sol = p.at(f_hz).partialPivLu().solve(b);
  std::vector<std::vector<cd>> out(sources.size(), std::vector<cd>(p.nets, cd(0)));
  for (std::size_t k = 0; k < sources.size(); ++k)
    for (std::size_t n = 1; n < p.nets; ++n) out[k][n] = sol(row(n), static_cast<long>(k));
  return out;
}

bool AcSystem::same_as(const AcSystem& o, double rel) const {
  const Parts &a = *parts_, &b = *o.parts_;
  if (a.g.rows() != b.g.rows() || a.nets != b.nets || source_rows_ != o.source_rows_) return false;
  auto close = [&](const Eigen::MatrixXd& x, const Eigen::MatrixXd& y) {
    for (long r = 0; r < x.rows(); ++r) {
      const double tol = rel * std::max(x.row(r).cwiseAbs().maxCoeff(), y.row(r).cwiseAbs().maxCoeff());
      if (((x.row(r) - y.row(r)).cwiseAbs().array() > tol).any()) return false;
    }
    return true;
  };
  if (!close(a.g, b.g) || !close(a.c, b.c)) return false;
  const double tol = rel * std::max(a.rhs.cwiseAbs().maxCoeff(), b.rhs.cwiseAbs().maxCoeff());
  return !((a.rhs - b.rhs).cwiseAbs().array() > tol).any();
}

std::vector<std::complex<double>> solve_ac(const Circuit& c, const OperatingPoint& op, double f_hz) {
  return AcSystem(c, op).solve(f_hz);
}

std::vector<std::complex<double>> ac_sweep(const Circuit& c, const OperatingPoint& op, const std::string& out_net,
                                           const std::vector<double>& f_hz) {
  const auto n = c.find_net(out_net);
  if (!n) throw InputError(fmt::format("no net '{}' in the circuit", out_net));
  const AcSystem sys(c, op);
  std::vector<cd> out;
  out.reserve(f_hz.size());
  for (double f : f_hz) out.push_back(sys.solve(f)[*n]);
  return out;
}

NoisePoint noise(const Circuit& c, const OperatingPoint& op, const std::string& out_net, double f_hz, double celsius) {
  const auto on = c.find_net(out_net);
  if (!on || *on == 0) throw InputError(fmt::format("no net '{}' in the circuit", out_net));
  const Layout l = layout(c);
  Eigen::MatrixXd g, cap;
  Eigen::VectorXcd rhs;
  ac_parts(c, l, op, g, cap, rhs);
  const Eigen::MatrixXcd A = at_frequency(g, cap, f_hz);
  const auto lu = A.partialPivLu();
  const cd h = lu.solve(rhs)(row(*on));
  // Adjoint: z = A^-T e_out gives the transfer from a current injected at any node.
  Eigen::VectorXcd e = Eigen::VectorXcd::Zero(static_cast<long>(l.size()));
  e(row(*on)) = 1.0;
  const Eigen::VectorXcd z = A.transpose().partialPivLu().solve(e);
  auto zt = [&](std::size_t v) { return v == 0 ? cd(0) : z(row(v)); };
  const double kt = devices::kBoltzmann * (celsius + devices::kZeroCelsius);
  double s_out = 0;
  auto add = [&](std::size_t a, std::size_t b, double s_i) { s_out += std::norm(zt(a) - zt(b)) * s_i; };
  std::size_t dev = 0;
  for (const auto& el : c.elements()) {
    const Component& k = el.c;
    if (k.kind == ElementKind::resistor && !k.noiseless) add(k.pins[0], k.pins[1], 4 * kt / k.value);
    if (k.kind == ElementKind::jfet) {
      const DeviceOp& d = op.devices[dev++];
      add(k.pins[0], k.pins[2], 8.0 * kt * std::abs(d.gm_s) / 3.0);
    }
    if (k.kind == ElementKind::bjt) {
      const DeviceOp& d = op.devices[dev++];
      add(k.pins[0], k.pins[2], 2 * devices::kCharge * std::abs(d.i_main_a));
      add(k.pins[1], k.pins[2], 2 * devices::kCharge * std::abs(d.i_ctrl_a));
    }
  }
  NoisePoint np;
  np.output_v_rthz = std::sqrt(s_out);
  np.gain = std::abs(h);
  np.input_v_rthz = np.gain > 0 ? np.output_v_rthz / np.gain : 0;
  return np;
}

Circuit with_capacitors_held(const Circuit& c, const OperatingPoint& op,
                             const std::function<bool(const Component&)>& open) {
  Circuit h;
  for (const auto& el : c.elements()) {
    const auto& e = el.c;
    if (e.kind == ElementKind::capacitor && open && open(e)) continue;
    if (e.kind == ElementKind::capacitor) {
      h.vsource(e.designator, e.role, c.net_name(e.pins[0]), c.net_name(e.pins[1]),
                op.node_v[e.pins[0]] - op.node_v[e.pins[1]]);
      continue;
    }
    std::array<std::string, 4> pins;
    for (std::size_t i = 0; i < el.pin_count(); ++i) pins[i] = c.net_name(e.pins[i]);
    h.copy_element(c, e, e.designator, pins);
  }
  return h;
}

std::vector<double> log_sweep(double lo, double hi, int per_decade) {
  std::vector<double> f;
  const double step = 1.0 / per_decade;
  for (double e = std::log10(lo); e <= std::log10(hi) + 1e-9; e += step) f.push_back(std::pow(10.0, e));
  return f;
}

Corners find_corners(const Circuit& c, const OperatingPoint& op, const std::string& out_net, double f_lo, double f_hi) {
  const auto n = c.find_net(out_net);
  if (!n) throw InputError(fmt::format("no net '{}' in the circuit", out_net));
  const AcSystem sys(c, op);
  auto mag = [&](double f) { return std::abs(sys.solve(f)[*n]); };
  const std::vector<double> fs = log_sweep(f_lo, f_hi, 10);
  std::vector<double> m(fs.size());
  std::size_t best = 0;
  for (std::size_t i = 0; i < fs.size(); ++i) {
    m[i] = mag(fs[i]);
    if (m[i] > m[best]) best = i;
  }
  Corners r;
  r.f_mid_hz = fs[best];
  const cd hm = sys.solve(fs[best])[*n];
  r.mid_gain = (hm.real() < 0 ? -1.0 : 1.0) * std::abs(hm);
  const double target = m[best] / std::numbers::sqrt2;
  auto bisect = [&](double a, double b) {  // a inside the band (above target), b outside
    for (int i = 0; i < 40; ++i) {
      const double mid = std::sqrt(a * b);
      (mag(mid) >= target ? a : b) = mid;
    }
    return std::sqrt(a * b);
  };
  for (std::size_t i = best; i-- > 0;) {
    if (m[i] < target) {
      r.f_low_hz = bisect(fs[i + 1], fs[i]);
      break;
    }
  }
  for (std::size_t i = best + 1; i < fs.size(); ++i) {
    if (m[i] < target) {
      r.f_high_hz = bisect(fs[i - 1], fs[i]);
      break;
    }
  }
  return r;
}

}  // namespace shelfstage::circuit
