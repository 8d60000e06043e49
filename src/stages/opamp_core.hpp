// The closed form of an op-amp gain stage (issue 17's stages build on it): gain with finite
// open-loop gain, the closed-loop band from the open-loop poles, full-power bandwidth, output
// swing into a load at the rails' headroom, the input common-mode range, the DC output error
// from offset voltage and bias currents, and input noise. Published single-op-amp results
// (the feedback-factor forms: gain A/(1 + A beta), noise gain 1/beta, closed-loop band
// GBW beta for one pole, full-power bandwidth SR / (2 pi Vpeak); from memory of the standard
// texts), solved for one pole or two.
#pragma once
#include <complex>

#include "shelfstage/devices/opamp.hpp"

namespace shelfstage::stages::detail {

/// How the amplifier is wired around its feedback network.
enum class OpampWiring {
  non_inverting,  ///< signal into +, RF from the output to -, RG from - to the reference (absent: a follower)
  inverting,      ///< signal through RG into -, RF from the output to -, + on the reference
};

/// The stage as the closed form sees it: the feedback network, what drives it, what it
/// drives, and the rails.
struct OpampCircuit {
  OpampWiring wiring = OpampWiring::non_inverting;
  double rf = 0;      ///< output to the - input, ohms (0: a wire, as in a follower)
  double rg = 0;      ///< the - input to the reference (non-inverting) or to the source (inverting); 0: none
  double r_plus = 0;  ///< DC resistance from the + input to its bias (the bias resistor, or the source)
  /// The same at signal frequencies, where a decoupled reference is a short (negative: r_plus).
  double r_plus_ac = -1;
  double source_ohm = 0;
  /// RG goes to the reference through a capacitor (a single-supply non-inverting stage with
  /// unity gain at DC): the DC error sees a noise gain of one.
  bool rg_ac_coupled = false;
  double load_ohm = 10e3;
  /// Capacitance across the load (a cable) at the output pin, with the output's own
  /// resistance (OpampInstance::out_drop_ohm) a pole inside the loop.
  double load_farads = 0;
  double v_pos = 6, v_neg = -6;  ///< the rails, volts, relative to the stage's reference
  double v_ref = 0;              ///< the reference the signal rides on (0 split; mid-rail single)
};

/// Loop quantities: the feedback factor beta = RG / (RG + RF) at the - input (the source's
/// resistance counted in RG for the inverting stage), the noise gain 1/beta and the ideal
/// signal gain (1/beta, or -RF/RG).
struct OpampLoop {
  double beta = 1, noise_gain = 1, ideal_gain = 1;
};
OpampLoop opamp_loop(const OpampCircuit& s);

/// The open-loop gain at angular frequency w: Aol / ((1 + j w/w1)(1 + j w/w2)), w1 = GBW/Aol.
std::complex<double> open_loop(const devices::OpampInstance& q, double w);
/// The output resistance behind the amplifier (the record's extra drop per ampere, which is
/// what its swing falls by under load; the macro-model puts a milliohm when none is given).
double output_ohm(const devices::OpampInstance& q);
/// The loop gain at w: A(w) beta, times the divider the output resistance makes with what
/// the output drives (the load, its capacitance, and the feedback network: RF + RG for the
/// non-inverting stage, RF for the inverting one, whose - input is a virtual ground).
std::complex<double> loop_gain(const OpampCircuit& s, const devices::OpampInstance& q, double w);
/// The closed-loop gain at w (0: DC): ideal gain x T / (1 + T), T = loop_gain.
std::complex<double> closed_loop(const OpampCircuit& s, const devices::OpampInstance& q, double w);
/// The loop's unity-gain crossover (hertz) and its phase margin there (degrees, 180 + arg T);
/// {0, 180} when |T| never reaches one.
struct OpampMargin {
  double f_cross_hz = 0, margin_deg = 180;
};
OpampMargin opamp_margin(const OpampCircuit& s, const devices::OpampInstance& q);
/// Where |closed_loop| falls 3 dB below its DC value, hertz (bisection in log f from the
/// one-pole estimate GBW beta).
double closed_loop_f_high(const OpampCircuit& s, const devices::OpampInstance& q);
/// The full-power bandwidth at an output peak: SR / (2 pi Vpeak), hertz.
double full_power_hz(const devices::OpampInstance& q, double v_peak);

/// The largest symmetric output peak about the output's DC (v_out_dc) before either rail's
/// headroom at the current the peak drives (into the load and the feedback network), volts;
/// 0 when the DC itself is outside.
double opamp_swing_peak(const OpampCircuit& s, const devices::OpampInstance& q, double v_out_dc);
/// The - and + inputs' DC stays within the common-mode range with the signal's input peak on
/// top (the non-inverting stage's inputs follow the signal; the inverting stage's sit at the
/// reference): the room left, volts (negative: outside).
double opamp_cm_room(const OpampCircuit& s, const devices::OpampInstance& q, double v_in_peak);
/// The output's DC error from the offset voltage and the bias currents: Vos and Ib+ through
/// the + input's resistance times the DC noise gain, less Ib- through the feedback network
/// (RF || RG at DC, or RF alone when RG is AC-coupled), volts.
double opamp_dc_error(const OpampCircuit& s, const devices::OpampInstance& q);
/// Input-referred noise density at the + input (non-inverting) or the source (inverting),
/// V/sqrt(Hz) at the op-amp's stated frequency: its en, in through the resistances at both
/// inputs, and their thermal noise at `celsius`.
double opamp_input_noise(const OpampCircuit& s, const devices::OpampInstance& q, double celsius);

}  // namespace shelfstage::stages::detail
