// What a stocked device type is, as its datasheet states it (a transistor or an op-amp), and
// a measured piece of a transistor type.
#pragma once
#include <optional>
#include <stdexcept>
#include <string>
#include <string_view>

namespace shelfstage::devices {

enum class DeviceKind { njfet, pjfet, npn, pnp, opamp };

/// "NJFET", "PJFET", "NPN", "PNP", "OPAMP".
std::string_view kind_name(DeviceKind kind);
/// Parses the names above (case-insensitive); returns false for anything else.
bool parse_kind(std::string_view text, DeviceKind& out);
inline bool is_jfet(DeviceKind k) { return k == DeviceKind::njfet || k == DeviceKind::pjfet; }
inline bool is_bjt(DeviceKind k) { return k == DeviceKind::npn || k == DeviceKind::pnp; }
inline bool is_opamp(DeviceKind k) { return k == DeviceKind::opamp; }
/// A JFET or a BJT: a type the transistor stages, models, spreads and fits take.
inline bool is_transistor(DeviceKind k) { return is_jfet(k) || is_bjt(k); }
/// +1 for N-channel and NPN, -1 for P-channel and PNP: every voltage and current mirrors.
/// An op-amp has no polarity: a transistor-only path that took one is a bug
/// (std::invalid_argument), as every command refuses an op-amp before it gets there.
inline double polarity(DeviceKind k) {
  if (k == DeviceKind::njfet || k == DeviceKind::npn) return 1.0;
  if (k == DeviceKind::pjfet || k == DeviceKind::pnp) return -1.0;
  throw std::invalid_argument("an op-amp has no transistor polarity");
}
/// The kind in words for messages: "an NJFET", "an NPN", "a PNP", "an op-amp".
std::string with_article(DeviceKind kind);

/// A datasheet range with an optional typical value.
struct Range {
  double min = 0.0;
  double max = 0.0;
  std::optional<double> typ;
};

/// JFET datasheet figures. Voltages signed as on a datasheet (VP < 0 for N-channel,
/// VP > 0 for P-channel); IDSS as a positive magnitude.
struct JfetParams {
  Range idss_a;             ///< saturation current at VGS = 0, amperes
  Range vp_v;               ///< pinch-off voltage VGS(off), volts, signed
  double lambda_per_v = 0;  ///< channel-length modulation, 1/V
  double cgs_f = 0;         ///< gate-source capacitance, farads
  double cgd_f = 0;         ///< gate-drain capacitance, farads
  /// IDSS temperature coefficient, fraction per kelvin (negative: IDSS falls as the die warms).
  double tc_idss_per_k = -0.003;
  /// |VP| temperature coefficient, volts per kelvin (|VP| grows as the gate junction's
  /// built-in voltage falls).
  double tc_vp_v_per_k = 0.002;
  /// Gate noise figures are not modelled; channel thermal noise follows from gm.
};

/// BJT datasheet figures (Gummel-Poon subset). Signs as for NPN; PNP mirrors.
struct BjtParams {
  Range hfe;               ///< forward current gain
  double is_a = 1e-14;     ///< transport saturation current, amperes
  double vaf_v = 100;      ///< forward Early voltage, volts
  double cje_f = 0;        ///< base-emitter depletion capacitance, farads
  double cjc_f = 0;        ///< base-collector depletion capacitance, farads
  double vce_sat_v = 0.2;  ///< edge of saturation used for swing, volts
  /// Spread of VBE between pieces of the type at one collector current, volts each way (a
  /// piece's IS moves by exp(-+spread/VT)). Default 30 mV: a judgement for small-signal types
  /// (unselected pieces of one type commonly differ by a few tens of millivolts; from
  /// memory), conservative rather than typical.
  double vbe_spread_v = 0.03;
};

/// A datasheet figure stated as a typical value and, on some datasheets only, a guaranteed
/// minimum (gain-bandwidth product, slew rate, open-loop gain). What was given is kept as it
/// was given; the worst case takes `low()`.
struct TypMin {
  double typ = 0;
  std::optional<double> min;  ///< unset: the datasheet states no minimum

  /// The guaranteed minimum, or typ * unstated_share when none is stated.
  double low(double unstated_share) const { return min ? *min : typ * unstated_share; }
};

/// Op-amp datasheet figures, SI units, magnitudes unless said otherwise. The swing and
/// common-mode figures are distances from the rails (V+ and V-), as datasheets give them for
/// one supply; they hold across the supply range (what datasheets mostly imply, to within a
/// few tens of millivolts).
struct OpampParams {
  int channels = 1;                ///< amplifiers per package: 1, 2 or 4 (stock counts packages)
  double vs_min_v = 0;             ///< operating supply span V+ - V-, lowest (the absolute maximum is Ratings::v_max_v)
  double vs_max_v = 0;             ///< operating supply span, highest
  TypMin gbw_hz;                   ///< gain-bandwidth product, hertz
  TypMin slew_v_per_s;             ///< slew rate, volts per second
  TypMin aol;                      ///< open-loop DC gain, V/V
  std::optional<double> pole2_hz;  ///< second pole of the open-loop gain; unset: one pole
  double out_drop_hi_v = 0;        ///< output swing short of V+ at light load, volts
  double out_drop_lo_v = 0;        ///< output swing short of V-, volts
  double out_drop_ohm = 0;         ///< extra drop per ampere of output current (both rails), ohms
  double iout_max_a = 0;           ///< output current limit, amperes
  /// How far short of V+ (V-) the inputs may go and still work, volts; negative: the range
  /// extends beyond that rail (inputs that include V-, rail-to-rail inputs).
  double cm_drop_hi_v = 0;
  double cm_drop_lo_v = 0;
  double vos_max_v = 0;             ///< input offset voltage, maximum
  double ib_max_a = 0;              ///< input bias current, maximum (magnitude)
  std::optional<double> ios_max_a;  ///< input offset current, maximum; unset: not stated
  std::optional<double> en_v_rthz;  ///< input voltage noise density at 1 kHz, V/sqrt(Hz)
  std::optional<double> in_a_rthz;  ///< input current noise density, A/sqrt(Hz)
  std::optional<double> iq_a;       ///< supply current per amplifier, maximum

  /// The share of the typical value taken as the minimum of a gain-bandwidth product or slew
  /// rate whose datasheet states none: 1/2. A judgement (from memory of common datasheets:
  /// where a minimum is stated it lies mostly between a half and three quarters of the
  /// typical value), conservative rather than typical.
  static constexpr double kUnstatedDynamicShare = 0.5;
  /// The share for an open-loop gain without a stated minimum: 1/10. Stated minima commonly
  /// lie 2 to 8 times below the typical value (from memory), and the figure matters only
  /// through the small closed-loop gain error it makes, so a decade below costs little.
  static constexpr double kUnstatedGainShare = 0.1;
  /// The distance from a rail within which inputs or output count as reaching it, volts: a
  /// judgement of this program (a light-load swing within 50 mV is what "rail-to-rail output"
  /// datasheets state; a common-mode range to within 50 mV of a rail lets a stage sit there).
  static constexpr double kRailReachV = 0.05;

  double gbw_low_hz() const { return gbw_hz.low(kUnstatedDynamicShare); }
  double slew_low_v_per_s() const { return slew_v_per_s.low(kUnstatedDynamicShare); }
  double aol_low() const { return aol.low(kUnstatedGainShare); }
  bool inputs_reach_hi() const { return cm_drop_hi_v <= kRailReachV; }
  bool inputs_reach_lo() const { return cm_drop_lo_v <= kRailReachV; }
  bool output_reaches_hi() const { return out_drop_hi_v <= kRailReachV; }
  bool output_reaches_lo() const { return out_drop_lo_v <= kRailReachV; }
  /// How far short of V+ (V-) the output stays while it drives `load_a` amperes.
  double out_headroom_hi_v(double load_a) const { return out_drop_hi_v + load_a * out_drop_ohm; }
  double out_headroom_lo_v(double load_a) const { return out_drop_lo_v + load_a * out_drop_ohm; }
};

/// Absolute maximum ratings as a datasheet states them, magnitudes; unset: not stated.
struct Ratings {
  /// Drain-source VDS(max), or collector-emitter VCEO; an op-amp's total supply V+ - V-.
  std::optional<double> v_max_v;
  /// Gate-source reverse (breakdown) voltage, or VEBO; an op-amp's differential input voltage.
  std::optional<double> v_rev_max_v;
  std::optional<double> p_max_w;  ///< total dissipation at 25 °C ambient
  /// Dissipation derating above 25 °C, W/K. Unset with p_max_w given: linear to zero at a
  /// junction of 150 °C, p_max_w / 125 K (the usual curve of a small-signal type).
  std::optional<double> derate_w_per_k;
  bool any() const { return v_max_v || v_rev_max_v || p_max_w; }
  /// The dissipation allowed at an ambient temperature (p_max_w at or below 25 °C).
  double p_max_at(double celsius) const;
};

/// One stocked device type: a transistor or an op-amp.
struct DeviceRecord {
  std::string name;
  DeviceKind kind = DeviceKind::njfet;
  JfetParams jfet;    ///< meaningful when is_jfet(kind)
  BjtParams bjt;      ///< meaningful when is_bjt(kind)
  OpampParams opamp;  ///< meaningful when is_opamp(kind)
  Ratings ratings;
  std::string note;
};

// Counting rules of the bench (common practice): a stock line of a transistor type counts
// pieces, and each place on a board takes one piece; a stock line of an op-amp type counts
// packages of OpampParams::channels amplifiers, and each op-amp place takes one amplifier (a
// channel) of a package, so several places share a package and a package may have channels
// left spare. Every count of a device type's availability and need goes through the three
// functions below.

/// Amplifiers (channels) that `packages` stocked units of an op-amp type give: packages x
/// channels (at most INT_MAX); for a transistor type the pieces themselves. 0 for a count
/// of 0 or less.
int channel_units(const DeviceRecord& device, int packages);
/// Stocked units that serve `channels_used` places: ceil(channels_used / channels) packages
/// of an op-amp type; for a transistor type one piece per place. 0 for a count of 0 or less.
int packages_for(const DeviceRecord& device, int channels_used);
/// The designator of a stage's device on the board: "U1" for an op-amp (an integrated
/// circuit), "Q1" for a transistor, the usual reference designator letters.
std::string_view device_designator(DeviceKind kind);

/// A transistor measured on the bench: its figures replace the datasheet range, within the
/// stated uncertainty (a fraction, e.g. 0.03 for 3 %). Op-amps have no measured pieces.
struct MeasuredPiece {
  std::string label;   ///< what is written on the bag or the tape
  std::string device;  ///< DeviceRecord::name
  std::optional<double> idss_a;
  std::optional<double> vp_v;
  std::optional<double> hfe;
  double uncertainty = 0.03;
  std::string note;
};

}  // namespace shelfstage::devices
