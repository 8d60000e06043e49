// The exact solver: modified nodal analysis over a Circuit. DC operating point by damped
// Newton-Raphson with gmin and source stepping; AC small-signal sweeps and noise,
// linearised at the operating point. The reference inside the program for any stage.
#pragma once
#include <functional>
#include <memory>
#include <span>
#include <complex>
#include <string>
#include <vector>

#include "shelfstage/circuit/netlist.hpp"

namespace shelfstage::circuit {

/// Small-signal figures of a transistor at the operating point.
struct DeviceOp {
  std::string designator;
  double i_main_a = 0;  ///< drain or collector current (N frame: positive into the drain)
  double i_ctrl_a = 0;  ///< gate or base current
  double v_ctrl_v = 0;  ///< vgs or vbe (N frame)
  double v_main_v = 0;  ///< vds or vce (N frame)
  double gm_s = 0, go_s = 0, gpi_s = 0;
  double c_in_f = 0;                                                  ///< Cgs or Cbe at the operating point
  double c_fb_f = 0;                                                  ///< Cgd or Cbc at the operating point
  devices::JfetRegion jfet_region = devices::JfetRegion::saturation;  ///< JFETs
  bool bjt_saturated = false;                                         ///< BJTs: vbc > 0 (forward-biased collector)
};

/// A diode at the operating point.
struct DiodeOp {
  std::string designator;
  double v_v = 0;  ///< anode to cathode
  double i_a = 0;  ///< anode to cathode through the junction (gmin's share not counted)
  double g_s = 0;  ///< small-signal conductance of the junction (gmin not counted)
};

/// A DC solution.
struct OperatingPoint {
  std::vector<double> node_v;  ///< by net index; ground is 0
  /// Current of each voltage source (not VCVS), in element order of sources (into +, SPICE sign).
  std::vector<double> source_i;
  std::vector<DeviceOp> devices;  ///< transistors, in element order
  std::vector<DiodeOp> diodes;    ///< in element order
  int iterations = 0;
  std::string method;  ///< "newton", "gmin stepping", "source stepping"
  double v(const Circuit& c, const std::string& net) const;
};

struct SolverOptions {
  double celsius = devices::kNominalCelsius;
  int max_iterations = 200;
  double abstol_a = 1e-12;  ///< current tolerance
  double vntol_v = 1e-7;    ///< voltage tolerance
  double reltol = 1e-7;
  /// A solution of this circuit (the same nets and elements, some values a step away: a
  /// sweep's last point) to start Newton from: its node voltages and the junction voltages
  /// they give. From there Newton takes a few iterations instead of tens; when it fails, the
  /// solve starts again from nothing, so the answer is the same operating point to the
  /// tolerances either way. Ignored when its nets do not match the circuit's.
  const OperatingPoint* start = nullptr;
};

/// Solves the DC operating point. Throws InputError when validation fails and
/// InfeasibleError when no method converges. Diodes take their thermal voltage at
/// options.celsius (a transistor's comes with its instance).
OperatingPoint solve_dc(const Circuit& circuit, const SolverOptions& options = {});
/// One point of a sweep (corners, levels) over builds of one circuit: solve_dc started from
/// `last`, the sweep's last solution (empty at first; SolverOptions::start), which then holds
/// this one's. Throws as solve_dc does, `last` left as it was.
const OperatingPoint& solve_dc_next(const Circuit& circuit, SolverOptions options, OperatingPoint& last);

/// The small-signal system of a circuit at an operating point, stamped once (conductances
/// G, capacitances C, the AC sources' right-hand side) and solved as G + j 2 pi f C at any
/// frequency: a sweep linearises the devices once instead of at every point.
class AcSystem {
 public:
  AcSystem(const Circuit& circuit, const OperatingPoint& op);
  /// Complex node voltages (by net index, ground 0), the sources driven by their ac_volts.
  std::vector<std::complex<double>> solve(double f_hz) const;
  /// The node voltages with each named voltage source alone driving 1 V AC (every other AC
  /// source silenced), from one factorisation. Throws InputError for a name not a source.
  std::vector<std::vector<std::complex<double>>> solve_each(double f_hz, std::span<const std::string> sources) const;
  /// True when o has the same unknowns and every entry of its G, C and right-hand side lies
  /// within `rel` times the largest entry of its row (of G or C) of this one's: the two give
  /// the same solutions to within about that much at any frequency.
  bool same_as(const AcSystem& o, double rel) const;

 private:
  struct Parts;
  std::shared_ptr<const Parts> parts_;
  std::vector<std::pair<std::string, std::size_t>> source_rows_;  // vsource designator, element index
};

/// Complex node voltages at one frequency, the sources driven by their ac_volts.
std::vector<std::complex<double>> solve_ac(const Circuit& circuit, const OperatingPoint& op, double f_hz);

/// Transfer from the AC sources to one net over a list of frequencies.
std::vector<std::complex<double>> ac_sweep(const Circuit& circuit, const OperatingPoint& op, const std::string& out_net,
                                           const std::vector<double>& f_hz);

/// Noise at one frequency: output noise density at out_net (V/sqrt(Hz)) and the same
/// referred to the input (divided by the magnitude of the transfer from the AC source).
/// Sources: resistor thermal 4kT/R, JFET channel 8kT*gm/3, BJT shot 2q*Ic and 2q*Ib
/// (the noise models of ngspice's resistor, JFET level 1 and BJT, without flicker noise).
/// Current sources, controlled sources and diodes are noiseless (ngspice's diode has shot
/// noise 2q*I, which a clamp diode held off, at picoamperes, makes negligible).
struct NoisePoint {
  double output_v_rthz = 0;
  double input_v_rthz = 0;
  double gain = 0;  ///< |transfer| at that frequency
};
NoisePoint noise(const Circuit& circuit, const OperatingPoint& op, const std::string& out_net, double f_hz,
                 double celsius = devices::kNominalCelsius);

/// The circuit at mid-band for large signals: every capacitor replaced by a voltage source
/// holding the DC voltage it charged to at op, so a DC sweep sees the AC load lines. A
/// capacitor for which `open` returns true is left out instead (open, as a small capacitance
/// is at mid-band: a load's or a device's).
Circuit with_capacitors_held(const Circuit& circuit, const OperatingPoint& op,
                             const std::function<bool(const Component&)>& open = {});

/// Frequencies log-spaced, points per decade.
std::vector<double> log_sweep(double f_lo_hz, double f_hi_hz, int per_decade);

/// The -3 dB points of a band-pass response (relative to the largest magnitude found),
/// refined by bisection on the solver. f_low 0 when the response is flat down to f_lo.
struct Corners {
  double mid_gain = 0;  ///< signed real gain at the frequency of largest magnitude
  double f_mid_hz = 0;
  double f_low_hz = 0;
  double f_high_hz = 0;
};
Corners find_corners(const Circuit& circuit, const OperatingPoint& op, const std::string& out_net,
                     double f_lo_hz = 0.01, double f_hi_hz = 1e9);

}  // namespace shelfstage::circuit
