// The series-feedback pair's closed form and what both pair topologies share (pair.hpp).
#include "pair.hpp"

#include <Eigen/Dense>
#include <algorithm>
#include <array>
#include <complex>
#include <fmt/format.h>
#include <limits>
#include <numbers>

#include "distortion.hpp"
#include "shelfstage/circuit/complex_pivot.hpp"
#include "shelfstage/error.hpp"

namespace shelfstage::stages::detail {

PairParts pair_parts(const Values& v, double vcc, bool same) {
  PairParts s;
  s.same = same;
  s.vcc = vcc;
  s.top = v[kTop];
  s.bottom = v[kBottom];
  s.r1 = v[kR1];
  s.rc2 = v[kRC2];
  s.rf = v[kRF];
  s.re1 = v[kLeg1];
  s.re2 = v[kLeg2];
  s.ce = v[kLeg2] > 0 ? v[kBypass] : 0.0;
  s.cin = v[kCin];
  s.cout = v[kCout];
  s.cf = v[kCf];
  s.re3 = same ? v[kRE3] : 0.0;
  s.ce3 = same ? v[kCe3] : 0.0;
  return s;
}

PairDevices pair_devices(const Transistor& q) {
  PairDevices d;
  d.jfet = devices::is_jfet(q.kind);
  d.j = q.jfet;
  d.b = q.bjt;
  d.b2 = q.bjt2;
  return d;
}

namespace {

using cd = std::complex<double>;

// The capacitors holding their DC while the source moves (the static transfer): CIN holds
// the control pin's DC against the source's deviation `delta` behind rs, the bypass holds x,
// COUT holds the output's DC so the load returns there.
struct Held {
  bool on = false;
  double delta = 0, rs = 1e-3, vg0 = 0, vx0 = 0, vo0 = 0, rl = 0;
  double ve20 = 0;  ///< Q2's emitter, held by CE3 (the same-polarity form)
};

// A value with its derivatives in u and w: nodes_at taken with these gives the residuals'
// Jacobian exactly, in one pass (forward-mode differentiation; the values are the same
// operations on the same numbers, so they are the double pass's to the last bit).
struct Dual {
  double v = 0, du = 0, dw = 0;
  Dual() = default;
  Dual(double x) : v(x) {}  // NOLINT: a constant, implicitly
  Dual(double x, double a, double b) : v(x), du(a), dw(b) {}
  Dual& operator+=(const Dual& o) {
    v += o.v;
    du += o.du;
    dw += o.dw;
    return *this;
  }
};
Dual operator+(const Dual& a, const Dual& b) { return {a.v + b.v, a.du + b.du, a.dw + b.dw}; }
Dual operator-(const Dual& a, const Dual& b) { return {a.v - b.v, a.du - b.du, a.dw - b.dw}; }
Dual operator-(const Dual& a) { return {-a.v, -a.du, -a.dw}; }
Dual operator*(const Dual& a, const Dual& b) { return {a.v * b.v, a.du * b.v + a.v * b.du, a.dw * b.v + a.v * b.dw}; }
Dual operator/(const Dual& a, const Dual& b) {
  const double q = a.v / b.v;
  return {q, (a.du - q * b.du) / b.v, (a.dw - q * b.dw) / b.v};
}
Dual exp(const Dual& a) {
  const double e = std::exp(a.v);
  return {e, e * a.du, e * a.dw};
}
double value(double x) { return x; }
double value(const Dual& x) { return x.v; }
using std::exp;

// The JFET's drain current at (VGS, VDS) (devices::jfet_eval), with its derivatives through
// the device's own gm and gds.
double jfet_current(const devices::JfetInstance& j, double vgs, double vds) {
  return devices::jfet_eval(j, vgs, vds).id_a;
}
Dual jfet_current(const devices::JfetInstance& j, const Dual& vgs, const Dual& vds) {
  const devices::JfetEval e = devices::jfet_eval(j, vgs.v, vds.v);
  return {e.id_a, e.gm_s * vgs.du + e.gds_s * vds.du, e.gm_s * vgs.dw + e.gds_s * vds.dw};
}

// exp(x) with the pair's clamps: nothing past 40 VT reverse (exp() < 5e-18), and held at e^40
// past 40 VT forward (a junction that far on is a failed solve's iterate, not an answer).
template <class T>
T junction_exp(const T& x) {
  if (value(x) < -40.0) return T(0.0);
  if (value(x) > 40.0) return T(std::exp(40.0));
  return exp(x);
}

// Every node from (u, w), and the two residuals: KCL at Q1's common terminal and at its main
// terminal (currents in minus currents out).
template <class T>
struct NodesOf {
  T i1 = 0, ib1 = 0, ic2 = 0, ib2 = 0, vg = 0, ve = 0, vx = 0, vd = 0, vo = 0, ve2 = 0;
  T r_e = 0, r_d = 0;
};
using Nodes = NodesOf<double>;

// devices::bjt_eval's collector and base currents (the same equations) with each junction's
// exponential taken once: a reverse-biased junction past 40 VT contributes exp() < 5e-18 of IS,
// taken as 0 (its -IS stays).
template <class T>
struct BjtCurrents {
  T ic = 0, ib = 0;
};
template <class T>
BjtCurrents<T> bjt_currents(const devices::BjtInstance& q, const T& ebe, const T& vbc) {
  const T ebc = junction_exp(vbc / q.vt_v);
  const T ibe = q.is_a * (ebe - 1.0), ibc = q.is_a * (ebc - 1.0);
  const double inv_vaf = (q.vaf_v > 0.0 && std::isfinite(q.vaf_v)) ? 1.0 / q.vaf_v : 0.0;
  return {(ibe - ibc) * (1.0 - vbc * inv_vaf) - ibc / q.br, ibe / q.bf + ibc / q.br};
}

template <class T>
NodesOf<T> nodes_at(const PairParts& s, const PairDevices& d, const T& u, const T& w, const Held& h) {
  NodesOf<T> n;
  const T ebe1 = d.jfet ? T(0.0) : exp(u / d.b.vt_v);
  const T ib1_fwd = d.jfet ? T(0.0) : d.b.is_a * (ebe1 - 1.0) / d.b.bf;
  const double gt = s.rth() > 0 ? 1.0 / s.rth() : 0.0;
  // Q2 in an NPN's frame (the complementary form's PNP mirrored: VBE -> VEB = w). Its
  // collector current is linear in its VCB through the Early term, ic2 = ibe2 (1 + vcb k), so
  // KCL at o (and, in the same-polarity form, Q2's emitter on RE3) gives vo (and vd) by a
  // linear solve; the reverse junction's femtoamperes follow from bjt_currents.
  const T ebe2 = exp(w / d.b2.vt_v);
  const T ibe2 = d.b2.is_a * (ebe2 - 1.0);
  const double k = (d.b2.vaf_v > 0 && std::isfinite(d.b2.vaf_v)) ? 1.0 / d.b2.vaf_v : 0.0;
  // Q1's base current has a reverse part, IS (exp(VBC / VT) - 1) / BR: -IS / BR in the active
  // region, but a Q1 a few tenths of a volt from saturation draws a base current through its
  // collector junction that grows e-fold every 26 mV of the output's swing (the second
  // harmonic it makes was nine times the rest, seen). The pin's voltage and the junction's
  // bias depend on each other: Newton on the reverse part from its reverse-biased value (one
  // pass in the active region).
  T ebc1 = 0.0, ib1_rev = d.jfet ? 0.0 : -d.b.is_a / d.b.br;
  for (int pass = 0; pass < 8; ++pass) {
    n.ib1 = ib1_fwd + ib1_rev;
    if (h.on) {
      const double gs = 1.0 / h.rs;
      n.vg = (s.vth() * gt + (h.vg0 + h.delta) * gs - n.ib1) / (gt + gs);
    } else {
      n.vg = s.vth() - n.ib1 * s.rth();
    }
    n.ve = n.vg - u;
    double g = 1.0 / s.rc2 + 1.0 / s.rf;
    T rhs = n.ve / s.rf;
    if (h.on) {
      g += 1.0 / h.rl;
      rhs += h.vo0 / h.rl;
    }
    if (s.same && h.on && s.bypassed3()) {
      // CE3 holds Q2's emitter: vd = ve2 + w, and KCL at o alone gives vo.
      n.ve2 = h.ve20;
      n.vd = n.ve2 + w;
      n.vo = (s.vcc / s.rc2 + rhs - ibe2 * (1.0 - k * n.vd)) / (g + ibe2 * k);
    } else if (s.same) {
      // vd = w + RE3 (ic2 + ib2), ic2 = ibe2 (1 + (vo - vd) k); at o, RC2 from the rail feeds
      // Q2's collector and RF: (g) vo + ic2 = vcc / RC2 + rhs.
      const T a = s.re3 * ibe2 * k;
      const T a11 = 1.0 + a, a12 = -a, b1 = w + s.re3 * ibe2 * (1.0 + 1.0 / d.b2.bf);
      const T a21 = -ibe2 * k, a22 = g + ibe2 * k, b2 = s.vcc / s.rc2 + rhs - ibe2;
      const T det = a11 * a22 - a12 * a21;
      n.vd = (b1 * a22 - a12 * b2) / det;
      n.vo = (a11 * b2 - a21 * b1) / det;
      n.ve2 = n.vd - w;
    } else {
      // The rail less Q2's VEB; ic2 = a + b vo with VCB = vo - vd (mirrored), out of o's KCL.
      n.vd = s.vcc - w;
      n.ve2 = s.vcc;
      const T a = ibe2 * (1.0 + n.vd * k), b = -ibe2 * k;
      n.vo = (rhs + a) / (g - b);
    }
    if (d.jfet) break;
    ebc1 = junction_exp((n.vg - n.vd) / d.b.vt_v);
    const T next = d.b.is_a * (ebc1 - 1.0) / d.b.br;
    // Newton on ib1_rev: the pin falls by r_pin per ampere of base current (the collector
    // junction's own pull on vd is second order), so `next` falls by its slope times r_pin.
    const double r_pin = h.on ? 1.0 / (gt + 1.0 / h.rs) : s.rth();
    const T slope = d.b.is_a * ebc1 / (d.b.br * d.b.vt_v) * r_pin;
    const T step = (next - ib1_rev) / (1.0 + slope);
    ib1_rev += step;
    if (std::abs(value(step)) * (r_pin + 1.0) < 1e-13) break;
  }
  n.ib1 = ib1_fwd + ib1_rev;
  if (d.jfet) {
    n.i1 = jfet_current(d.j, u, n.vd - n.ve);
  } else {
    // devices::bjt_eval's collector current with both exponentials at hand.
    const T ibe = d.b.is_a * (ebe1 - 1.0), ibc = d.b.is_a * (ebc1 - 1.0);
    const double inv_vaf = (d.b.vaf_v > 0.0 && std::isfinite(d.b.vaf_v)) ? 1.0 / d.b.vaf_v : 0.0;
    n.i1 = (ibe - ibc) * (1.0 - (n.vg - n.vd) * inv_vaf) - ibc / d.b.br;
  }
  const BjtCurrents<T> q2 = bjt_currents(d.b2, ebe2, s.same ? n.vd - n.vo : n.vo - n.vd);
  n.ic2 = q2.ic;
  n.ib2 = q2.ib;
  T leg;
  if (h.on && s.bypassed()) {
    n.vx = h.vx0;
    leg = (n.ve - n.vx) / s.re1;
  } else {
    leg = n.ve / (s.re1 + s.re2);
    n.vx = leg * s.re2;
  }
  n.r_e = n.i1 + n.ib1 - leg - (n.ve - n.vo) / s.rf;
  // At Q1's main terminal: R1's current in; Q1's current out, and Q2's base current out (the
  // same-polarity form's NPN) or in (the complementary form's PNP).
  n.r_d = (s.same ? (s.vcc - n.vd) / s.r1 - n.ib2 : w / s.r1 + n.ib2) - n.i1;
  return n;
}

// The values of nodes taken on Dual (the same numbers as the double pass), in NodesOf's order.
Nodes values_of(const NodesOf<Dual>& n) {
  const auto v = [](const Dual& x) { return x.v; };
  return {v(n.i1), v(n.ib1), v(n.ic2), v(n.ib2), v(n.vg),  v(n.ve),
          v(n.vx), v(n.vd),  v(n.vo),  v(n.ve2), v(n.r_e), v(n.r_d)};
}

// Newton on (u, w) from (u0, w0); the Jacobian exact (nodes_at on Dual), kept once the steps
// are below a tenth of a millivolt (the chord method: the last steps converge as fast, each
// the residuals alone).
//
// A pair with no point where both devices work (Q1 driven into saturation, its collector
// junction's current clamped at e^40) can hold the damped steps in a cycle of two, back and
// forth by the largest step: each step is then a function of the point alone (a fresh
// Jacobian each time), so a point met again two steps on, with the steps still large, repeats
// for ever and the solve fails as it would at the last iteration (a pair's bias on the bench's
// chain request: one solve in eighty, a sixth of the pair's Newton work, spent so).
bool solve_nodes(const PairParts& s, const PairDevices& d, const Held& h, double& u, double& w, Nodes& out) {
  const double u_lo = d.jfet ? -d.j.vp_abs_v + 1e-4 : 0.05, u_hi = d.jfet ? 0.6 : 1.2;
  double a = 0, b = 0, c = 0, e = 0;
  bool fresh = true;
  constexpr double kNone = std::numeric_limits<double>::quiet_NaN();
  double u_back[2] = {kNone, kNone}, w_back[2] = {kNone, kNone};  // the points one and two steps back
  int fresh_run = 0;                                              // steps in a row with a fresh Jacobian
  Nodes here;                                                     // the nodes at (u, w) before the step
  for (int it = 0; it < 80; ++it) {
    if (fresh) {
      const NodesOf<Dual> n = nodes_at(s, d, Dual(u, 1.0, 0.0), Dual(w, 0.0, 1.0), h);
      here = values_of(n);
      a = n.r_e.du;
      b = n.r_e.dw;
      c = n.r_d.du;
      e = n.r_d.dw;
    } else {
      here = nodes_at(s, d, u, w, h);
    }
    const double r_e = here.r_e, r_d = here.r_d;
    const double det = a * e - b * c;
    if (!(std::abs(det) > 0) || !std::isfinite(det)) return false;
    double du = (r_e * e - b * r_d) / det, dw = (a * r_d - c * r_e) / det;
    const double k = std::max({std::abs(du) / 0.05, std::abs(dw) / 0.05, 1.0});
    du /= k;
    dw /= k;
    fresh_run = fresh ? fresh_run + 1 : 0;
    u_back[1] = u_back[0];
    w_back[1] = w_back[0];
    u_back[0] = u;
    w_back[0] = w;
    u = std::clamp(u - du, u_lo, u_hi);
    w = std::clamp(w - dw, 0.05, 1.2);
    fresh = std::abs(du) > 1e-4 || std::abs(dw) > 1e-4 || it >= 40;
    if (fresh_run >= 2 && std::max(std::abs(du), std::abs(dw)) > 1e-3 && std::abs(u - u_back[1]) < 1e-9 &&
        std::abs(w - w_back[1]) < 1e-9)
      return false;
    if (std::abs(du) < 1e-11 && std::abs(dw) < 1e-11) {
      // Converged: the point before this last step, whose nodes are at hand (the step is
      // below the tolerance the answer is given to).
      u = u_back[0];
      w = w_back[0];
      out = here;
      return std::abs(out.r_e) < 1e-9 && std::abs(out.r_d) < 1e-9;
    }
  }
  out = nodes_at(s, d, u, w, h);
  return std::abs(out.r_e) < 1e-10 && std::abs(out.r_d) < 1e-10;
}

// Hybrid-pi parameters of a BJT at (vbe, vbc), in VBE and VCE: ic = gm vbe + go vce,
// ib = gpi vbe + gbce vce (gbce: the base current's pull from the collector, which only a
// collector junction near forward bias makes noticeable).
void bjt_small_signal(const devices::BjtInstance& q, double vbe, double vbc, double& gm, double& gpi, double& go,
                      double& gbce) {
  const devices::BjtEval e = devices::bjt_eval(q, vbe, vbc);
  gm = e.dic_dvbe + e.dic_dvbc;
  go = -e.dic_dvbc;
  gpi = e.dib_dvbe + e.dib_dvbc;
  gbce = -e.dib_dvbc;
}

// The small-signal network on (g, e, d, o) and, in the same-polarity form, Q2's emitter e2:
// conductances of every branch.
struct PairSignal : PairGains {
  bool same = false;
  bool e2_grounded = false;  ///< CE3 a short (mid-band and above): Q2's emitter at AC ground
  double ce3 = 0;
  double gs = 0, gb = 0, gleg = 0, gf = 0, gr1 = 0, grc2 = 0, gl = 0, gre3 = 0;
  double cpi1 = 0, cmu1 = 0, cpi2 = 0, cmu2 = 0, c_load = 0, cf = 0;
  double c_out = 0;  ///< with a load capacitance: COUT, which it hangs behind (detail::load_branch)
  int n() const { return same ? 5 : 4; }
};

PairSignal pair_signal(const PairParts& s, const PairDevices& d, const PairBias& b, const Conditions& c) {
  PairSignal m;
  m.same = s.same;
  m.gs = 1.0 / (c.source_ohm > 0 ? c.source_ohm : 1e-3);
  m.gb = 1.0 / s.rth();
  m.gleg = 1.0 / (s.bypassed() ? s.re1 : s.re1 + s.re2);
  m.gf = 1.0 / s.rf;
  m.gr1 = 1.0 / s.r1;
  m.grc2 = 1.0 / s.rc2;
  m.gl = 1.0 / c.load_ohm;
  m.gre3 = s.same ? 1.0 / s.re3 : 0.0;
  m.ce3 = s.bypassed3() ? s.ce3 : 0.0;
  m.e2_grounded = s.bypassed3();
  static_cast<PairGains&>(m) = b;
  if (d.jfet) {
    m.cpi1 = cgs_at(d.j, b.u);
    m.cmu1 = cgd_at(d.j, b.vg - b.vd);
  } else {
    m.cpi1 = cbe_at(d.b, b.u);
    m.cmu1 = cbc_at(d.b, b.vg - b.vd);
  }
  m.cpi2 = cbe_at(d.b2, b.w);
  m.cmu2 = cbc_at(d.b2, s.same ? b.vd - b.vo : b.vo - b.vd);
  m.c_load = c.load_farads;
  if (c.load_farads > 0) m.c_out = s.cout;
  m.cf = s.cf;
  return m;
}

enum { G, E, D, O, E2 };
constexpr int GND = -1;  // ground, and the rail (an AC ground)

using Mat = Eigen::Matrix<cd, Eigen::Dynamic, Eigen::Dynamic, 0, 5, 5>;
using Vec = Eigen::Matrix<cd, Eigen::Dynamic, 1, 0, 5, 1>;
using RMat = Eigen::Matrix<double, Eigen::Dynamic, Eigen::Dynamic, 0, 5, 5>;
using RVec = Eigen::Matrix<double, Eigen::Dynamic, 1, 0, 5, 1>;

// Nodal stamps on a matrix whose ground is GND.
struct Stamps {
  Mat& a;
  void y(int p, int q, cd v) {  // an admittance between p and q
    if (p != GND) a(p, p) += v;
    if (q != GND) a(q, q) += v;
    if (p != GND && q != GND) {
      a(p, q) -= v;
      a(q, p) -= v;
    }
  }
  void g(int from, int to, int cp, int cn, double gm) {  // gm (v(cp) - v(cn)) from node `from` into `to`
    auto add = [&](int r, int col, double v) {
      if (r != GND && col != GND) a(r, col) += v;
    };
    add(from, cp, gm);
    add(from, cn, -gm);
    add(to, cp, -gm);
    add(to, cn, gm);
  }
  // A transistor's hybrid-pi (a JFET: gpi and gbce 0): ic = gm vbe + go vce, ib = gpi vbe +
  // gbce vce, cpi from base to emitter, cmu from base to collector.
  void device(int b, int c, int e, double gm, double gpi, double go, double gbce, cd s, double cpi, double cmu) {
    y(b, e, gpi + s * cpi);
    y(b, c, s * cmu);
    y(c, e, go);
    g(c, e, b, e, gm);
    g(b, e, c, e, gbce);
  }
};

// The network at s (0: mid-band, capacitances open; CF open there too); `load` false leaves
// the load off (the output impedance).
Mat hf_matrix(const PairSignal& m, cd s, bool load = true) {
  Mat a = Mat::Zero(m.n(), m.n());
  Stamps st{a};
  st.y(G, GND, m.gs + m.gb);
  st.y(E, GND, m.gleg);
  st.y(O, E, m.gf + s * m.cf);
  st.y(D, GND, m.gr1);
  st.y(O, GND, m.grc2 + (load ? load_branch(m.gl, m.c_load, m.c_out, s.imag()).y : cd(0.0)));
  st.device(G, D, E, m.gm1, m.gpi1, m.go1, m.gbce1, s, m.cpi1, m.cmu1);
  int e2 = GND;
  if (m.same && m.e2_grounded) {
    a(E2, E2) = 1.0;  // the node stands apart: CE3 shorts Q2's emitter to ground
  } else if (m.same) {
    e2 = E2;
    st.y(E2, GND, m.gre3 + s * m.ce3);
  }
  st.device(D, O, e2, m.gm2, m.gpi2, m.go2, m.gbce2, s, m.cpi2, m.cmu2);
  return a;
}

RMat mid_matrix(const PairSignal& m, bool load = true) { return hf_matrix(m, cd(0.0), load).real(); }

// A unit current into node `at` (the source's Norton current into the pin: gs per volt).
RVec unit_at(int n, int at, double v = 1.0) {
  RVec r = RVec::Zero(n);
  r(at) = v;
  return r;
}

// Below mid-band: the network with CIN, the bypass and COUT, the device capacitances open.
// The three capacitors' nodes fold into the network's (pin, common, main, output): the source
// reaches the pin through Rs and CIN in series, the common terminal's leg is RE1 in series with
// RE2 || CE, and the output drives the load through COUT. vout / vsig.
cd lf_transfer(const PairSignal& m, const PairParts& p, cd s) {
  PairSignal lf = m;
  lf.cpi1 = lf.cmu1 = lf.cpi2 = lf.cmu2 = lf.c_load = 0.0;
  const cd ycin = s * p.cin, ycout = s * p.cout;
  const cd y_src = m.gs * ycin / (m.gs + ycin);
  const cd z_leg = p.re2 > 0 ? p.re1 + 1.0 / (1.0 / p.re2 + s * p.ce) : cd(p.re1 + p.re2);
  const cd y_load = ycout * m.gl / (ycout + m.gl);
  lf.cf = 0.0;
  lf.e2_grounded = false;  // CE3 (when fitted) its own admittance here
  Mat a = hf_matrix(lf, s, false);
  a(G, G) += y_src - m.gs;
  a(E, E) += 1.0 / z_leg - m.gleg;
  a(O, O) += y_load;
  Stamps{a}.y(O, E, s * p.cf);
  Vec rhs = Vec::Zero(m.n());
  rhs(G) = y_src;
  const cd vo = a.partialPivLu().solve(rhs)(O);
  return vo * ycout / (ycout + m.gl);
}

cd hf_transfer(const PairSignal& m, double w) {
  Vec rhs = Vec::Zero(m.n());
  rhs(G) = m.gs;
  return hf_matrix(m, cd(0.0, w)).partialPivLu().solve(rhs)(O) * load_branch(m.gl, m.c_load, m.c_out, w).share;
}

// The angular frequency where a low-pass response falls 3 dB: below3db(w) true above it.
// Not below `floor_hz`: the load branch carries COUT's own corner too.
template <class Below>
double hf_crossing_hz(Below below3db, double lo, double hi, double floor_hz) {
  for (int i = 0; i < 40 && below3db(lo) && 0.25 * lo >= 2 * std::numbers::pi * floor_hz; ++i) lo *= 0.25;
  for (int i = 0; i < 40 && !below3db(hi); ++i) hi *= 4.0;
  if (!below3db(hi)) return 0.0;
  for (int i = 0; i < 40; ++i) {
    const double mid = std::sqrt(lo * hi);
    (below3db(mid) ? hi : lo) = mid;
  }
  return std::sqrt(lo * hi) / (2 * std::numbers::pi);
}

// The output excursions each device allows, from the mid-band solution x (per volt of the
// source) extended in a straight line: a quantity q0 + k * source, held at or above its limit
// (margin = q0 - limit), limits the side of the output it falls on.
void set_swing(Performance& p, const PairBias& b, const PairDevices& d, const PairParts& s, const RVec& x) {
  double up = std::numeric_limits<double>::infinity(), down = up;
  const double xo = x(O);
  auto limit = [&](double margin, double k) {
    const double per_out = k / xo;  // the quantity's change per volt of output
    margin = std::max(margin, 0.0);
    if (per_out < 0) up = std::min(up, margin / -per_out);
    if (per_out > 0) down = std::min(down, margin / per_out);
  };
  if (s.same) {
    const double xe2 = x(E2);
    limit(b.vo - b.ve2 - d.b2.vce_sat_v, xo - xe2);           // Q2 saturates
    limit(b.ic2, b.gm2 * (x(D) - xe2) + b.go2 * (xo - xe2));  // Q2 cuts off
  } else {
    limit(s.vcc - b.vo - d.b2.vce_sat_v, -xo);   // Q2 saturates
    limit(b.ic2, -(b.gm2 * x(D) + b.go2 * xo));  // Q2 cuts off
  }
  limit(b.i1, b.gm1 * (x(G) - x(E)) + b.go1 * (x(D) - x(E)));  // Q1 cuts off
  if (d.jfet) {
    limit(b.vd - b.ve - (b.u + d.j.vp_abs_v), x(D) - x(G));  // Q1 reaches its triode edge
    limit(-b.u, -(x(G) - x(E)));                             // Q1's gate conducts
  } else {
    limit(b.vd - b.ve - d.b.vce_sat_v, x(D) - x(E));  // Q1 saturates
  }
  p.swing_up_v = up;
  p.swing_down_v = down;
  p.swing_peak_v = std::min(up, down);
}

// Input-referred noise density: each source's current into the mid-band network, its share at
// the output summed in power, over the gain.
double input_noise(const PairSignal& m, const PairBias& b, const PairDevices& d, const Conditions& c, double gain) {
  const Eigen::PartialPivLU<RMat> lu(mid_matrix(m));
  const double kt4 = thermal_v2(1.0, c.celsius), q2 = 2.0 * devices::kCharge;
  auto out = [&](int from, int to) {  // |vo| per ampere driven from `from` into `to`
    RVec rhs = RVec::Zero(m.n());
    if (from != GND) rhs(from) -= 1.0;
    if (to != GND) rhs(to) += 1.0;
    return lu.solve(rhs)(O);
  };
  auto add = [](double& sum, double psd, double z) { sum += psd * z * z; };
  double v2 = 0;
  add(v2, kt4 * m.gs, out(GND, G));
  add(v2, kt4 * m.gb, out(GND, G));
  add(v2, kt4 * m.gleg, out(GND, E));
  add(v2, kt4 * m.gf, out(O, E));
  add(v2, kt4 * m.gr1, out(GND, D));
  add(v2, kt4 * (m.grc2 + m.gl), out(GND, O));
  if (d.jfet) {
    add(v2, (2.0 / 3.0) * kt4 * b.gm1, out(D, E));  // channel: 8kT gm / 3
  } else {
    add(v2, q2 * b.i1, out(D, E));
    add(v2, q2 * b.ib1, out(G, E));
  }
  const int e2 = m.same ? E2 : GND;
  if (m.same) add(v2, kt4 * m.gre3, out(GND, E2));
  add(v2, q2 * b.ic2, out(O, e2));
  add(v2, q2 * b.ib2, out(D, e2));
  return std::sqrt(v2) / std::abs(gain);
}

// The static transfer at mid-band as a power series in the source's deviation. Where a device
// limit sits close outside the interval (a Q1 a few tenths of a volt from saturation), a
// polynomial through points spread over +/- a gets the low orders wrong (seen: HD2 a ninth of
// the exact at a seventh of the swing), and those decide the distortion at the levels a
// request names: the first three orders come from differences at +/- a/8 and +/- a/4 (fourth-
// and second-order accurate), the orders four to seven from a least-squares fit of what is left
// at eight Chebyshev nodes over +/- a.
// The stage with its capacitors holding their DC and the load returned to the output's DC,
// driven from the source's deviation: the quasi-static sweeps (distortion, the swing's check)
// step through it.
struct Sweep {
  const PairParts& s;
  const PairDevices& d;
  const PairBias& b;
  Held h;
  double du = 0, dw = 0;  ///< u and w per volt of the source on the mid-band solution's line
  Sweep(const PairParts& s_, const PairDevices& d_, const PairBias& b_, const Conditions& c, const RVec& x,
        bool predict_ = false)
      : s(s_), d(d_), b(b_), predict(predict_) {
    if (predict) known.push_back({0.0, b.u, b.w});
    h.on = true;
    h.rs = c.source_ohm > 0 ? c.source_ohm : 1e-3;
    h.vg0 = b.vg;
    h.vx0 = b.vx;
    h.vo0 = b.vo;
    h.ve20 = b.ve2;
    h.rl = c.load_ohm;
    // u moves with the control pin less the common terminal; w against Q1's main terminal (the
    // rail fixes Q2's emitter) or with it less Q2's emitter (the same-polarity form).
    du = x(G) - x(E);
    dw = s.same ? x(D) - x(E2) : -x(D);
  }
  /// With `predict`, the points solved so far: the source's deviation, u and w (the bias
  /// point at none).
  bool predict;
  std::vector<std::array<double, 3>> known;
  /// The nodes at the source's deviation delta (false: no solution). Newton starts on the
  /// mid-band line; with `predict` (the distortion's sweep, inside the linear range), where
  /// the points already solved put (u, w): a parabola through the three nearest (the points
  /// lie close together on a smooth curve: a third fewer Newton steps than from the line
  /// alone, the same solution). Not for the swing's search, whose points cross into
  /// saturation and cut-off, where a start from the other side can find another solution.
  bool at(double delta, Nodes& nd) {
    h.delta = delta;
    double u = b.u + du * delta, w = b.w + dw * delta;
    if (predict && known.size() >= 3) {
      std::array<std::size_t, 3> near{};
      constexpr double kFar = std::numeric_limits<double>::infinity();
      std::array<double, 3> dist{kFar, kFar, kFar};
      for (std::size_t i = 0; i < known.size(); ++i) {
        double far = std::abs(known[i][0] - delta);
        std::size_t at = i;
        for (std::size_t k = 0; k < 3; ++k)
          if (far < dist[k]) {
            std::swap(far, dist[k]);
            std::swap(at, near[k]);
          }
      }
      const auto& p0 = known[near[0]];
      const auto& p1 = known[near[1]];
      const auto& p2 = known[near[2]];
      const double l0 = (delta - p1[0]) * (delta - p2[0]) / ((p0[0] - p1[0]) * (p0[0] - p2[0]));
      const double l1 = (delta - p0[0]) * (delta - p2[0]) / ((p1[0] - p0[0]) * (p1[0] - p2[0]));
      const double l2 = (delta - p0[0]) * (delta - p1[0]) / ((p2[0] - p0[0]) * (p2[0] - p1[0]));
      const double pu = l0 * p0[1] + l1 * p1[1] + l2 * p2[1], pw = l0 * p0[2] + l1 * p1[2] + l2 * p2[2];
      if (std::isfinite(pu) && std::isfinite(pw)) {
        u = pu;
        w = pw;
      }
    }
    if (!solve_nodes(s, d, h, u, w, nd)) return false;
    if (predict && std::none_of(known.begin(), known.end(), [&](const auto& k) { return k[0] == delta; }))
      known.push_back({delta, u, w});
    return true;
  }
  /// Whether both devices are still in their linear regions at nd (a current under a hundredth
  /// of its bias counts as cut off, as the exact solver's sweep counts it).
  bool linear(const Nodes& nd) const {
    if (!(nd.i1 > 0.01 * b.i1) || !(nd.ic2 > 0.01 * b.ic2)) return false;
    const double vce2 = s.same ? nd.vo - nd.ve2 : s.vcc - nd.vo;
    if (vce2 <= d.b2.vce_sat_v) return false;
    if (d.jfet) return nd.vd - nd.ve >= (nd.vg - nd.ve) + d.j.vp_abs_v && nd.vg - nd.ve <= 0.0;
    return nd.vd - nd.ve > d.b.vce_sat_v;
  }
};

// The straight line's swing checked on the quasi-static sweep (the same-polarity form): where a
// side's edge is past a device limit (Q1 closes on saturation faster than the line says as the
// output rises) the side is cut back, and where the sweep is still linear there (the loop keeps
// Q1 conducting well past the line's cut-off as the output falls) it is carried out, up to
// three times the line, each by bisection to the last linear point.
void check_swing(Performance& p, Sweep& sw, double gain) {
  for (double* side : {&p.swing_up_v, &p.swing_down_v}) {
    if (!std::isfinite(*side) || !(*side > 0)) continue;
    // The output up (in the N frame) for a source deviation of the gain's sign.
    const double sign = (side == &p.swing_up_v ? 1.0 : -1.0) * (gain > 0 ? 1.0 : -1.0);
    double lo = 0, hi = sign * *side / std::abs(gain);
    Nodes nd;
    if (sw.at(hi, nd) && sw.linear(nd)) {
      lo = hi;
      hi *= 3.0;
      if (sw.at(hi, nd) && sw.linear(nd)) {
        *side = std::abs(nd.vo - sw.b.vo);
        continue;
      }
    }
    for (int i = 0; i < 14; ++i) {
      const double mid = 0.5 * (lo + hi);
      ((sw.at(mid, nd) && sw.linear(nd)) ? lo : hi) = mid;
    }
    *side = sw.at(lo, nd) ? std::abs(nd.vo - sw.b.vo) : 0.0;
  }
  p.swing_peak_v = std::min(p.swing_up_v, p.swing_down_v);
}

Transfer static_transfer(const PairParts& s, const PairDevices& d, const PairBias& b, const Conditions& c, double a,
                         const RVec& x) {
  Transfer t;
  if (!(a > 0)) return t;
  Sweep sw(s, d, b, c, x, true);
  bool ok = true;
  auto out = [&](double delta) {  // the output's deviation for the source's
    Nodes nd;
    if (!sw.at(delta, nd)) ok = false;
    return nd.vo - b.vo;
  };
  const double e = a / 8;
  const double p1 = out(e), m1 = out(-e), p2 = out(2 * e), m2 = out(-2 * e);
  t.o[1] = (8 * (p1 - m1) - (p2 - m2)) / (12 * e);
  t.o[2] = (16 * (p1 + m1) - (p2 + m2)) / (24 * e * e);
  t.o[3] = ((p2 - m2) - 2 * (p1 - m1)) / (12 * e * e * e);
  constexpr int n = Transfer::kOrder + 1, high = Transfer::kOrder - 3;
  Eigen::Matrix<double, n, high> fit;
  Eigen::Matrix<double, n, 1> y;
  // The nodes from the middle outward, one side and then the other: each solve starts from a
  // parabola through points solved just before it nearby (Sweep::at), not one stretched from
  // a quarter of the range to nearly all of it (a fifth fewer Newton steps in the sweep).
  for (int i = 0; i < n; ++i) {
    const int k = i < n / 2 ? n / 2 - 1 - i : i;
    const double tk = std::cos(std::numbers::pi * (2 * k + 1) / (2.0 * n)), xk = a * tk;
    y(k) = out(xk) - ((t.o[3] * xk + t.o[2]) * xk + t.o[1]) * xk;
    double pw = tk * tk * tk;
    for (int j = 0; j < high; ++j) fit(k, j) = (pw *= tk);
  }
  if (!ok) return {};
  const Eigen::Matrix<double, high, 1> coef = fit.colPivHouseholderQr().solve(y);
  double an = a * a * a;  // the fit is in tk = x / a
  for (int j = 0; j < high; ++j) t.o[static_cast<std::size_t>(j + 4)] = coef(j) / (an *= a);
  return t;
}

}  // namespace

PairBias pair_bias(const PairParts& s, const PairDevices& d) {
  PairBias b;
  // A start near the answer: Q2's VEB (VBE) at a milliampere, Q1 carrying what R1 then takes.
  double w = d.b2.vt_v * std::log(1e-3 / d.b2.is_a);
  const double i1 = s.same ? std::max((s.vcc - w - 1e-3 * s.re3) / s.r1, 1e-7) : w / s.r1;
  double u =
      d.jfet ? devices::jfet_vgs_for_current(d.j, std::min(i1, 0.9 * d.j.idss_a)) : d.b.vt_v * std::log(i1 / d.b.is_a);
  // The search evaluates one stage many times over (corners, tolerance ends): the last
  // operating point this thread found is the better start when it is near (Newton lands on
  // the same point to 1e-11 V from either).
  thread_local double last_u = 0, last_w = 0;
  thread_local bool last_jfet = false, last_same = false;
  Nodes n;
  bool solved = false;
  if (last_w > 0 && last_jfet == d.jfet && last_same == s.same && std::abs(last_w - w) < 0.15 &&
      std::abs(last_u - u) < 0.3) {
    double uw = last_u, ww = last_w;
    solved = solve_nodes(s, d, Held{}, uw, ww, n);
    if (solved) {
      u = uw;
      w = ww;
    }
  }
  if (!solved && !solve_nodes(s, d, Held{}, u, w, n)) {
    last_w = 0;
    return b;
  }
  last_u = u;
  last_w = w;
  last_jfet = d.jfet;
  last_same = s.same;
  b.solved = true;
  b.u = u;
  b.w = w;
  b.i1 = n.i1;
  b.ib1 = n.ib1;
  b.ic2 = n.ic2;
  b.ib2 = n.ib2;
  b.vg = n.vg;
  b.ve = n.ve;
  b.vx = n.vx;
  b.vd = n.vd;
  b.vo = n.vo;
  b.ve2 = n.ve2;
  if (d.jfet) {
    const devices::JfetEval e = devices::jfet_eval(d.j, u, n.vd - n.ve);
    b.gm1 = e.gm_s;
    b.go1 = e.gds_s;
  } else {
    bjt_small_signal(d.b, u, n.vg - n.vd, b.gm1, b.gpi1, b.go1, b.gbce1);
  }
  bjt_small_signal(d.b2, w, s.same ? n.vd - n.vo : n.vo - n.vd, b.gm2, b.gpi2, b.go2, b.gbce2);
  return b;
}

Performance pair_evaluate(const PairParts& s, const PairDevices& d, const Conditions& c, Detail detail, PairBias& b) {
  Performance p;
  b = pair_bias(s, d);
  if (!b.solved || !(b.i1 > 1e-9) || !(b.ic2 > 1e-9)) {
    p.problem = b.solved
                    ? "cut off: the feedback finds no point where both devices conduct"
                    : "without an operating point: the feedback pair does not settle (a device saturated or cut off)";
    return p;
  }
  p.valid = true;
  p.bias_current_a = b.i1;
  p.v_in = b.vg;
  p.v_common = b.ve;
  p.v_out = b.vd;
  p.v_out2 = b.vo;
  p.q2_current_a = b.ic2;
  p.q2_v_main = b.vce2();
  // From the rail: R1's current, Q2's emitter current (complementary) or RC2's (same
  // polarity), the divider's.
  p.supply_current_a = (s.vcc - b.vd) / s.r1 + (s.same ? (s.vcc - b.vo) / s.rc2 : b.ic2 + b.ib2) +
                       (s.top > 0 ? (s.vcc - b.vg) / s.top : 0.0);
  const double vmain1 = b.vd - b.ve;
  if (d.jfet) {
    const double edge = b.u + d.j.vp_abs_v;
    if (vmain1 < edge) p.problem = fmt::format("Q1 in the triode region: VDS {:.2f} V < VGS-VP {:.2f} V", vmain1, edge);
    if (b.u > 0.0) p.problem = fmt::format("Q1's gate conducts: VGS {:+.2f} V", b.u);
  } else if (vmain1 <= d.b.vce_sat_v) {
    p.problem = fmt::format("Q1 saturated: VCE {:.2f} V", vmain1);
  }
  if (p.problem.empty() && b.vce2() <= d.b2.vce_sat_v) p.problem = fmt::format("Q2 saturated: VCE {:.2f} V", b.vce2());
  p.active = p.problem.empty();

  const PairSignal m = pair_signal(s, d, b, c);
  const RVec x = mid_matrix(m).partialPivLu().solve(unit_at(m.n(), G, m.gs));
  p.gain = x(O);
  p.zin_ohm = x(G) / ((1.0 - x(G)) * m.gs);
  p.zout_ohm = mid_matrix(m, false).partialPivLu().solve(unit_at(m.n(), O))(O);
  // The input capacitance: Cgd (Cmu) whole, Cgs (Cpi) bootstrapped by the common terminal.
  p.c_in_f = m.cmu1 + m.cpi1 * std::max(0.0, 1.0 - x(E) / x(G));
  set_swing(p, b, d, s, x);
  if (s.same) {
    Sweep sw(s, d, b, c, x);
    check_swing(p, sw, p.gain);
  }
  if (screened_out(p, c)) return p;

  const double mid = std::abs(p.gain);
  auto lf_below = [&](double w) { return std::abs(lf_transfer(m, s, cd(0.0, w))) < mid / std::sqrt(2.0); };
  auto hf_below = [&](double w) { return std::abs(hf_transfer(m, w)) < mid / std::sqrt(2.0); };
  if (detail == Detail::full) {
    const double p_in = 1.0 / (s.cin * (1.0 / m.gs + p.zin_ohm)), p_out = 1.0 / (s.cout * (c.load_ohm + p.zout_ohm));
    const double p_e = (s.bypassed() ? 1.0 / (s.ce * par(s.re1, s.re2)) : 0.0) + (s.bypassed3() ? b.gm2 / s.ce3 : 0.0);
    p.f_low_hz = lf_crossing_hz(lf_below, 0.25 * std::max({p_in, p_out, p_e}), 4.0 * (p_in + p_out + p_e));
    p.f_high_hz = hf_crossing_hz(hf_below, std::max(1e3, 6 * std::numbers::pi * p.f_low_hz), 1e7, 3.0 * p.f_low_hz);
  }
  if (c.band_lo_hz > 0)
    p.loss_lo_db = std::max(
        0.0, -20.0 * std::log10(std::abs(lf_transfer(m, s, cd(0.0, 2 * std::numbers::pi * c.band_lo_hz))) / mid));
  if (c.band_hi_hz > 0)
    p.loss_hi_db =
        std::max(0.0, -20.0 * std::log10(std::abs(hf_transfer(m, 2 * std::numbers::pi * c.band_hi_hz)) / mid));

  finish_distortion(p, c, [&] { return static_transfer(s, d, b, c, 0.75 * p.swing_peak_v / mid, x); });
  if (detail != Detail::core) {
    if (detail == Detail::full) p.noise_v_rthz = input_noise(m, b, d, c, p.gain);
    p.stress = stress_list();
    auto res = [&](std::size_t role, double r, double v) {
      if (r > 0) p.stress.push_back(res_stress(role, v * v / r));
    };
    res(kTop, s.top, s.vcc - b.vg);
    res(kBottom, s.bottom, b.vg);
    res(kR1, s.r1, s.vcc - b.vd);
    res(kRC2, s.rc2, s.same ? s.vcc - b.vo : b.vo);
    res(kRE3, s.re3, b.ve2);
    if (s.bypassed3()) p.stress.push_back(cap_stress(kCe3, b.ve2));
    res(kRF, s.rf, b.vo - b.ve);
    res(kLeg1, s.re1, b.ve - b.vx);
    res(kLeg2, s.re2, b.vx);
    if (s.bypassed()) p.stress.push_back(cap_stress(kBypass, b.vx));
    p.stress.push_back(cap_stress(kCin, b.vg));
    p.stress.push_back(cap_stress(kCout, b.vo));
    if (s.cf > 0) p.stress.push_back(cap_stress(kCf, b.vo - b.ve));
  }
  return p;
}

Values pair_capacitors(const Values& v, const Transistor& q, const Conditions& c, double f, bool same) {
  Values t = v;
  t[kCin] = cap_for(c.source_ohm + input_divider_ohm(v), f / 6);
  t[kCout] = cap_for(c.load_ohm, f / 6);
  // The closed-loop gain follows 1 + RF / (RE1 + RE2 || ZCE): it shelves down where ZCE
  // reaches RE1 || RE2, so the bypass's corner goes there.
  t[kBypass] = v[kLeg2] > 0 ? cap_for(par(v[kLeg1], v[kLeg2]), f / 4) : 0.0;
  // Q2's emitter bypass (the same-polarity form) lifts Q2's gain from RC2 / RE3 to gm2 RC2,
  // and the loop gain with it; inside the loop its reactance only has to stay small against
  // what drives the emitter, 1/gm2 + R1/(hFE2 + 1), while the loop still has gain to spare: its
  // corner through ten times that at a quarter of f (at f the loop gain is down about
  // threefold, the closed-loop gain a few per cent; the band's loss is checked as always).
  t[kCe3] = 0.0;
  if (same && v[kRE3] > 0 && q.paired) {
    const PairBias b = pair_bias(pair_parts(t, c.supply_v, true), pair_devices(q));
    if (b.solved && b.gm2 > 0) {
      const double r_drive = 1.0 / b.gm2 + v[kR1] / (q.bjt2.bf + 1.0);
      t[kCe3] = cap_for(par(v[kRE3], 10.0 * r_drive), f / 4);
    }
  }
  return t;
}

double input_divider_ohm(const Values& v) { return divider_ohm(v[kTop], v[kBottom]); }

double nearest_one(const ValueSource& shelf, double target) {
  std::vector<double> found;
  shelf.nearest(target, 1, found);
  return found.empty() ? 0.0 : found.front();
}

void pair_feedback_legs(Values v, const ValueSource& shelf, const Goal& g, const Conditions& c, const PairPlan& plan,
                        const std::function<void(const Values&)>& emit) {
  // The input impedance is at most the divider's to ground (tests/stages/pruning_test.cpp): a
  // divider below the impedance asked leaves every set out, counted as stopped there
  // (Goal::left_out); a probe keeps them. (The shelf's nearest legs can fall well below the
  // divider the steps aimed at: a 10 M input asked with nothing above 10 M on the shelf.)
  if (!g.probe && g.zin_min_ohm > 0 && input_divider_ohm(v) < g.zin_min_ohm) {
    if (g.left_out) {
      Goal all = g;
      all.zin_min_ohm = 0;
      pair_feedback_legs(v, shelf, all, c, plan, [&](const Values&) { ++g.left_out->zin; });
    }
    return;
  }
  const double i1 = plan.i1, ve = plan.ve, vo = plan.vo, vcc = c.supply_v;
  if (!(i1 > 0) || !(ve > 0) || !(vo > ve + 0.5) || vo > vcc - 0.5) return;
  if (plan.same && !(plan.vd - plan.vbe2 > 0.2 && plan.vd < vo)) return;
  // The ratio RF / RE1 sets the gain and RE1 + RE2 the DC: those get every near value the
  // shelf offers; Q1's and Q2's currents take the nearest one.
  struct Drive {
    double r1, rc2, re3;
  };
  std::vector<Drive> drives;
  // Q2 at one to ten milliamperes: the more current, the larger Q2's gm and the loop gain.
  // Its load (RC2 to ground below the output, or to the rail above it) carries the output's
  // excursion toward Q2's cut-off.
  const double load_volts = plan.same ? vcc - vo : vo;
  for (double ic2 : {1e-3, 3e-3, 10e-3}) {
    if (g.max_current_a > 0 && ic2 + 1.2 * i1 > g.max_current_a) continue;
    if (g.swing_peak_v > 0 && ic2 * par(load_volts / ic2, c.load_ohm) < 1.2 * g.swing_peak_v) continue;
    Drive d{};
    d.rc2 = nearest_one(shelf, load_volts / ic2);
    if (plan.same) {
      d.r1 = nearest_one(shelf, (vcc - plan.vd) / (i1 + ic2 / plan.q2_hfe));
      d.re3 = nearest_one(shelf, (plan.vd - plan.vbe2) / ic2);
      if (!(d.re3 > 0)) continue;
    } else {
      d.r1 = nearest_one(shelf, plan.veb2 / i1);
    }
    if (d.r1 > 0 && d.rc2 > 0 && std::none_of(drives.begin(), drives.end(), [&](const Drive& o) {
          return o.r1 == d.r1 && o.rc2 == d.rc2 && o.re3 == d.re3;
        }))
      drives.push_back(d);
  }
  // RF carrying a fifth of Q1's current to twice it: the larger RF, the larger RE1 and the
  // smaller the bypass capacitor; the smaller, the larger the loop gain (RF loads Q2's
  // collector less than RE1's share of it feeds back) and the lower the DC gain that moves the
  // operating point.
  std::vector<double> rfs;
  for (double k : {0.2, 0.6, 2.0}) shelf.nearest((vo - ve) / (k * i1), 1, rfs);
  unique_values(rfs);
  for (double rf : rfs) {
    const double re_total = ve / (i1 + (vo - ve) / rf);
    // RE1 for the ratio, and for a ratio a little above it: the finite loop gain takes
    // 1/(1 + T) of it back, and T (5 to 50 here) is not known before the evaluation.
    std::vector<double> re1s;
    for (double over : {1.0, 1.08})
      if (g.breadth >= 1.0 || over == 1.0) shelf.nearest(rf / (over * g.gain - 1.0), 1, re1s);
    unique_values(re1s);
    for (double re1 : re1s) {
      std::vector<std::pair<double, double>> legs;
      if (re_total > 0.8 * re1 && re_total < 1.25 * re1) legs.emplace_back(re1, 0.0);
      if (re_total >= 1.25 * re1) {
        std::vector<double> re2s;
        shelf.nearest(re_total - re1, 1, re2s);
        for (double re2 : re2s) legs.emplace_back(re1, re2);
      }
      for (auto [a, b] : legs)
        for (const Drive& d : drives) {
          v[kR1] = d.r1;
          v[kRC2] = d.rc2;
          if (plan.same) v[kRE3] = d.re3;
          v[kRF] = rf;
          v[kLeg1] = a;
          v[kLeg2] = b;
          emit(v);
        }
    }
  }
}

// Design (common practice for the pair): Q1 at a tenth of a milliampere to a milliampere,
// its emitter at a tenth or a fifth of the supply (a larger RE1 + RE2 lowers the DC gain that
// carries VBE's spread to the output), the base divider carrying ten base currents or as
// light as the input impedance asked allows. The complementary form puts the output halfway
// up the supply. The same-polarity form gives Q1 a volt or a tenth of the supply across it
// (its collector swings only by the output's swing over Q2's gain), puts Q2's emitter a VBE
// below Q1's collector and the output halfway between Q2's emitter and the rail. The rest
// from the shared feedback step.
void propose_bjt_pair(const Goal& g, const Transistor& q, const Conditions& c, const ValueSource& shelf, bool same,
                      const std::function<void(const Values&)>& emit) {
  if ((g.gain < 1.5 && !g.probe) || !q.paired) return;
  const auto& t1 = q.bjt;
  const auto& t2 = q.bjt2;
  const double vcc = c.supply_v;
  const double vbe2 = t2.vt_v * std::log(2e-3 / t2.is_a);
  const double r_lo = std::max(1.06 * g.zin_min_ohm, 1e3);
  for (double i1 : {0.1e-3, 0.3e-3, 1e-3}) {
    const double ib1 = i1 / t1.bf, vbe1 = t1.vt_v * std::log(i1 / t1.is_a);
    const double vo_c = 0.5 * (vcc - t2.vce_sat_v);
    // A low gain needs the emitter higher: KCL at the emitter puts RE1 + RE2 at or above RE1
    // only for ve (G + 1) >= 2 vo or so (RF carrying Q1's current).
    std::vector<double> ves = {std::max(0.1 * vcc, 0.6), 0.2 * vcc};
    if (const double low_gain = 2.5 * vo_c / (g.gain + 1.0); low_gain > 0.2 * vcc)
      ves.push_back(std::min(low_gain, vo_c - 1.0));
    for (double ve : ves) {
      std::vector<PairPlan> plans;
      if (same) {
        for (double vce1 : {1.0, std::max(2.0, 0.2 * vcc)}) {
          PairPlan p{i1, ve, 0.0, 0.0, true, ve + vce1, vbe2, t2.bf};
          p.vo = 0.5 * (vcc + p.vd - vbe2 + t2.vce_sat_v);
          plans.push_back(p);
          if (g.breadth < 1.0) break;
        }
      } else {
        plans.push_back(PairPlan{i1, ve, vo_c, vbe2});
      }
      const double vb = ve + vbe1;
      std::vector<double> rths = {std::max(r_lo, vb / (10.0 * ib1))};
      if (g.breadth >= 1.0) rths.push_back(std::max(r_lo, vb / (3.0 * ib1)));
      unique_values(rths);
      for (double rth : rths) {
        const double vth = vb + ib1 * rth;
        if (vth > 0.8 * vcc) continue;
        // The divider's nearest values: the loop holds the output whatever the base's last
        // per cent.
        Values v;
        v[kTop] = nearest_one(shelf, rth * vcc / vth);
        v[kBottom] = nearest_one(shelf, rth * vcc / (vcc - vth));
        if (v[kTop] > 0 && v[kBottom] > 0)
          for (const PairPlan& p : plans) pair_feedback_legs(v, shelf, g, c, p, emit);
      }
    }
  }
}

namespace {

// Every value available: the design equations' own targets.
class IdealValues final : public ValueSource {
 public:
  void nearest(double target, std::size_t n, std::vector<double>& out) const override {
    if (n > 0 && target > 0 && std::isfinite(target)) out.push_back(target);
  }
  void spread(double lo, double hi, std::size_t max_n, std::vector<double>& out) const override {
    if (!(lo > 0) || !(hi >= lo) || max_n == 0) return;
    for (std::size_t i = 0; i < max_n; ++i)
      out.push_back(max_n == 1 ? lo : lo * std::pow(hi / lo, static_cast<double>(i) / static_cast<double>(max_n - 1)));
  }
};

}  // namespace

Values pair_reference(const Topology& t, const Transistor& q, const Conditions& c, const ReferenceKnobs& k) {
  Goal g;
  g.gain = 3.0 * std::pow(10.0, std::clamp(k.degeneration, 0.0, 1.0));
  g.f_low_hz = 6.0 * k.f_corner_hz;
  Values best;
  double best_err = std::numeric_limits<double>::infinity();
  t.propose(g, q, c, IdealValues{}, [&](const Values& proposal) {
    const Values v = pair_capacitors(proposal, q, c, g.f_low_hz, t.second_device() == SecondDevice::same);
    const Performance p = t.evaluate(v, q, c, Detail::core);
    if (!p.active) return;
    // A design that holds its bias over either device's hFE at half and twice the piece's
    // (the base divider's drop and the loop's DC gain move the output with it).
    for (double k1 : {0.5, 2.0})
      for (double k2 : {0.5, 2.0}) {
        Transistor qs = q;
        qs.bjt.bf *= k1;
        qs.bjt2.bf *= k2;
        if (!t.evaluate(v, qs, c, Detail::core).active) return;
      }
    // Near the gain asked, and of those the stiffest loop: the gain closest to the ratio
    // 1 + RF/RE1 (its shortfall is 1/(1 + T)).
    const double ratio = 1.0 + v[kRF] / v[kLeg1];
    const double err = std::abs(std::log(std::abs(p.gain) / g.gain)) + (ratio / std::abs(p.gain) - 1.0);
    if (err < best_err) {
      best_err = err;
      best = v;
    }
  });
  return best;
}

// ---------------------------------------------------------------------------------------
// What both pair topologies share as a Topology.

namespace {
constexpr InnerNet kPairInner[] = {{"x", "leg junction", 4, {}}, {"collector2", "Q2 collector", 1, {}, 3.5}};
constexpr InnerNet kSameInner[] = {
    {"x", "leg junction", 4, {}}, {"collector2", "Q2 collector", 1, {}, 3.5}, {"emitter2", "Q2 emitter", 4.5, {}, 3.5}};
}  // namespace

std::span<const InnerNet> FeedbackPair::inner_nets() const {
  if (same()) return kSameInner;
  return kPairInner;
}

LoadLine FeedbackPair::load_line(const Values& v, const Conditions&) const {
  // Q1's own lines: R1 to the rail, Q2's base across it (its input resistance is far above
  // R1's at the currents the pair runs), the common leg.
  LoadLine l;
  l.r_dc_ohm = v[kR1];
  l.r_ac_ohm = v[kR1];
  l.r_common_ohm = v[kLeg1] + v[kLeg2];
  l.r_unbypassed_ohm = v[kLeg1] + (v[kBypass] > 0 ? 0.0 : v[kLeg2]);
  return l;
}

Values FeedbackPair::capacitor_targets(const Values& v, const Transistor& q, const Conditions& c, double f) const {
  return pair_capacitors(v, q, c, f, same());
}

circuit::Circuit FeedbackPair::wire(const Values& v, const Transistor& q, const Conditions& c) const {
  if (!q.paired) throw InputError(fmt::format("{}: no second transistor (Q2) given", name()));
  auto net = bench(c);
  const auto r = roles_;
  const std::string pin(nodes_[0]), common(nodes_[1]), main(nodes_[2]);
  add_role(net, r, v, kCin, pin, "in");
  add_role(net, r, v, kTop, "vdd", pin);
  add_role(net, r, v, kBottom, pin, "0");
  add_role(net, r, v, kR1, "vdd", main);
  if (devices::is_jfet(q.kind))
    net.jfet("Q1", main, pin, common, q.jfet);
  else
    net.bjt("Q1", main, pin, common, q.bjt);
  if (same()) {
    // Q2: base on Q1's main terminal, emitter to ground through RE3, load from the rail.
    net.bjt("Q2", "collector2", main, "emitter2", q.bjt2);
    add_role(net, r, v, kRE3, "emitter2", "0");
    add_role(net, r, v, kCe3, "emitter2", "0");
    add_role(net, r, v, kRC2, "vdd", "collector2");
  } else {
    // Q2: base on Q1's main terminal, emitter on the rail (the complementary device).
    net.bjt("Q2", "collector2", main, "vdd", q.bjt2);
    add_role(net, r, v, kRC2, "collector2", "0");
  }
  add_role(net, r, v, kRF, "collector2", common);
  add_role(net, r, v, kCf, "collector2", common);
  add_role(net, r, v, kLeg1, common, v[kLeg2] > 0 ? "x" : "0");
  add_role(net, r, v, kLeg2, "x", "0");
  if (v[kLeg2] > 0) add_role(net, r, v, kBypass, "x", "0");
  add_role(net, r, v, kCout, "collector2", "out");
  return net;
}

Performance FeedbackPair::evaluate_n(const Values& v, const Transistor& q, const Conditions& c, Detail d) const {
  PairBias b;
  if (!q.paired) {
    Performance p;
    p.problem = "a feedback pair needs its second transistor";
    return p;
  }
  return pair_evaluate(pair_parts(v, c.supply_v, same()), pair_devices(q), c, d, b);
}

}  // namespace shelfstage::stages::detail
