// Harmonic distortion of a one-transistor stage at mid-band: the static transfer's power
// series from the device law on the stage's small-signal network, and the output level a
// distortion bound allows. Private to the stages layer.
#pragma once
#include "common.hpp"

namespace shelfstage::stages::detail {

/// The device's currents around its bias as power series, in the N frame, with u the control
/// voltage (vgs or vbe) and w the main voltage (vds or vce), both deviations:
/// main current += sum over a of main_u[a] u^a + main_uw[a] u^a w,
/// control current += sum over a of control_u[a] u^a.
/// The linear terms (gm, go, 1/r_pi) belong to the network (HybridPi) and are left at zero
/// here: main_u[0..1], main_uw[0], control_u[0..1].
struct DeviceOrders {
  static constexpr int kOrder = Transfer::kOrder;
  std::array<double, kOrder + 1> main_u{}, main_uw{}, control_u{};
};

/// Square law with channel-length modulation, ID = BETA (Vov + u)^2 (1 + lambda (VDS + w)):
/// u^2: BETA (1 + lambda VDS); u w: 2 BETA Vov lambda; u^2 w: BETA lambda; nothing else.
DeviceOrders jfet_orders(const devices::JfetInstance& q, double vov_v, double vds_v);

/// Gummel-Poon forward active, IC = Ibe (1 + (VCE - VBE)/VAF), IB = Ibe/BF, Ibe = IS exp(VBE/VT).
/// With go = Ibe/VAF = 1/ro: IC = IC0 e^(u/VT) + go e^(u/VT) (w - u), so
/// u^a: IC/(a! VT^a) - go/((a-1)! VT^(a-1)); u^a w: go/(a! VT^a); base u^a: IB/(a! VT^a).
DeviceOrders bjt_orders(double ic_a, double ib_a, double vt_v, double ro_ohm);

/// The static transfer of the mid-band network m (its capacitances ignored) from a unit
/// source to the output, to Transfer::kOrder: the first-order solution, then at each order n
/// the device's currents of order n (which involve only the orders below) driven into the
/// same network. This is the Taylor series of the implicit transfer, exact to the order kept.
Transfer transfer(const HybridPi& m, const DeviceOrders& k);

/// Total harmonic distortion for the input peak a (Transfer::thd, at an input).
double thd_at_input(const Transfer& t, double a);

/// Sets the distortion figures of p from its transfer: hd2, hd3, thd at Conditions::hd2_peak_v,
/// clip_peak_v (the symmetric peak before clipping, from swing_peak_v as the evaluator left it)
/// and swing_peak_v: the smaller of clip_peak_v and the level at which THD reaches
/// Conditions::max_thd.
void finish_distortion(Performance& p, const Transfer& t, const Conditions& c);

/// finish_distortion with the transfer from make() when c.distortion is on; otherwise only
/// the clipping point (clip_peak_v = swing_peak_v), without the cost of the series.
template <class MakeTransfer>
void finish_distortion(Performance& p, const Conditions& c, MakeTransfer&& make) {
  if (c.distortion)
    finish_distortion(p, make(), c);
  else
    p.clip_peak_v = p.swing_peak_v;
}

}  // namespace shelfstage::stages::detail
