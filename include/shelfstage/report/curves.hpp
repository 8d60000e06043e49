// The curves of a designed stage, computed from its netlist with the exact (MNA) solver: the
// frequency response at the nominal piece and at each corner piece of the device, the bias
// point across the corners and Monte Carlo builds with the region where the bias leaves room
// for the swing, and the large-signal transfer with a sine through it. Plain data, drawn by
// the HTML report and the terminal plot.
#pragma once
#include <cstdint>
#include <optional>
#include <string>
#include <utility>
#include <vector>

#include "shelfstage/report/analysis.hpp"
#include "shelfstage/synth/design.hpp"

namespace shelfstage::report {

/// The stage of a candidate as analyze_stage takes it: topology, values, the nominal piece,
/// the conditions, and what the stock says about each part (recipe, tolerance, rating,
/// dielectric, polarity and the net its + lead is fitted to).
StageUnderTest stage_under_test(const synth::Candidate& c);

/// One curve of the frequency response.
struct ResponseCurve {
  std::string tag;                ///< "nominal" or the corner's tag
  std::vector<double> gain_db;    ///< 20 log10 |V(load) / V(source EMF)|
  std::vector<double> phase_deg;  ///< unwrapped; within (-180, 180] where the gain peaks
  bool solved = false;            ///< false: no operating point (the vectors are empty)
  std::string problem;
};

/// The response of the stage from the signal source's EMF to the load, nominal supply and
/// temperature, the nominal parts.
struct Response {
  std::vector<double> f_hz;  ///< log-spaced
  ResponseCurve nominal;
  std::vector<ResponseCurve> corners;          ///< one per corner piece of the device
  std::vector<double> gain_lo_db, gain_hi_db;  ///< envelope over the nominal and every solved corner
  std::vector<double> phase_lo_deg, phase_hi_deg;
  std::optional<std::pair<double, double>> band_hz;  ///< the requested band
  double requested_gain_db = 0;                      ///< 20 log10 of the requested |gain|; 0 V/V: none
  double peak_gain_db = 0;                           ///< nominal, largest over the sweep
  double f_low_hz = 0, f_high_hz = 0;                ///< nominal -3 dB points from the peak (0: not in the sweep)
};

/// Sweeps the stage from a decade below the lower of its low corner and the band to a decade
/// above the higher of its high corner and the band, in whole decades (at most 0.01 Hz ..
/// 10 GHz), per_decade points per decade. Throws InputError for per_decade < 2; never for a
/// stage whose operating point does not converge (its curve says so).
Response frequency_response(const synth::Candidate& c, const synth::Spec& spec, int per_decade = 24);

/// The gain in dB of the response as a compact terminal plot (draw::text_plot), the envelope
/// over the device corners and the requested band marked, then one line with the -3 dB points.
std::string response_text(const Response& r, int columns = 64);

/// One bias point.
struct BiasPoint {
  double v = 0;    ///< volts at the output node (drain or collector; source or emitter of a follower)
  double i_a = 0;  ///< drain or collector current, magnitude
  std::string tag;
  bool safe = false;  ///< inside the safe region
};

/// The bias point over the device's corners and Monte Carlo builds.
struct BiasSpread {
  std::string node;       ///< "drain", "collector", "source", "emitter"
  stages::LoadLine line;  ///< the output terminal's load lines at the nominal parts
  BiasPoint nominal;
  std::vector<BiasPoint> corners;  ///< corner pieces, nominal parts and supply
  std::vector<BiasPoint> samples;  ///< Monte Carlo builds (see bias_spread)
  int failed = 0;                  ///< builds without an operating point
  double swing_peak_v = 0;         ///< the output peak the safe region leaves room for (0: none asked)
  /// The safe region as a polygon of (volts, amperes): bias points from which the output can
  /// swing by swing_peak_v without cut-off (the current through the AC load RD||RL may not
  /// reach zero) and without leaving the active region (VDS above the overdrive of the
  /// weakest corner piece, VCE above the device's saturation edge), with the source or
  /// emitter moving by the signal current through the unbypassed resistor; and under the
  /// request's current limit. Voltages as the circuit has them on the user's rail (stages::Rail).
  std::vector<std::pair<double, double>> safe_region;
};

/// Solves the operating point at the nominal piece, at each corner piece and for `samples`
/// Monte Carlo builds drawn as the synthesizer draws them for its yield (pieces from the
/// device spread with seed spec.seed; parts uniform within their bounds, the supply within
/// its range, the temperature within its range), so the cloud shows the builds the yield
/// counts. Throws InputError when samples is negative or above 100000, and for an op-amp
/// stage (no load line, no bias point of a transistor to draw).
BiasSpread bias_spread(const synth::Candidate& c, const synth::Spec& spec, int samples);

/// The quasi-static transfer from the source EMF to the load with every capacitor holding its
/// DC voltage (the mid-band load lines), and a sine through it.
struct Transfer {
  std::vector<double> v_in, v_out;             ///< volts; NaN where the solver found no point
  double gain = 0;                             ///< slope at the operating point (V/V, signed)
  double rated_peak_v = 0;                     ///< the output peak the sine is drawn at
  std::string rated_what;                      ///< "the requested swing" or "the design's swing"
  std::vector<double> phase_deg;               ///< one period, 0..360
  std::vector<double> out_rated, ideal_rated;  ///< load voltage at the rated peak, and gain x input
  std::vector<double> out_over, ideal_over;    ///< the same with the input doubled
};

/// The transfer over +/- 2.5 rated input peaks (input peak = rated_peak / |gain|); the rated
/// peak is half the requested swing (Vpp), else the nominal swing peak, else 1 V. Throws
/// InfeasibleError when the nominal operating point does not converge.
Transfer transfer_curve(const synth::Candidate& c, const synth::Spec& spec);

}  // namespace shelfstage::report
