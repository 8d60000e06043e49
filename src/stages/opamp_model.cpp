// The op-amp's macro-model (opamp_model.hpp).
#include "opamp_model.hpp"

#include <algorithm>
#include <cmath>
#include <numbers>

#include "opamp_core.hpp"
#include "shelfstage/devices/models.hpp"
#include "shelfstage/stages/topology.hpp"

namespace shelfstage::stages::detail {

namespace {

constexpr double kGm1 = 1e-3;       // input stage, siemens
constexpr double kGm2 = 1e-3;       // second-pole stage, siemens (R2 = 1/kGm2: unity gain)
constexpr double kClampIs = 1e-15;  // clamp diodes' saturation current
constexpr double kNoiseOhm = 1e3;   // the noise generators' resistors
const std::string kRole(kRoleDeviceModel);

}  // namespace

void add_opamp_model(circuit::Circuit& net, const std::string& u, const OpampPins& pins,
                     const devices::OpampInstance& q, double celsius) {
  auto n = [&](const char* name) { return u + "." + name; };
  const double two_pi = 2 * std::numbers::pi;
  const double kt4 = 4 * devices::kBoltzmann * (celsius + devices::kZeroCelsius);
  const double vt = devices::kBoltzmann * (celsius + devices::kZeroCelsius) / devices::kCharge;
  // Inputs: bias currents drawn from the pins (into the amplifier when positive). An input
  // on ground (the inverting stage's + input on a split supply) takes them from ground itself:
  // no element (its two ends would be one net).
  const bool plus_grounded = pins.plus == "0";
  if (!plus_grounded) net.isource(n("IBP"), kRole, pins.plus, "0", q.ib_plus_a);
  net.isource(n("IBN"), kRole, pins.minus, "0", q.ib_minus_a);
  // Current noise: a resistor's thermal noise voltage turned into a current into each pin.
  if (q.in_a_rthz > 0) {
    const double g = q.in_a_rthz / std::sqrt(kt4 * kNoiseOhm);
    if (!plus_grounded) {
      net.resistor(n("RNIP"), kRole, n("nip"), "0", kNoiseOhm);
      net.vccs(n("GNIP"), kRole, "0", pins.plus, n("nip"), "0", g);
    }
    net.resistor(n("RNIM"), kRole, n("nim"), "0", kNoiseOhm);
    net.vccs(n("GNIM"), kRole, "0", pins.minus, n("nim"), "0", g);
  }
  // The offset in series with the + input, then the voltage noise.
  std::string inner = n("pe");
  net.vsource(n("VOS"), kRole, inner, pins.plus, q.vos_v);
  if (q.en_v_rthz > 0) {
    net.resistor(n("RNE"), kRole, n("ne"), "0", kNoiseOhm);
    net.vcvs(n("ENE"), kRole, n("pi"), inner, n("ne"), "0", q.en_v_rthz / std::sqrt(kt4 * kNoiseOhm));
    inner = n("pi");
  }
  // Gain and the dominant pole.
  const double r1 = q.aol / kGm1;
  net.vccs(n("G1"), kRole, "0", n("n1"), inner, pins.minus, kGm1);
  net.resistor(n("R1"), kRole, n("n1"), "0", r1, true);
  net.capacitor(n("C1"), kRole, n("n1"), "0", 1.0 / (two_pi * r1 * q.pole1_hz()));
  std::string driver = n("n1");
  if (q.pole2_hz > 0) {
    const double r2 = 1.0 / kGm2;
    net.vccs(n("G2"), kRole, "0", n("n2"), n("n1"), "0", kGm2);
    net.resistor(n("R2"), kRole, n("n2"), "0", r2, true);
    net.capacitor(n("C2"), kRole, n("n2"), "0", 1.0 / (two_pi * r2 * q.pole2_hz));
    driver = n("n2");
  }
  net.vcvs(n("E1"), kRole, n("n3"), "0", driver, "0", 1.0);
  net.resistor(n("ROUT"), kRole, n("n3"), pins.out, output_ohm(q), true);
  // Clamps: the dominant-pole node within the headroom plus one diode drop at the onset.
  const double vd_on = vt * std::log(kClampOnsetA / kClampIs + 1.0);
  net.vsource(n("VCLP"), kRole, pins.v_pos, n("clp"), q.out_drop_hi_v + vd_on);
  net.vsource(n("VCLN"), kRole, n("cln"), pins.v_neg, q.out_drop_lo_v + vd_on);
  net.diode(n("DP"), kRole, n("n1"), n("clp"), kClampIs, 1.0);
  net.diode(n("DN"), kRole, n("cln"), n("n1"), kClampIs, 1.0);
  if (q.iq_a > 0) net.isource(n("IQ"), kRole, pins.v_pos, pins.v_neg, q.iq_a);
}

std::vector<OpampModelAt> opamp_models(const circuit::Circuit& net) {
  std::vector<OpampModelAt> out;
  for (const auto& el : net.elements()) {
    const auto& e = el.c;
    const std::string& d = e.designator;
    if (e.role != kRoleDeviceModel || d.size() < 5 || d.compare(d.size() - 4, 4, ".VOS") != 0) continue;
    OpampModelAt m;
    m.designator = d.substr(0, d.size() - 4);
    m.plus = e.pins[1];
    if (const auto* g = net.find(m.designator + ".G1")) m.minus = g->c.pins[3];
    if (const auto* r = net.find(m.designator + ".ROUT")) m.out = r->c.pins[1];
    if (const auto* v = net.find(m.designator + ".VCLP")) m.v_pos = v->c.pins[0];
    if (const auto* v = net.find(m.designator + ".VCLN")) m.v_neg = v->c.pins[1];
    out.push_back(std::move(m));
  }
  return out;
}

double clamp_current(const circuit::OperatingPoint& op, const OpampModelAt& m) {
  double i = 0;
  for (const auto& d : op.diodes)
    if (d.designator == m.designator + ".DP" || d.designator == m.designator + ".DN") i = std::max(i, d.i_a);
  return i;
}

}  // namespace shelfstage::stages::detail
