// Harmonic distortion by power series of the device law on the mid-band network.
#include "distortion.hpp"

#include "roots.hpp"

#include <cmath>
#include <limits>
#include <utility>

namespace shelfstage::stages::detail {

namespace {

constexpr int kN = Transfer::kOrder;

// Harmonic m's share of cos^n: 2^(1-n) C(n, (n-m)/2) for n - m even and >= 0, else 0.
constexpr std::array<std::array<double, kN + 1>, kN + 1> make_shares() {
  std::array<std::array<double, kN + 1>, kN + 1> t{};
  for (int n = 1; n <= kN; ++n)
    for (int m = n; m >= 1; m -= 2) {
      const int k = (n - m) / 2;
      double c = 1;
      for (int i = 1; i <= k; ++i) c = c * (n - k + i) / i;
      double p = 1;
      for (int i = 1; i < n; ++i) p *= 0.5;
      t[n][m] = c * p;
    }
  return t;
}
constexpr auto kShare = make_shares();

}  // namespace

DeviceOrders jfet_orders(const devices::JfetInstance& q, double vov_v, double vds_v) {
  DeviceOrders k;
  k.main_u[2] = q.beta() * (1.0 + q.lambda_per_v * vds_v);
  k.main_uw[1] = 2.0 * q.beta() * vov_v * q.lambda_per_v;
  k.main_uw[2] = q.beta() * q.lambda_per_v;
  return k;
}

DeviceOrders bjt_orders(double ic_a, double ib_a, double vt_v, double ro_ohm) {
  const double go = std::isfinite(ro_ohm) && ro_ohm > 0 ? 1.0 / ro_ohm : 0.0;
  DeviceOrders k;
  double inv_fact_vt = 1.0;  // 1 / (a! VT^a)
  double prev = 1.0;         // 1 / ((a-1)! VT^(a-1))
  for (int a = 1; a <= kN; ++a) {
    prev = inv_fact_vt;
    inv_fact_vt /= a * vt_v;
    if (a >= 2) {
      k.main_u[a] = ic_a * inv_fact_vt - go * prev;
      k.control_u[a] = ib_a * inv_fact_vt;
    }
    k.main_uw[a] = go * inv_fact_vt;
  }
  return k;
}

namespace {

// Solves the 3x3 mid-band nodal system (base, emitter, collector) for right-hand sides.
struct Network {
  double lu[3][3];
  int perm[3];
  explicit Network(const HybridPi& m) {
    const double rows[3][3] = {
        {m.g_src + m.gpi + m.g_f, -m.gpi, -m.g_f},
        {-m.gpi - m.gm, m.gpi + m.gm + m.go + m.g_e, -m.go},
        {m.gm - m.g_f, -m.gm - m.go, m.go + m.g_c + m.g_f},
    };
    for (int r = 0; r < 3; ++r) {
      perm[r] = r;
      for (int c = 0; c < 3; ++c) lu[r][c] = rows[r][c];
    }
    for (int col = 0; col < 3; ++col) {  // LU with partial pivoting, once for every order
      int piv = col;
      for (int r = col + 1; r < 3; ++r)
        if (std::abs(lu[r][col]) > std::abs(lu[piv][col])) piv = r;
      if (piv != col) {
        std::swap(lu[col], lu[piv]);
        std::swap(perm[col], perm[piv]);
      }
      for (int r = col + 1; r < 3; ++r) {
        lu[r][col] /= lu[col][col];
        for (int c = col + 1; c < 3; ++c) lu[r][c] -= lu[r][col] * lu[col][c];
      }
    }
  }
  void solve(const double rhs[3], double x[3]) const {
    double y[3];
    for (int r = 0; r < 3; ++r) {
      y[r] = rhs[perm[r]];
      for (int c = 0; c < r; ++c) y[r] -= lu[r][c] * y[c];
    }
    for (int r = 2; r >= 0; --r) {
      double sum = y[r];
      for (int c = r + 1; c < 3; ++c) sum -= lu[r][c] * x[c];
      x[r] = sum / lu[r][r];
    }
  }
};

}  // namespace

Transfer transfer(const HybridPi& m, const DeviceOrders& k) {
  const Network net(m);
  Transfer t;
  // u[n], w[n]: the order-n coefficients of the control and main voltages.
  std::array<double, kN + 1> u{}, w{};
  auto take = [&](const double x[3], int n) {
    u[n] = x[0] - x[1];
    w[n] = x[2] - x[1];
    t.o[n] = m.out_at_emitter ? x[1] : x[2];
  };
  {  // first order: a unit Thevenin source behind g_src drives the base (gate)
    const double rhs[3] = {m.g_src, 0.0, 0.0};
    double x[3];
    net.solve(rhs, x);
    take(x, 1);
  }
  if (t.o[1] == 0.0) return {};
  // pw[a][j]: coefficient of s^j in U(s)^a, from the orders known so far.
  std::array<std::array<double, kN + 1>, kN + 1> pw{};
  for (int n = 2; n <= kN; ++n) {
    for (int a = 1; a <= kN; ++a) pw[a].fill(0.0);
    for (int j = 1; j < n; ++j) pw[1][j] = u[j];
    for (int a = 2; a <= n; ++a)
      for (int j = a; j <= n; ++j) {
        double sum = 0;
        for (int i = 1; i <= j - a + 1; ++i) sum += u[i] * pw[a - 1][j - i];
        pw[a][j] = sum;
      }
    // The device's currents of order n: u^a w terms need U^a's order-j part and w's n-j.
    double i_main = 0, i_ctrl = 0;
    for (int a = 2; a <= n; ++a) {
      i_main += k.main_u[a] * pw[a][n];
      i_ctrl += k.control_u[a] * pw[a][n];
    }
    for (int a = 1; a < n; ++a) {
      if (k.main_uw[a] == 0.0) continue;
      double sum = 0;
      for (int j = a; j < n; ++j) sum += pw[a][j] * w[n - j];
      i_main += k.main_uw[a] * sum;
    }
    // Injected as the device's extra currents: i_main drain to source inside the device,
    // i_ctrl gate (base) to source.
    const double rhs[3] = {-i_ctrl, i_main + i_ctrl, -i_main};
    double x[3];
    net.solve(rhs, x);
    take(x, n);
  }
  return t;
}

double thd_at_input(const Transfer& t, double a) {
  const auto h = t.harmonics_at_input(a);
  double sum = 0;
  for (int m = 2; m <= Transfer::kOrder; ++m) sum += h[m] * h[m];
  double an = 1.0;
  for (int n = 0; n < Transfer::kOrder; ++n) an *= a;
  return (std::sqrt(sum) + std::abs(t.o[Transfer::kOrder]) * an) / std::abs(h[1]);
}

void finish_distortion(Performance& p, const Transfer& t, const Conditions& c) {
  p.transfer = t;
  p.clip_peak_v = p.swing_peak_v;
  const double a = t.input_for(c.hd2_peak_v);
  if (a > 0) {
    const auto h = t.harmonics_at_input(a);
    p.hd2 = std::abs(h[2] / h[1]);
    p.hd3 = std::abs(h[3] / h[1]);
    p.thd = thd_at_input(t, a);
  } else if (!t.empty() && c.hd2_peak_v > 0) {
    p.hd2 = p.hd3 = p.thd = 1.0;  // the series cannot reach the level: nothing to promise there
  }
  if (c.max_thd > 0) p.swing_peak_v = t.level_for(c.max_thd, p.clip_peak_v);
}

}  // namespace shelfstage::stages::detail

namespace shelfstage::stages {

std::array<double, Transfer::kOrder + 1> Transfer::harmonics_at_input(double a) const {
  std::array<double, kOrder + 1> h{};
  double an = 1.0;
  for (int n = 1; n <= kOrder; ++n) {
    an *= a;
    const double term = o[n] * an;
    for (int m = n; m >= 1; m -= 2) h[m] += term * detail::kShare[n][m];
  }
  return h;
}

double Transfer::input_for(double level) const {
  if (empty() || !(level > 0)) return 0.0;
  // Newton on the fundamental's magnitude, f(a) = sum over odd n of o[n] s[n] a^n, from the
  // linear guess; the fundamental's compression or expansion is mild wherever the series holds.
  const double sign = o[1] > 0 ? 1.0 : -1.0;
  double a = level / std::abs(o[1]);
  for (int i = 0; i < 30; ++i) {
    double f = 0, df = 0, an1 = 1.0;  // an1 = a^(n-1)
    for (int n = 1; n <= kOrder; ++n) {
      if (n % 2 == 1) {
        const double c = o[n] * detail::kShare[n][1];
        f += c * an1 * a;
        df += n * c * an1;
      }
      an1 *= a;
    }
    f *= sign;
    df *= sign;
    if (!(df > 0)) return 0.0;  // the fundamental no longer grows with the input
    const double next = a - (f - level) / df;
    if (!std::isfinite(next) || next <= 0) return 0.0;
    if (std::abs(next - a) <= 1e-10 * a) return next;
    a = next;
  }
  return a;
}

double Transfer::thd(double level) const {
  const double a = input_for(level);
  return a > 0 ? detail::thd_at_input(*this, a) : 0.0;
}

double Transfer::level_for(double bound, double max_level) const {
  if (empty() || !(bound > 0)) return max_level;
  if (!(max_level > 0)) return 0.0;
  const double a_max = input_for(max_level);
  auto excess = [&](double a) { return std::log(detail::thd_at_input(*this, a) / bound); };
  if (a_max > 0 && excess(a_max) <= 0) return max_level;
  // THD grows with the input wherever the series holds: a bracket below the input at
  // max_level (or, when none is found there, the linear one), then regula falsi (Illinois) on
  // log THD against log input, where THD is nearly a power of the input.
  double hi = a_max > 0 ? a_max : max_level / std::abs(o[1]);
  double f_hi = excess(hi);
  double lo = hi, f_lo = f_hi;
  for (int i = 0; i < 60 && f_lo > 0; ++i) {
    hi = lo;
    f_hi = f_lo;
    lo *= 0.25;
    f_lo = excess(lo);
  }
  if (f_lo > 0) return 0.0;
  detail::Bracket b{std::log(lo), f_lo, std::log(hi), f_hi};
  detail::illinois(
      b, [&](double x) { return excess(std::exp(x)); }, 1e-7, 60);
  return std::min(max_level, std::abs(harmonics_at_input(std::exp(b.lo))[1]));
}

}  // namespace shelfstage::stages
