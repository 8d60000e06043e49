// What a stocked transistor type is, as its datasheet states it, and a measured piece of it.
#pragma once
#include <optional>
#include <string>
#include <string_view>

namespace shelfstage::devices {

enum class DeviceKind { njfet, pjfet, npn, pnp };

/// "NJFET", "PJFET", "NPN", "PNP".
std::string_view kind_name(DeviceKind kind);
/// Parses the names above (case-insensitive); returns false for anything else.
bool parse_kind(std::string_view text, DeviceKind& out);
inline bool is_jfet(DeviceKind k) { return k == DeviceKind::njfet || k == DeviceKind::pjfet; }
/// +1 for N-channel and NPN, -1 for P-channel and PNP: every voltage and current mirrors.
inline double polarity(DeviceKind k) { return (k == DeviceKind::njfet || k == DeviceKind::npn) ? 1.0 : -1.0; }

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

/// Absolute maximum ratings as a datasheet states them, magnitudes; unset: not stated.
struct Ratings {
  std::optional<double> v_max_v;      ///< drain-source VDS(max), or collector-emitter VCEO
  std::optional<double> v_rev_max_v;  ///< gate-source reverse (breakdown) voltage, or VEBO
  std::optional<double> p_max_w;      ///< total dissipation at 25 °C ambient
  /// Dissipation derating above 25 °C, W/K. Unset with p_max_w given: linear to zero at a
  /// junction of 150 °C, p_max_w / 125 K (the usual curve of a small-signal type).
  std::optional<double> derate_w_per_k;
  bool any() const { return v_max_v || v_rev_max_v || p_max_w; }
  /// The dissipation allowed at an ambient temperature (p_max_w at or below 25 °C).
  double p_max_at(double celsius) const;
};

/// One stocked transistor type.
struct DeviceRecord {
  std::string name;
  DeviceKind kind = DeviceKind::njfet;
  JfetParams jfet;  ///< meaningful when is_jfet(kind)
  BjtParams bjt;    ///< meaningful otherwise
  Ratings ratings;
  std::string note;
};

/// A piece measured on the bench: its figures replace the datasheet range, within the
/// stated uncertainty (a fraction, e.g. 0.03 for 3 %).
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
