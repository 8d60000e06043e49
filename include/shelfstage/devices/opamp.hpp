// Op-amp pieces: what one piece of an op-amp type may be, at an ambient temperature, and the
// pieces a worst case takes from its datasheet figures (devices::OpampParams). The stages
// that use them (issue 17) evaluate a stage at each such piece, as transistor stages do at a
// transistor's corner pieces.
#pragma once
#include <string>
#include <vector>

#include "shelfstage/devices/record.hpp"

namespace shelfstage::devices {

/// One op-amp piece (one amplifier of a package) at one temperature. Currents flow into the
/// inputs when positive; the offset is referred to the + input (a source in series with it).
struct OpampInstance {
  double gbw_hz = 0;        ///< gain-bandwidth product
  double aol = 0;           ///< open-loop DC gain, V/V
  double pole2_hz = 0;      ///< second open-loop pole; 0: none
  double slew_v_per_s = 0;  ///< slew rate
  double vos_v = 0;         ///< input offset voltage, signed
  double ib_plus_a = 0;     ///< bias current into the + input, signed
  double ib_minus_a = 0;    ///< bias current into the - input, signed
  double out_drop_hi_v = 0, out_drop_lo_v = 0, out_drop_ohm = 0, iout_max_a = 0;
  double cm_drop_hi_v = 0, cm_drop_lo_v = 0;
  double en_v_rthz = 0, in_a_rthz = 0;  ///< noise densities (0: not stated)
  double iq_a = 0;                      ///< supply current (0: not stated)
  double vs_min_v = 0, vs_max_v = 0;    ///< operating supply span (the record's; 0: not stated)
  /// The open-loop gain's dominant pole, GBW / Aol.
  double pole1_hz() const { return aol > 0 ? gbw_hz / aol : 0.0; }
};

/// A piece with a name for reports ("GBW, slew and Aol at their minima, Vos +5 mV, Ib +400 nA").
struct OpampPiece {
  std::string tag;
  OpampInstance figures;
};

/// The nominal piece at 25 °C: GBW, slew rate and open-loop gain typical, no offset, and the
/// bias current at half its maximum into both inputs alike (datasheets seldom state a typical
/// bias current beside the maximum; half of it is a judgement for a middle piece).
OpampInstance opamp_nominal(const OpampParams& p);

/// The pieces a worst case covers, at 25 °C: GBW, slew rate and open-loop gain all at their
/// minima (OpampParams::gbw_low_hz and the rest: a slow piece is slow in all three, one
/// process) and all typical; with each, the offset at either end of +/- its maximum; with
/// each of those, the bias currents at either sign of their maximum (a datasheet gives the
/// magnitude; the input stage's type decides the sign), the two inputs apart by the offset
/// current (its maximum, or the whole bias current when none is stated) either way. 16
/// pieces; the output swing, common-mode range and noise figures are the datasheet's limits
/// in every one.
std::vector<OpampPiece> opamp_corners(const OpampParams& p);

/// Input bias currents at or below this magnitude (25 °C maximum) mark a JFET or CMOS input,
/// whose gate leakage doubles about every 10 K (common datasheet behaviour, from memory); a
/// bipolar input's bias current moves far less and is taken as it is.
inline constexpr double kFetInputBiasA = 1e-9;

/// A piece at an ambient: a FET input's bias and offset currents doubled for every 10 K above
/// 25 °C (never reduced below it: the 25 °C maxima stay the floor); everything else as at
/// 25 °C (datasheets state their limits there, and the stage's margins carry the rest).
OpampInstance opamp_at(const OpampInstance& piece, const OpampParams& p, double celsius);

}  // namespace shelfstage::devices
