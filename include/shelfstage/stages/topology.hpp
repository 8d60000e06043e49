// A stage topology: its roles, its netlist builder and its fast closed-form evaluator.
// Each topology is one self-contained file in src/stages/ plus one line in registry.cpp.
#pragma once
#include <array>
#include <cstddef>
#include <functional>
#include <limits>
#include <optional>
#include <span>
#include <string>
#include <string_view>
#include <vector>

#include "shelfstage/circuit/netlist.hpp"
#include "shelfstage/devices/models.hpp"
#include "shelfstage/devices/opamp.hpp"

namespace shelfstage::stages {

/// Where a part sits on the schematic's template (grid units: the supply rail at y 2, ground
/// at y 27, the transistor at (18, 12) with its control pin at x 16, the input coupling at
/// (10, 14), the load at x 28), as an N device on a positive rail has it; the drawing mirrors
/// it for a stage turned over on its rail.
struct Spot {
  double x = -1, y = 0;  ///< centre; x < 0: no place given
  bool vertical = true;  ///< two-terminal parts: drawn along y
  char label = 'r';      ///< label side: 'l'eft, 'r'ight, 'a'bove, 'b'elow
};

/// How a role is wired and what it is.
struct Role {
  std::string_view name;        ///< role name (docs/interface.md): RD, RS1, CIN ...
  std::string_view designator;  ///< default designator on the schematic: R3, C1 ...
  char kind;                    ///< 'R' or 'C'
  bool optional;                ///< the synthesizer may leave it out (value 0)
  /// Electrolytic allowed? (coupling and bypass capacitors: yes, fitted by their DC.)
  bool polar_ok;
  /// Capacitors: the nets of the two ends in the stage's N frame (see Rail); `pos_net` sits
  /// at the higher DC voltage with an N-channel or NPN device on a positive rail.
  std::string_view pos_net;
  std::string_view neg_net;
  std::string_view what;  ///< "drain load", "bypassed source resistor" ...
  Spot at = {};           ///< its place on the schematic
  /// A capacitor across part of the common leg: it holds that DC when the supply goes, and
  /// the control pin, returned to ground, then sits that far in reverse.
  bool holds_leg = false;
};

/// A net of the stage's own that is not a device terminal (the junction of a split leg):
/// how people call it, and its height on the schematic (the supply 0, the main terminal 1,
/// the control pin 2, the common terminal 3, ground 5).
struct InnerNet {
  std::string_view name;   ///< as the netlist names it: "x"
  std::string_view words;  ///< "RS1\u2013RS2 junction"
  double level = 2.5;
  /// The role between the common terminal and this net, if any: left out, the net is the
  /// common terminal itself.
  std::string_view upper = {};
  /// Its place along the signal path on the schematic, left to right (the signal 0, the input
  /// 1, the control pin 2, the output terminal 3, the output 4).
  double order = 2.5;
};

/// The DC and AC load lines of the stage's output terminal, for the bias pictures.
struct LoadLine {
  bool at_common = false;       ///< the output is the common terminal (a follower): V = I * r_dc
  double r_dc_ohm = 0;          ///< main terminal: V = supply - I * r_dc; common terminal: V = I * r_dc
  double r_ac_ohm = 0;          ///< AC load on the output terminal, the load included
  double r_common_ohm = 0;      ///< main-terminal output: DC resistance of the common leg
  double r_unbypassed_ohm = 0;  ///< its part not bypassed
};

/// The knobs of a topology's reference design (tests and examples): a stage in its active
/// region for the piece it is given.
struct ReferenceKnobs {
  double current_frac = 0.35;  ///< JFET: ID / IDSS
  double current_a = 1e-3;     ///< BJT: IC
  double degeneration = 0.5;   ///< fraction of a split leg left unbypassed (1: no bypass)
  double gate_frac = 0.25;     ///< divider-biased JFET: VG / VDD
  double f_corner_hz = 2.0;    ///< each coupling corner
  double nominal_hfe = 0;      ///< BJT: the hFE the divider is designed for (0: the piece's)
};

inline constexpr std::size_t kMaxRoles = 13;

/// Role values in ohms or farads, by role index; 0 means an optional role left out.
struct Values {
  std::array<double, kMaxRoles> v{};
  double& operator[](std::size_t i) { return v[i]; }
  double operator[](std::size_t i) const { return v[i]; }
};

/// The device piece a stage is evaluated with (one of the instances is used, as `kind` says:
/// a JFET, a BJT or an op-amp channel). A stage with two devices (a feedback pair) also
/// carries its second transistor, always bipolar: Q2.
struct Transistor {
  devices::DeviceKind kind = devices::DeviceKind::njfet;
  devices::JfetInstance jfet;
  devices::BjtInstance bjt;
  devices::OpampInstance opamp;
  bool paired = false;        ///< a second device (Q2) is given
  devices::BjtInstance bjt2;  ///< Q2 (its kind says NPN or PNP)
  /// Q2 alone, as a one-device Transistor (the exact solver takes a list of those).
  Transistor second() const;
};
/// The devices of a stage as the exact solver lists them: Q1, then Q2 when paired.
std::vector<Transistor> transistors_of(const Transistor& q);

/// Which supply a topology is built for: one rail and ground (every transistor stage, and the
/// op-amp stages biased at mid-rail), or a split supply (op-amp stages referred to ground).
enum class SupplyForm { single, split };

/// Which second device a topology takes: none, one of the opposite polarity to Q1 (the
/// complementary pair: NPN then PNP, or N-channel then PNP), or one of the same polarity.
enum class SecondDevice { none, complement, same };

/// What the stage is asked to work in.
struct Conditions {
  double supply_v = 12;  ///< supply magnitude (volts, > 0)
  /// The supply as the user wired it: false for a positive rail (ground at the battery's -
  /// terminal), true for a negative one (ground at its + terminal). See Rail.
  bool negative_rail = false;
  /// A split supply: rails at +supply_v and -supply_v with ground between (op-amp stages
  /// built for it take both; every other stage takes the + rail and ground alone).
  bool split_supply = false;
  double load_ohm = 10e3;
  double load_farads = 0;  ///< capacitance across the load (a cable, the next stage's input)
  double source_ohm = 0;
  double celsius = devices::kNominalCelsius;
  double band_lo_hz = 0;  ///< band edges at which the loss is reported (0: none)
  double band_hi_hz = 0;
  double hd2_peak_v = 1.0;  ///< output peak at which HD2, HD3 and THD are given (the request's)
  /// The distortion a signal may have and still count as undistorted (total harmonic
  /// distortion, a fraction; 0: no bound): it limits swing_peak_v.
  double max_thd = 0.01;
  double noise_f_hz = 1000.0;  ///< frequency of the input noise figure
  /// Work out the distortion (the transfer's power series, HD2, HD3, THD and the rated level
  /// swing_peak_v). Off, the search's passes that need only the gain or the clipping point
  /// skip it: swing_peak_v and clip_peak_v are then both the clipping point, thd 0.
  bool distortion = true;
  /// A screen's floors (the search's first pass; 0: none). An evaluator may stop as soon as
  /// the stage is sure to miss one: its clipping point below least_clip_v, its supply current
  /// above most_current_a or its input impedance below least_zin_ohm. The figures worked out
  /// after that point are then left out (Performance::cut_short). The distortion must be off.
  double least_clip_v = 0;
  double most_current_a = 0;
  double least_zin_ohm = 0;
  /// The least phase margin a stage whose closed form checks its own loop (an op-amp
  /// stage) may have, degrees (synth::Spec::least_margin_deg).
  double least_margin_deg = 45.0;
};

/// The conditions with the distortion left out (Conditions::distortion), for a caller that
/// reads small-signal figures alone: the gain, the impedances, the band's losses and corners,
/// which the distortion's sweeps (a feedback pair's, a dozen bias solves) do not move.
inline Conditions small_signal(Conditions c) {
  c.distortion = false;
  return c;
}

/// DC across a capacitor, or power in a resistor, for rating checks.
struct Stress {
  std::size_t role = 0;
  double power_w = 0;          ///< resistors: I^2 R at the operating point
  double dc_v = 0;             ///< capacitors: DC across, >= 0 (from plus_net to the other end)
  std::string_view plus_net;   ///< capacitors: the netlist's net at the higher DC voltage (the + lead)
  std::string_view minus_net;  ///< capacitors: the netlist's net at the other end
  /// Capacitors, as a topology's evaluator states them: the DC from pos to neg end in the N
  /// frame, and the nets of those ends as its netlist names them in that frame (empty: the
  /// role's pos_net and neg_net). Topology::evaluate turns these into dc_v, plus_net and
  /// minus_net on the user's rail.
  double dc_n_v = 0;
  std::string_view pos_n, neg_n;
};

/// A stage's static transfer around its bias at mid-band, as a power series in the source's
/// deviation x: out = o[1] x + o[2] x^2 + ... + o[kOrder] x^kOrder (o[0] unused). A cosine
/// x = A cos(t) gives harmonic m the amplitude sum over n >= m, n - m even, of
/// o[n] A^n 2^(1-n) C(n, (n-m)/2). The figures below are at an output level (the
/// fundamental's peak); a series left empty (o[1] = 0) gives none.
struct Transfer {
  static constexpr int kOrder = 7;
  std::array<double, kOrder + 1> o{};
  bool empty() const { return o[1] == 0.0; }
  /// Harmonic amplitudes 1..kOrder for the input peak a.
  std::array<double, kOrder + 1> harmonics_at_input(double a) const;
  /// The input peak whose fundamental at the output is `level` (0 when none is found).
  double input_for(double level) const;
  /// Total harmonic distortion at the output level, with the series' last term counted once
  /// more as a bound on the orders left out.
  double thd(double level) const;
  /// The largest output level up to max_level at which thd() stays within bound.
  double level_for(double bound, double max_level) const;
};

/// The figures of one stage at one set of values, device and conditions. Voltages are
/// actual node voltages (negative rails for P-channel and PNP); currents are magnitudes.
struct Performance {
  bool valid = false;   ///< a bias point exists (the device conducts)
  bool active = false;  ///< saturation (JFET) or forward-active (BJT) with the swing's margin >= 0
  std::string problem;  ///< why not valid or not active, for people
  /// Signed mid-band V/V from the source (behind source_ohm) to the load: every coupling and
  /// bypass capacitor short and every device capacitance open, but for the input coupling
  /// capacitor against the input capacitance c_in_f (a flat divider: input_divider()).
  double gain = 0;
  /// The same with the input coupling capacitor a short as well (before input_divider():
  /// Topology::gain_with works the gain out from it for another input capacitor).
  double gain_undivided = 0;
  double bias_current_a = 0;  ///< drain or collector current
  double v_in = 0;            ///< gate or base DC volts
  double v_common = 0;        ///< source or emitter DC volts
  double v_out = 0;           ///< drain or collector DC volts
  double zin_ohm = 0;         ///< input impedance at mid-band (after source_ohm)
  double zout_ohm = 0;        ///< output impedance at mid-band, seen by the load
  /// A stage whose loop gain falls inside the band (an op-amp stage, its dominant pole a few
  /// hertz up): the output impedance at the top of the band it carries (Conditions::
  /// band_hi_hz, or 20 kHz, the audio band's top, when none is asked), where the loop holds
  /// it least. 0: as zout_ohm across the band. The worst case spans both.
  double zout_band_ohm = 0;
  double f_low_hz = 0;  ///< -3 dB points relative to mid-band
  double f_high_hz = 0;
  double loss_lo_db = 0;  ///< loss at Conditions::band_lo_hz relative to mid-band, dB >= 0
  double loss_hi_db = 0;  ///< loss at Conditions::band_hi_hz relative to mid-band, dB >= 0
  /// Largest symmetric undistorted output peak at the load: below clipping, and with THD
  /// within Conditions::max_thd.
  double swing_peak_v = 0;
  double clip_peak_v = 0;  ///< largest symmetric peak before either side clips
  double swing_up_v = 0;   ///< output excursion limits, each side
  double swing_down_v = 0;
  double hd2 = 0;  ///< second-harmonic ratio at Conditions::hd2_peak_v
  double hd3 = 0;  ///< third-harmonic ratio there
  double thd = 0;  ///< total harmonic distortion there (harmonics 2 to 7 and more)
  /// The mid-band static transfer as a power series (the closed forms fill it; the exact
  /// solver leaves it empty): how a chain finds this stage's distortion at any level.
  Transfer transfer;
  double noise_v_rthz = 0;  ///< input-referred noise density at Conditions::noise_f_hz
  double c_in_f = 0;        ///< capacitance into the gate or base at mid-band (Miller included)
  double supply_current_a = 0;
  /// An op-amp stage: the DC current out of the op-amp's output pin into the stage and load
  /// (negative: sunk), for its dissipation (the closed form fills it; 0 for transistors).
  double out_current_a = 0;
  /// A stage with a second device (Q2): its collector current, its collector-emitter DC
  /// (magnitude) and its collector's DC volts (the stage's output terminal), N frame for
  /// the last until Topology::evaluate places it on the rail.
  double q2_current_a = 0;
  double q2_v_main = 0;
  double v_out2 = 0;
  std::vector<Stress> stress;  ///< per role present
  /// The evaluation stopped at a screen's floor (Conditions::least_clip_v ...): the bias, the
  /// mid-band gain (without the input capacitance's divider), Zin, the swing (the clipping
  /// point, as with the distortion off) and the supply current are given; the rest is not.
  bool cut_short = false;
};

/// Where a stage sits on the user's supply. Every topology states its circuit in the N frame
/// (an N-channel or NPN device, the rail "vdd" at +supply above ground "0"); Topology::netlist
/// and Topology::evaluate place it on the rail the user gave:
///  - N device on a positive rail, P device on a negative one: as stated (mirrored for P);
///  - otherwise (a P device on a positive rail, as one battery powers it; an N device on a
///    negative one) the stage is turned over: its N-frame ground is the rail and its N-frame
///    rail is ground, so every node sits between ground and the rail, and the signal source
///    and load stay on ground with the other stages of a chain.
/// A node's real DC voltage is offset_v + pol * (its N-frame voltage); the bench nets "sig",
/// "in" and "out" (source and load side, DC-free) are at 0 V either way.
struct Rail {
  double sign = 1;       ///< +1 positive supply, -1 negative
  double pol = 1;        ///< device polarity: +1 N-channel/NPN, -1 P-channel/PNP
  bool flipped = false;  ///< the stage is turned over (see above)
  double offset_v = 0;   ///< real volts of the N-frame ground
  double real(double v_n) const { return offset_v + pol * v_n; }
  /// The netlist's net for an N-frame net: "0" and "vdd" swap when flipped.
  std::string_view net(std::string_view n_frame) const;
};
Rail rail_of(const Transistor& q, const Conditions& c);
/// True for the nets of the bench around a stage (signal, source and load side).
bool is_bench_net(std::string_view net);
/// True for the roles of the bench's parts: "supply", "signal", "source" (RSIG), "load" (RL),
/// "load capacitance" (CL, when Conditions::load_farads is given).
bool is_bench_role(std::string_view role);

/// How much the fast evaluator computes: `core` (bias, gain, Zin, Zout, swing, band-edge
/// losses) for the search; `stress` adds part stress (the rating and polarity checks);
/// `full` adds the input noise, HD2 and the -3 dB corners (their searches cost more than all
/// the rest). (The followers' noise, a few sums, comes with `stress` too.)
enum class Detail { core, stress, full };

/// Names of the nets every stage netlist uses: the signal source drives "sig" through
/// RSIG into "in" (then CIN); the load RL hangs on "out"; the supply is "vdd".
inline constexpr std::string_view kNetSignal = "sig", kNetIn = "in", kNetOut = "out", kNetSupply = "vdd";
/// The - rail of a split supply (Conditions::split_supply), driven by "VEE" at -supply.
inline constexpr std::string_view kNetNegativeSupply = "vee";
/// The role of the bench's capacitor across the load (CL), present when Conditions::load_farads is.
inline constexpr std::string_view kRoleLoadCapacitance = "load capacitance";
/// The role of a compensation capacitor across a feedback resistor (a pair's CF): small, it
/// acts only above the band, so mid-band figures take it open, as a device's capacitance.
inline constexpr std::string_view kRoleCompensation = "CF";
/// The role of the elements of a device's model in a netlist (an op-amp's macro-model): no
/// part of the stage's, never a part to pick, its capacitors a device's (open at mid-band).
inline constexpr std::string_view kRoleDeviceModel = "device model";
/// Whether a capacitor in this role is open at mid-band (the load capacitance, CF, a device
/// model's) rather than a coupling or bypass capacitor's short.
inline bool open_at_mid_band(std::string_view role) {
  return role == kRoleLoadCapacitance || role == kRoleCompensation || role == kRoleDeviceModel;
}

/// What a topology's design equations may ask of the synthesizer: which values the shelf
/// can make (single parts and combinations), so proposals land on real values.
class ValueSource {
 public:
  virtual ~ValueSource() = default;
  /// Appends up to n achievable resistances nearest to target_ohm (log distance), nearest first.
  virtual void nearest(double target_ohm, std::size_t n, std::vector<double>& out) const = 0;
  /// Appends achievable resistances in [lo_ohm, hi_ohm], spread evenly on a log scale,
  /// at most max_n of them.
  virtual void spread(double lo_ohm, double hi_ohm, std::size_t max_n, std::vector<double>& out) const = 0;
};

/// The proposals a design step left out by a bound the stage cannot pass (a swing it cannot
/// rise by, a gain it cannot reach), each under the stop it stands for, so that what the
/// search says about a request weighs them as the stops they would have been. Each resistor
/// or proposal left out counts once.
struct LeftOut {
  long swing = 0, gain = 0, zin = 0;
  double least_gain = std::numeric_limits<double>::infinity();  ///< the least bound a gain stop was left out by
};

/// The targets a topology designs toward (the request, in the N frame).
struct Goal {
  double gain = 10;         ///< |V/V| from the source to the load
  double gain_lo = 0;       ///< the least |V/V| the request accepts (its window's low end; 0: any)
  double zin_min_ohm = 0;   ///< lowest acceptable input impedance
  double swing_peak_v = 0;  ///< required output peak (0: none)
  /// The share of a stage's output swing the request's screen credits it with (the swing
  /// less the model's margin): a bound on the swing is compared with swing_peak_v after it.
  double swing_credit = 1.0;
  double max_current_a = 0;  ///< supply current limit (0: none)
  double f_low_hz = 20;      ///< lowest frequency to pass (capacitors are sized for it)
  /// Probing how far the stage can go: where the gain is out of reach within the headroom,
  /// propose the largest load resistor the headroom allows instead of nothing (used to say
  /// how close a failed request came).
  bool probe = false;
  /// How widely to search (Spec::search_breadth): below 1 (a chain's many stage pools) the
  /// design equations try fewer of their own choices as well as fewer shelf values.
  double breadth = 1.0;
  /// Where the design steps count what they leave out (nullptr: not counted).
  LeftOut* left_out = nullptr;
};

/// Where a feedback stage's loop is broken: the end of a part (a role) on a net, which the
/// break moves onto a net of its own. The trade breaks a shunt loop at the output end of the
/// feedback resistor, where the output's low impedance drives the resistor's high one.
struct LoopBreak {
  std::string_view role;  ///< "RF"
  std::string_view net;   ///< the end moved, as the stage's netlist names it: "collector"
};

class Topology {
 public:
  virtual ~Topology() = default;
  virtual std::string_view name() const = 0;     ///< name as scripts use it: "jfet-cs-self"
  virtual std::string_view summary() const = 0;  ///< one line for people
  virtual bool accepts(devices::DeviceKind kind) const = 0;
  /// A buffer (gain just under one, high input and low output impedance): chains put one in
  /// front to lift the input impedance or behind to drive a low load.
  virtual bool is_buffer() const { return false; }
  /// A feedback stage: where its loop is broken to measure the loop gain (loop.hpp).
  virtual std::optional<LoopBreak> feedback_loop() const { return std::nullopt; }
  /// A stage with two devices: which second device it takes (SecondDevice::none: one device).
  virtual SecondDevice second_device() const { return SecondDevice::none; }
  /// Whether the synthesizer tries it when the request names no topology; false: only when
  /// asked for by name (a stage whose design equations seldom hold over a datasheet's spread,
  /// kept out of the default search so that it costs nothing there).
  virtual bool searched_by_default() const { return true; }
  /// The supply it needs: a single rail (the default; on a split supply such a stage uses the
  /// + rail and ground), or a split one (offered only when the request gives one).
  virtual SupplyForm supply_form() const { return SupplyForm::single; }
  /// The designator of its device on the schematic and the pick list: Q1, or U1 for an op-amp.
  std::string_view device_designator() const;
  /// Whether a bipolar type of kind `second` may be Q2 beside a Q1 of kind `first`.
  bool accepts_second(devices::DeviceKind first, devices::DeviceKind second) const;
  virtual std::span<const Role> roles() const = 0;
  /// Index of a role by name, or roles().size() when unknown.
  std::size_t role_index(std::string_view role) const;
  /// Names of the device-terminal nets in the order of Performance's v_in, v_common, v_out
  /// ("gate","source","drain" or "base","emitter","collector"; an op-amp's + input, - input
  /// and output nets: "plus","minus","opout", a buffer's - input being its output).
  virtual std::array<std::string_view, 3> node_names() const = 0;
  /// The stage's own nets that are not device terminals.
  virtual std::span<const InnerNet> inner_nets() const { return {}; }
  /// An inner net by name, or nullptr.
  const InnerNet* inner_net(std::string_view net) const;
  /// How people call any net of the stage's netlist: "ground", "supply rail", "input side",
  /// "output side", a terminal's name, an inner net's words.
  std::string net_words(std::string_view net) const;
  /// The output terminal's load lines at these values.
  virtual LoadLine load_line(const Values& values, const Conditions& c) const = 0;
  /// A reference design: values (capacitors included) that put the stage in its active
  /// region for piece q under c, as the knobs ask.
  virtual Values reference(const Transistor& q, const Conditions& c, const ReferenceKnobs& k) const = 0;

  /// The whole test bench as a circuit: supply VDD on "vdd" (at -supply on a negative rail),
  /// signal source with RSIG (1 mΩ when source_ohm is 0), the stage placed on the rail (Rail),
  /// and the load. Designators as roles().designator.
  circuit::Circuit netlist(const Values& values, const Transistor& q, const Conditions& c) const;

  /// The fast closed-form evaluator (the search calls it millions of times): node voltages
  /// and capacitor stress on the user's rail.
  Performance evaluate(const Values& values, const Transistor& q, const Conditions& c,
                       Detail detail = Detail::core) const;
  /// The gain evaluate() gives at `values` when `p` is its result at the same resistors,
  /// device and conditions but other capacitors: every capacitor but the input coupling one
  /// is a short in the mid-band figures, so only the input divider changes (to the last bit:
  /// worked out as evaluate() works it out).
  double gain_with(const Values& values, const Conditions& c, const Performance& p) const;

  /// The design equations: proposes resistor sets (capacitor roles left 0) for the goal with
  /// the nominal piece q, drawing only on values the shelf can make. Each proposal goes to
  /// emit; the synthesizer sizes the capacitors, evaluates and ranks.
  virtual void propose(const Goal& goal, const Transistor& q, const Conditions& c, const ValueSource& shelf,
                       const std::function<void(const Values&)>& emit) const = 0;

  /// The smallest capacitance (farads) each capacitor role needs so that its corner sits
  /// well below f_low_hz (the coupling poles at a quarter of it, a bypass pole at half), given
  /// the resistors in `values`. Optional capacitors whose resistor is absent get 0.
  virtual Values capacitor_targets(const Values& values, const Transistor& q, const Conditions& c,
                                   double f_low_hz) const = 0;

 protected:
  /// The test bench in the N frame: the bench parts from detail::bench, the stage's parts
  /// between "vdd" and "0" as an N device takes them.
  virtual circuit::Circuit wire(const Values& values, const Transistor& q, const Conditions& c) const = 0;
  /// The closed form in the N frame: node voltages as an N device on a positive rail has
  /// them, capacitor stress as dc_n_v (and pos_n, neg_n where the netlist's nets differ from
  /// the role's).
  virtual Performance evaluate_n(const Values& values, const Transistor& q, const Conditions& c,
                                 Detail detail) const = 0;
};

/// Every topology, in a fixed order.
std::span<const Topology* const> registry();
/// A topology by name, or nullptr.
const Topology* find_topology(std::string_view name);
/// The names of every topology joined by `sep` ("jfet-cs-self, jfet-cs-divider, ..."), for help texts.
std::string topology_names(std::string_view sep = ", ");

/// The flat capacitive divider at a stage's input: the coupling capacitor c_couple_f in series
/// from a source of source_ohm into an input of r_in_ohm in parallel with c_in_f. The network
/// is a band-pass, Zin/(Rs + 1/sC + Zin) = s C R / (1 + s (Rs C + R Cin + R C) + s^2 Rs C R Cin),
/// whose flat top is R C / (Rs C + R Cin + R C): below the resistive divider R / (Rs + R) by
/// the factor returned, 1 / (1 + R Cin / ((Rs + R) C)). It matters only where the input is
/// megohms and the coupling capacitor small (C / Cin of a few hundred); 1 when any is absent.
double input_divider(double source_ohm, double r_in_ohm, double c_in_f, double c_couple_f);

/// Parallel resistance (0 means absent and is skipped; infinite inputs are fine).
double par(double a, double b);

}  // namespace shelfstage::stages
