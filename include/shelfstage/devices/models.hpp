// Device equations: square-law JFET and Gummel-Poon-subset BJT, as their SPICE level-1 forms
// state them, so that an exported netlist run in ngspice is a fair check. A model only states
// its equations (currents and their derivatives); the solver owns the iteration.
#pragma once
#include "shelfstage/devices/record.hpp"

namespace shelfstage::devices {

inline constexpr double kBoltzmann = 1.380649e-23;  ///< J/K (SI 2019, exact)
inline constexpr double kCharge = 1.602176634e-19;  ///< C (SI 2019, exact)
inline constexpr double kZeroCelsius = 273.15;      ///< K
/// Datasheet figures are taken as stated at 25 °C, and nominal analyses run there. Exported
/// netlists set ngspice's TEMP and TNOM to the analysis temperature and carry the instance
/// parameters already moved to it, so SPICE applies no temperature law of its own.
inline constexpr double kNominalCelsius = 25.0;

/// Thermal voltage kT/q in volts at a temperature in °C (25.85 mV at 26.85 °C = 300 K).
double thermal_voltage(double celsius);

/// One JFET piece at one temperature: the numbers a simulation uses.
/// SPICE level-1 mapping: VTO = -|vp|, BETA = idss / vp^2, LAMBDA = lambda (both polarities
/// use a negative VTO in SPICE; the P-channel sign lives in the model type PJF).
struct JfetInstance {
  DeviceKind kind = DeviceKind::njfet;
  double idss_a = 0;        ///< > 0
  double vp_abs_v = 0;      ///< |VP| > 0
  double lambda_per_v = 0;  ///< 1/V
  double cgs_f = 0;         ///< zero-bias gate-source junction capacitance (SPICE CGS)
  double cgd_f = 0;         ///< zero-bias gate-drain junction capacitance (SPICE CGD)
  double beta() const { return idss_a / (vp_abs_v * vp_abs_v); }  ///< A/V^2
};

/// One BJT piece at one temperature.
struct BjtInstance {
  DeviceKind kind = DeviceKind::npn;
  double is_a = 1e-14;     ///< transport saturation current
  double bf = 100;         ///< forward beta (SPICE BF)
  double br = 1;           ///< reverse beta (SPICE BR)
  double vaf_v = 100;      ///< forward Early voltage (SPICE VAF); 0 or inf: none
  double cje_f = 0;        ///< zero-bias B-E depletion capacitance
  double cjc_f = 0;        ///< zero-bias B-C depletion capacitance
  double vt_v = 0.025852;  ///< thermal voltage at the instance's temperature
  double vce_sat_v = 0.2;  ///< edge of saturation used for swing estimates
};

/// Where a JFET works.
enum class JfetRegion { cutoff, triode, saturation };

/// JFET drain current and its derivatives in the N-channel frame (for P-channel pass
/// vgs and vds negated; the current returned is then the negated drain current).
/// Valid for either sign of vds (the channel is symmetric: source and drain swap).
struct JfetEval {
  double id_a = 0;   ///< drain current, drain to source
  double gm_s = 0;   ///< d id / d vgs
  double gds_s = 0;  ///< d id / d vds
  JfetRegion region = JfetRegion::cutoff;
};
JfetEval jfet_eval(const JfetInstance& q, double vgs_v, double vds_v);

/// Gate-source voltage (N frame, <= 0) that gives drain current id in saturation, ignoring
/// lambda: VGS = VP * (1 - sqrt(id/IDSS)) with VP = -|VP|.
double jfet_vgs_for_current(const JfetInstance& q, double id_a);

/// BJT terminal currents and derivatives in the NPN frame (for PNP pass vbe and vbc negated;
/// currents come back negated). Gummel-Poon without high injection, base resistance or
/// VAR: Ic = (Ibe - Ibc) * (1 - vbc/VAF) - Ibc/BR, Ib = Ibe/BF + Ibc/BR,
/// Ibe = IS*(exp(vbe/VT) - 1), Ibc = IS*(exp(vbc/VT) - 1).
struct BjtEval {
  double ic_a = 0, ib_a = 0;
  double dic_dvbe = 0, dic_dvbc = 0;  ///< siemens
  double dib_dvbe = 0, dib_dvbc = 0;  ///< siemens
};
BjtEval bjt_eval(const BjtInstance& q, double vbe_v, double vbc_v);

/// SPICE depletion capacitance of a junction at forward voltage v: c0 / (1 - v/vj)^m for
/// v < fc*vj, the linear extension beyond (SPICE2 default fc = 0.5).
double depletion_capacitance(double c0_f, double v, double vj_v, double m, double fc = 0.5);

/// Junction parameters SPICE uses by default, and so do we (ngspice manual, JFET and BJT
/// model parameter tables): JFET PB = 1 V, M = 0.5; BJT VJE = VJC = 0.75 V, MJE = MJC = 0.33.
inline constexpr double kJfetPb = 1.0, kJfetM = 0.5;
inline constexpr double kBjtVj = 0.75, kBjtM = 0.33;

/// Temperature: instance of a record at nominal datasheet figures moved to `celsius`
/// (IDSS scaled by (1 + tc_idss*dT), |VP| by + tc_vp*dT; BJT IS by the SPICE XTI=3, EG=1.11
/// law, BF by +0.5 %/K (common practice figure, from memory: hFE rises ~0.5 %/K)).
JfetInstance jfet_at(const JfetParams& p, DeviceKind kind, double idss_a, double vp_abs_v, double celsius);
/// vbe_shift_v: the piece's VBE above the type's at the same current (IS scaled by
/// exp(-vbe_shift_v/VT) at 25 °C, before the temperature law).
BjtInstance bjt_at(const BjtParams& p, DeviceKind kind, double bf, double celsius, double vbe_shift_v = 0.0);

}  // namespace shelfstage::devices
