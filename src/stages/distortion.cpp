// Second-harmonic distortion by second-order expansion of the device law on the mid-band network.
#include "distortion.hpp"

#include <cmath>
#include <utility>

namespace shelfstage::stages::detail {

SecondOrder jfet_second_order(const devices::JfetInstance& q, double vov_v, double vds_v) {
  SecondOrder k;
  k.k_uu = q.beta() * (1.0 + q.lambda_per_v * vds_v);
  k.k_uw = 2.0 * q.beta() * vov_v * q.lambda_per_v;
  return k;
}

SecondOrder bjt_second_order(double ic_a, double ib_a, double vt_v, double ro_ohm) {
  const double go = std::isfinite(ro_ohm) && ro_ohm > 0 ? 1.0 / ro_ohm : 0.0;
  SecondOrder k;
  k.k_uu = ic_a / (2.0 * vt_v * vt_v) - go / vt_v;
  k.k_uw = go / vt_v;
  k.k_b = ib_a / (2.0 * vt_v * vt_v);
  return k;
}

namespace {

// Solves the 3x3 mid-band nodal system (base, emitter, collector) for a right-hand side.
struct Network {
  double a[3][3];
  explicit Network(const HybridPi& m) {
    const double rows[3][3] = {
        {m.g_src + m.gpi, -m.gpi, 0.0},
        {-m.gpi - m.gm, m.gpi + m.gm + m.go + m.g_e, -m.go},
        {m.gm, -m.gm - m.go, m.go + m.g_c},
    };
    for (int r = 0; r < 3; ++r)
      for (int c = 0; c < 3; ++c) a[r][c] = rows[r][c];
  }
  void solve(const double rhs[3], double x[3]) const {
    double m[3][4];
    for (int r = 0; r < 3; ++r) {
      for (int c = 0; c < 3; ++c) m[r][c] = a[r][c];
      m[r][3] = rhs[r];
    }
    for (int col = 0; col < 3; ++col) {  // Gaussian elimination with partial pivoting
      int piv = col;
      for (int r = col + 1; r < 3; ++r)
        if (std::abs(m[r][col]) > std::abs(m[piv][col])) piv = r;
      if (piv != col)
        for (int c = 0; c < 4; ++c) std::swap(m[col][c], m[piv][c]);
      for (int r = col + 1; r < 3; ++r) {
        const double f = m[r][col] / m[col][col];
        for (int c = col; c < 4; ++c) m[r][c] -= f * m[col][c];
      }
    }
    for (int r = 2; r >= 0; --r) {
      double sum = m[r][3];
      for (int c = r + 1; c < 3; ++c) sum -= m[r][c] * x[c];
      x[r] = sum / m[r][r];
    }
  }
};

}  // namespace

double second_harmonic(const HybridPi& m, const SecondOrder& k, double out_peak_v) {
  const Network net(m);
  // First order: a unit Thevenin source behind g_src drives the base (gate).
  const double rhs1[3] = {m.g_src, 0.0, 0.0};
  double x1[3];
  net.solve(rhs1, x1);
  const double u1 = x1[0] - x1[1], w1 = x1[2] - x1[1];
  const double o1 = m.out_at_emitter ? x1[1] : x1[2];
  // Second order: the device's extra currents, i2 drain to source inside the device and
  // ib2 gate (base) to source, injected into the same network.
  const double i2 = k.k_uu * u1 * u1 + k.k_uw * u1 * w1;
  const double ib2 = k.k_b * u1 * u1;
  const double rhs2[3] = {-ib2, i2 + ib2, -i2};
  double x2[3];
  net.solve(rhs2, x2);
  const double o2 = m.out_at_emitter ? x2[1] : x2[2];
  if (o1 == 0.0) return 0.0;
  return std::abs(o2) * out_peak_v / (2.0 * o1 * o1);
}

}  // namespace shelfstage::stages::detail
