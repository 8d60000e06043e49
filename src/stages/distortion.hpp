// Second-harmonic distortion of a one-transistor stage at mid-band, by a second-order
// (Volterra) expansion of the device law on the stage's small-signal network. Private to the
// stages layer.
#pragma once
#include "common.hpp"

namespace shelfstage::stages::detail {

/// Second-order terms of a device's currents around its bias, in the N frame, with u the
/// control voltage (vgs or vbe) and w the main voltage (vds or vce), both deviations:
/// main current += k_uu*u^2 + k_uw*u*w, control current += k_b*u^2.
struct SecondOrder {
  double k_uu = 0;  ///< A/V^2
  double k_uw = 0;  ///< A/V^2
  double k_b = 0;   ///< A/V^2
};

/// Square law with channel-length modulation, ID = BETA*(Vov + u)^2*(1 + lambda*(VDS + w)):
/// k_uu = BETA*(1 + lambda*VDS), k_uw = 2*BETA*Vov*lambda.
SecondOrder jfet_second_order(const devices::JfetInstance& q, double vov_v, double vds_v);

/// Gummel-Poon forward active, IC = Ibe*(1 - VBC/VAF), IB = Ibe/BF, Ibe = IS*exp(VBE/VT):
/// k_uu = IC/(2 VT^2) - go/VT, k_uw = go/VT (go = Ibe/VAF = 1/ro), k_b = IB/(2 VT^2).
SecondOrder bjt_second_order(double ic_a, double ib_a, double vt_v, double ro_ohm);

/// The second-harmonic ratio at an output peak out_peak_v of the mid-band network m (its
/// capacitances ignored): the linear solution for a unit source gives u1, w1 and the output
/// o1; the second-order currents k_uu*u1^2 + k_uw*u1*w1 (drain to source) and k_b*u1^2
/// (gate or base to source), driven into the same network, give o2; a cosine of amplitude A
/// at the source makes a second harmonic of A^2/2*o2, so HD2 = |o2|*out_peak_v/(2*o1^2).
/// Exact to second order in the signal: it holds at levels well below clipping.
double second_harmonic(const HybridPi& m, const SecondOrder& k, double out_peak_v);

}  // namespace shelfstage::stages::detail
