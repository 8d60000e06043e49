// Designs to JSON and back (keys: docs/interface.md, only ever added to; numbers in plain SI).
#include "shelfstage/report/design_json.hpp"

#include <nlohmann/json.hpp>
#include <fmt/format.h>

#include <algorithm>

#include "shelfstage/error.hpp"
#include "shelfstage/report/design_text.hpp"
#include "shelfstage/stages/chain.hpp"
#include "shelfstage/units/text.hpp"
#include "shelfstage/units/tolerance.hpp"

namespace shelfstage::report {

Json text_or_null(const std::string& s) { return s.empty() ? Json(nullptr) : Json(s); }

Json number_or_null(const std::optional<double>& v) { return v ? Json(*v) : Json(nullptr); }

namespace {

Json pair_or_null(const std::optional<std::pair<double, double>>& p) {
  if (!p) return nullptr;
  return Json::array({p->first, p->second});
}

Json range(const synth::Range& r) {
  if (r.empty) return nullptr;
  return Json::array({r.min, r.max});
}

std::string_view join_name(synth::Join j) {
  switch (j) {
    case synth::Join::single: return "single";
    case synth::Join::series: return "series";
    case synth::Join::parallel: return "parallel";
  }
  return "single";
}

synth::Join join_from(const std::string& s) {
  if (s == "series") return synth::Join::series;
  if (s == "parallel") return synth::Join::parallel;
  if (s == "single") return synth::Join::single;
  throw InputError(fmt::format("saved design: recipe join '{}' is not single, series or parallel", s));
}

// Names of the three device-terminal nodes as the JSON spells them (docs/interface.md).
std::array<std::string, 3> node_keys(const synth::Candidate& c) {
  if (c.device.kind == devices::DeviceKind::opamp) return {"plus", "minus", "output"};
  if (devices::is_jfet(c.device.kind)) return {"gate", "source", "drain"};
  return {"base", "emitter", "collector"};
}

}  // namespace

Json spec_json(const synth::Spec& s) {
  Json j;
  j["gain"] = s.gain;
  j["load"] = s.load_ohm;
  j["load_cap"] = s.load_farads > 0 ? Json(s.load_farads) : Json(nullptr);
  // Signed as the user gave it; a range in numeric order ([-9.6, -7] on a negative rail).
  const double k = s.rail_sign();
  if (s.supply_lo_v == s.supply_hi_v)
    j["supply"] = k * s.supply_lo_v;
  else if (s.negative_rail)
    j["supply"] = Json::array({-s.supply_hi_v, -s.supply_lo_v});
  else
    j["supply"] = Json::array({s.supply_lo_v, s.supply_hi_v});
  j["rail"] = rail_words(s);
  j["split"] = s.split_supply;
  j["spread"] = std::string(devices::spread_model_name(s.spread));
  j["zin"] = s.zin_min_ohm;
  j["source_z"] = s.source_ohm;
  j["band"] = pair_or_null(s.band_hz);
  j["swing"] = s.swing_vpp ? Json(*s.swing_vpp) : Json(nullptr);
  j["max_distortion"] = s.max_thd;
  j["phase_margin"] = s.least_margin_deg;
  j["prefer"] = s.prefer == synth::Spec::Prefer::distortion ? "distortion" : "accuracy";
  j["max_current"] = s.max_current_a ? Json(*s.max_current_a) : Json(nullptr);
  j["copies"] = s.copies;
  j["temp"] = pair_or_null(s.temp_c);
  j["topologies"] = s.topologies;
  j["devices"] = s.devices;
  j["piece"] = s.piece ? Json(*s.piece) : Json(nullptr);
  j["gain_tol"] = s.gain_tol;
  j["top"] = s.top;
  j["combine"] = s.combine;
  j["seed"] = s.seed;
  j["samples"] = s.mc_samples;
  j["stages"] = Json::array({s.stages_min, s.stages_max});
  return j;
}

synth::Spec spec_from_json(const nlohmann::json& j) {
  try {
    synth::Spec s;
    s.gain = j.at("gain").get<double>();
    s.load_ohm = j.at("load").get<double>();
    if (j.contains("load_cap") && j["load_cap"].is_number()) s.load_farads = j["load_cap"].get<double>();
    if (j.at("supply").is_array()) {
      s.supply_lo_v = j["supply"][0].get<double>();
      s.supply_hi_v = j["supply"][1].get<double>();
    } else {
      s.supply_lo_v = s.supply_hi_v = j["supply"].get<double>();
    }
    s.negative_rail = s.supply_lo_v < 0 || s.supply_hi_v < 0;
    s.split_supply = j.contains("split") && j["split"].is_boolean() && j["split"].get<bool>();
    const double a = std::abs(s.supply_lo_v), b = std::abs(s.supply_hi_v);
    s.supply_lo_v = std::min(a, b);
    s.supply_hi_v = std::max(a, b);
    if (j.contains("spread") && j["spread"].is_string() &&
        !devices::parse_spread_model(j["spread"].get<std::string>(), s.spread))
      throw InputError(
          fmt::format("saved design: spread '{}' is not correlated or box", j["spread"].get<std::string>()));
    s.zin_min_ohm = j.at("zin").get<double>();
    s.source_ohm = j.at("source_z").get<double>();
    if (j.contains("band") && j["band"].is_array())
      s.band_hz = std::make_pair(j["band"][0].get<double>(), j["band"][1].get<double>());
    if (j.contains("swing") && j["swing"].is_number()) s.swing_vpp = j["swing"].get<double>();
    s.max_thd = j.value("max_distortion", 0.01);
    s.least_margin_deg = j.value("phase_margin", synth::kLeastPhaseMarginDeg);
    if (j.value("prefer", std::string("accuracy")) == "distortion") s.prefer = synth::Spec::Prefer::distortion;
    if (j.contains("max_current") && j["max_current"].is_number()) s.max_current_a = j["max_current"].get<double>();
    s.copies = j.at("copies").get<int>();
    if (j.contains("temp") && j["temp"].is_array())
      s.temp_c = std::make_pair(j["temp"][0].get<double>(), j["temp"][1].get<double>());
    if (j.contains("topologies")) s.topologies = j["topologies"].get<std::vector<std::string>>();
    if (j.contains("devices")) s.devices = j["devices"].get<std::vector<std::string>>();
    if (j.contains("piece") && j["piece"].is_string()) s.piece = j["piece"].get<std::string>();
    s.gain_tol = j.value("gain_tol", 0.10);
    s.top = j.value("top", 5);
    s.combine = j.value("combine", 2);
    s.seed = j.value("seed", std::uint64_t{1});
    s.mc_samples = j.value("samples", 500);
    if (j.contains("stages") && j["stages"].is_array()) {
      s.stages_min = j["stages"][0].get<int>();
      s.stages_max = j["stages"][1].get<int>();
    }
    return s;
  } catch (const nlohmann::json::exception& e) {
    throw InputError(fmt::format("saved design: the request does not read back ({})", e.what()));
  }
}

namespace {

// The device: its name, kind and nominal model parameters.
Json bjt_model_json(const devices::BjtInstance& b) { return {{"is", b.is_a}, {"bf", b.bf}, {"vaf", b.vaf_v}}; }

Json device_json(const synth::Candidate& c) {
  Json dev;
  // Names as clean text (a database from before text was checked may hold others): valid JSON
  // always, and candidate_from_json matches them the same way.
  dev["name"] = units::escape_text(c.device.name);
  dev["kind"] = std::string(devices::kind_name(c.device.kind));
  Json model;
  if (c.device.kind == devices::DeviceKind::opamp) {
    model = opamp_piece_json(c.nominal_device.opamp);
  } else if (devices::is_jfet(c.device.kind)) {
    model["idss"] = c.nominal_device.jfet.idss_a;
    model["vp"] = devices::polarity(c.device.kind) * -c.nominal_device.jfet.vp_abs_v;
    model["lambda"] = c.nominal_device.jfet.lambda_per_v;
  } else {
    model = bjt_model_json(c.nominal_device.bjt);
  }
  dev["model"] = model;
  return dev;
}

// A pair's second device, Q2 (null for a stage of one device).
Json device2_json(const synth::Candidate& c) {
  if (!c.device2) return nullptr;
  return {{"name", units::escape_text(c.device2->name)},
          {"kind", std::string(devices::kind_name(c.device2->kind))},
          {"model", bjt_model_json(c.nominal_device.bjt2)}};
}

// One part of the build: value, recipe, bounds, rating, and for a capacitor its DC across.
Json part_json(const synth::RolePart& rp) {
  Json p;
  p["role"] = rp.role;
  p["designator"] = rp.designator;
  p["value"] = rp.combo.nominal;
  p["tol"] = units::format_tolerance(rp.tol);
  p["recipe"] = {{"join", join_name(rp.combo.join)}, {"values", rp.values}};
  p["kind"] = std::string(1, rp.kind);
  p["text"] = rp.recipe;
  p["bounds"] = Json::array({rp.combo.lo, rp.combo.hi});
  p["rating"] = rp.rating > 0 ? Json(rp.rating) : Json(nullptr);
  if (rp.kind == 'C') p["dielectric"] = rp.dielectric;
  p["polarised"] = rp.polarised;
  p["plus_net"] = text_or_null(rp.plus_net);
  if (rp.kind == 'C') {
    p["minus_net"] = text_or_null(rp.minus_net);
    // The DC across, from the + lead (or the end higher at nominal) to the other, over the
    // nominal build and every corner, from the exact solver; and the exported netlist's
    // nets of those leads (V(plus_node) - V(minus_node) is that DC).
    p["dc"] = range(rp.dc);
    p["plus_node"] = text_or_null(rp.plus_node);
    p["minus_node"] = text_or_null(rp.minus_node);
  }
  p["lines"] = rp.lines;
  if (rp.stage > 0) p["stage"] = rp.stage;
  return p;
}

// The nominal build's figures.
Json nominal_json(const synth::Candidate& c) {
  const auto keys = node_keys(c);
  const auto& n = c.nominal;
  Json nodes = {{keys[0], n.v_in}, {keys[1], n.v_common}, {keys[2], n.v_out}};
  if (c.device2) nodes["collector2"] = n.v_out2;  // a pair's output terminal (Q2's collector)
  return {{"gain", n.gain},
          {"bias_current", n.bias_current_a},
          {"nodes", nodes},
          {"zin", n.zin_ohm},
          {"zout", n.zout_ohm},
          {"f_low", n.f_low_hz},
          {"f_high", n.f_high_hz},
          {"swing_peak", n.swing_peak_v},
          {"supply_current", n.supply_current_a},
          {"swing_up", n.swing_up_v},
          {"swing_down", n.swing_down_v},
          {"swing_vpp", 2 * n.swing_peak_v},
          {"clip_peak", n.clip_peak_v},
          {"loss_low_db", n.loss_lo_db},
          {"loss_high_db", n.loss_hi_db},
          {"hd2", n.hd2},
          {"hd3", n.hd3},
          {"thd", n.thd},
          {"noise", n.noise_v_rthz}};
}

// The worst case's ranges.
Json worst_json(const synth::Candidate& c) {
  const auto keys = node_keys(c);
  const auto& w = c.worst;
  synth::Range vpp = w.swing_peak;
  vpp.min *= 2;
  vpp.max *= 2;
  const bool banded = c.conditions.band_lo_hz > 0 || c.conditions.band_hi_hz > 0;
  return {{"gain", range(w.gain)},
          {"bias_current", range(w.bias_current)},
          {"swing_peak", range(w.swing_peak)},
          {"swing_vpp", range(vpp)},
          {"thd", range(w.thd)},
          {"nodes", {{keys[0], range(w.v_in)}, {keys[1], range(w.v_common)}, {keys[2], range(w.v_out)}}},
          {"zin", range(w.zin)},
          {"zout", range(w.zout)},
          {"f_low", range(w.f_low)},
          {"f_high", range(w.f_high)},
          {"supply_current", range(w.supply_current)},
          {"loss_low_db", banded ? range(w.loss_lo_db) : Json(nullptr)},
          {"loss_high_db", banded ? range(w.loss_hi_db) : Json(nullptr)},
          {"evaluations", w.evaluations}};
}

// The transistor's stress over the worst case beside its ratings (null: not stated);
// the shares the check allows are voltage_share and power_share.
Json transistor_json(const synth::Candidate& c) {
  const auto& w = c.worst;
  const auto& r = c.device.ratings;
  const bool opamp = c.device.kind == devices::DeviceKind::opamp;
  Json j = {{"designator", opamp ? std::string(c.topology->device_designator()) : std::string("Q1")},
            {"v_main", range(w.device_v)},
            {"v_max", number_or_null(r.v_max_v)},
            {"v_reverse", range(w.device_rev)},
            {"v_rev_max", number_or_null(r.v_rev_max_v)},
            {"power", range(w.device_p)},
            {"power_allowed", w.device_p_allowed.empty || !r.p_max_w ? Json(nullptr) : Json(w.device_p_allowed.min)},
            {"p_max", number_or_null(r.p_max_w)},
            {"voltage_share", opamp ? synth::opamp_span_share(c.device.opamp) : synth::kDeviceVoltageShare},
            {"power_share", synth::kDevicePowerShare},
            {"rated", r.any()}};
  if (opamp) {
    // U1: v_main is its supply span, v_reverse its differential input (DeviceStress NOTES);
    // its operating range and the nominal piece's figures beside them.
    j["vs_min"] = c.device.opamp.vs_min_v;
    j["vs_max"] = c.device.opamp.vs_max_v;
    j["opamp"] = opamp_piece_json(c.nominal_device.opamp);
  }
  return j;
}

// A pair's Q2 the same way (no reverse figure: its base-emitter junction is never reversed).
Json transistor2_json(const synth::Candidate& c) {
  if (!c.device2) return nullptr;
  const auto& w = c.worst;
  const auto& r = c.device2->ratings;
  return {{"designator", "Q2"},
          {"v_main", range(w.device2_v)},
          {"v_max", number_or_null(r.v_max_v)},
          {"power", range(w.device2_p)},
          {"p_max", number_or_null(r.p_max_w)},
          {"voltage_share", synth::kDeviceVoltageShare},
          {"power_share", synth::kDevicePowerShare},
          {"rated", r.any()}};
}

}  // namespace

Json opamp_piece_json(const devices::OpampInstance& q) {
  return {{"gbw", q.gbw_hz},
          {"aol", q.aol},
          {"pole2", q.pole2_hz > 0 ? Json(q.pole2_hz) : Json(nullptr)},
          {"slew", q.slew_v_per_s},
          {"vos", q.vos_v},
          {"ib_plus", q.ib_plus_a},
          {"ib_minus", q.ib_minus_a},
          {"iq", q.iq_a > 0 ? Json(q.iq_a) : Json(nullptr)}};
}

Json loop_gain_json(const stages::LoopGain& g) {
  return {{"gain", g.mid},
          {"phase", g.mid_phase_deg},
          {"f_cross", g.crosses() ? Json(g.f_cross_hz) : Json(nullptr)},
          {"phase_margin", g.crosses() ? Json(g.phase_margin_deg) : Json(nullptr)}};
}

namespace {

// A feedback stage's loop gain (null for a stage without a loop, and for a chain, whose
// stages carry their own): at nominal, and its ranges over the corners.
Json loop_json(const synth::Candidate& c) {
  if (!c.loop) return nullptr;
  const synth::LoopFigures& l = *c.loop;
  return {{"broken_at", l.broken_at},
          {"f_mid", l.f_mid_hz},
          {"nominal", loop_gain_json(l.nominal)},
          {"gain", range(l.mid)},
          {"f_cross", range(l.f_cross)},
          {"phase_margin", range(l.margin_deg)},
          {"least_phase_margin", l.least_margin_deg},
          {"corners", l.corners},
          {"crossing", l.crossing}};
}

// A chain's stages, each shaped like a single-stage candidate, evaluated into the next
// stage's input; the chain's own nominal and worst are the whole chain's (nodes: the first
// stage's).
Json stages_json(const synth::Candidate& c) {
  Json st = Json::array();
  for (std::size_t k = 0; k < c.stages.size(); ++k) {
    Json s = candidate_json(c.stages[k]);
    s.erase("rank");
    s.erase("id");
    s.erase("yield");
    s.erase("score");
    s.erase("error_nominal");
    s.erase("error_worst");
    s["stage"] = k + 1;
    s["load"] = c.stages[k].conditions.load_ohm;
    s["source_z"] = c.stages[k].conditions.source_ohm;
    st.push_back(std::move(s));
  }
  return st;
}

}  // namespace

Json candidate_json(const synth::Candidate& c) {
  Json j;
  j["rank"] = c.rank;
  j["id"] = c.id;
  j["topology"] = c.is_chain() ? std::string("chain") : std::string(c.topology->name());
  j["score"] = c.score;
  j["device"] = device_json(c);
  j["device2"] = device2_json(c);
  j["piece"] = c.piece ? Json(units::escape_text(c.piece->label)) : Json(nullptr);
  // Which pieces the worst case covers: "correlated", "box" or "measured".
  j["spread"] = c.piece ? std::string("measured") : std::string(devices::spread_model_name(c.spread_model));
  Json parts = Json::array();
  for (const auto& rp : c.parts) parts.push_back(part_json(rp));
  j["parts"] = parts;
  j["nominal"] = nominal_json(c);
  j["worst"] = worst_json(c);
  if (!c.is_chain()) {
    j["transistor"] = transistor_json(c);
    j["transistor2"] = transistor2_json(c);
  }
  j["yield"] = c.yield ? Json(*c.yield) : Json(nullptr);
  j["pieces"] = c.pieces;
  j["error_nominal"] = c.error_nominal;
  j["error_worst"] = c.error_worst;
  j["cautions"] = c.cautions;
  j["loop"] = loop_json(c);
  if (c.is_chain()) {
    j["stages"] = stages_json(c);
    j["chain"] = c.topology_name();
  }
  return j;
}

std::vector<std::string> candidate_devices(const nlohmann::json& j) {
  std::vector<std::string> names;
  auto take = [&](const nlohmann::json& c) {
    for (const char* key : {"device", "device2"}) {
      if (!c.is_object() || !c.contains(key) || !c[key].is_object()) continue;
      const auto& name = c[key].value("name", nlohmann::json());
      if (name.is_string() && std::find(names.begin(), names.end(), name.get<std::string>()) == names.end())
        names.push_back(name.get<std::string>());
    }
  };
  take(j);
  if (j.is_object() && j.contains("stages") && j["stages"].is_array())
    for (const auto& s : j["stages"]) take(s);
  return names;
}

namespace {

// A chain read back: its stages one by one; the chain's parts are theirs.
synth::Candidate chain_from_json(const nlohmann::json& j, const std::vector<devices::DeviceRecord>& devs,
                                 const std::vector<devices::MeasuredPiece>& pieces) {
  synth::Candidate c;
  for (const auto& sj : j["stages"]) {
    Json s = sj;
    s["id"] = j.value("id", std::string());
    c.stages.push_back(candidate_from_json(s, devs, pieces));
  }
  for (std::size_t k = 0; k < c.stages.size(); ++k) {
    auto& s = c.stages[k];
    const auto& sj = j["stages"][k];
    // After the first stage the previous COUT couples the stage: no CIN of its own.
    const std::size_t cin = stages::input_coupling_role(*s.topology);
    if (k > 0 && cin < s.topology->roles().size() && s.values[cin] == 0) s.values[cin] = stages::kLinkedCin;
    s.conditions.load_ohm = sj.value("load", 0.0);
    s.conditions.source_ohm = sj.value("source_z", 0.0);
    for (const auto& rp : s.parts) c.parts.push_back(rp);
  }
  c.id = j.value("id", std::string());
  c.rank = j.value("rank", 0);
  c.spread_model = c.stages.front().spread_model;
  c.device = c.stages.front().device;
  c.piece = c.stages.front().piece;
  c.pieces = j.value("pieces", 0);
  c.score = j.value("score", 0.0);
  return c;
}

// The device record, spread model and measured piece a saved single stage names.
/// The record a saved design's device (or Q2) names, of the kind it was designed with (a type
/// removed and listed again under its name may be another kind now, even an op-amp).
const devices::DeviceRecord& saved_device(const nlohmann::json& saved, const std::vector<devices::DeviceRecord>& devs) {
  const std::string dev = saved.at("name").get<std::string>();
  const auto it =
      std::find_if(devs.begin(), devs.end(), [&](const auto& d) { return units::escape_text(d.name) == dev; });
  if (it == devs.end()) throw InputError(fmt::format("saved design: device '{}' is no longer in the device list", dev));
  if (saved.contains("kind") && saved["kind"].is_string() &&
      saved["kind"].get<std::string>() != devices::kind_name(it->kind))
    throw InputError(fmt::format("saved design: device '{}' is {} now, not the {} it was designed with", dev,
                                 devices::kind_name(it->kind), saved["kind"].get<std::string>()));
  return *it;
}

void read_device(const nlohmann::json& j, const std::vector<devices::DeviceRecord>& devs,
                 const std::vector<devices::MeasuredPiece>& pieces, synth::Candidate& c) {
  c.device = saved_device(j.at("device"), devs);
  if (j.contains("device2") && j["device2"].is_object()) c.device2 = saved_device(j["device2"], devs);
  if (j.contains("spread") && j["spread"].is_string()) {
    devices::SpreadModel m;
    if (devices::parse_spread_model(j["spread"].get<std::string>(), m)) c.spread_model = m;
  }
  if (j.contains("piece") && j["piece"].is_string()) {
    const std::string label = j["piece"].get<std::string>();
    const auto pit =
        std::find_if(pieces.begin(), pieces.end(), [&](const auto& p) { return units::escape_text(p.label) == label; });
    if (pit == pieces.end()) throw InputError(fmt::format("saved design: measured piece '{}' is gone", label));
    c.piece = *pit;
  }
}

// One saved part (part_json's output) read back.
synth::RolePart part_from_json(const nlohmann::json& p) {
  synth::RolePart rp;
  rp.role = p.at("role").get<std::string>();
  rp.designator = p.at("designator").get<std::string>();
  rp.kind = p.at("kind").get<std::string>().at(0);
  rp.recipe = p.value("text", std::string());
  rp.values = p.at("recipe").at("values").get<std::vector<double>>();
  rp.combo.join = join_from(p.at("recipe").at("join").get<std::string>());
  rp.combo.count = static_cast<std::uint8_t>(rp.values.size());
  rp.combo.nominal = p.at("value").get<double>();
  rp.combo.lo = p.at("bounds")[0].get<double>();
  rp.combo.hi = p.at("bounds")[1].get<double>();
  rp.tol = {1.0 - rp.combo.lo / rp.combo.nominal, rp.combo.hi / rp.combo.nominal - 1.0};
  rp.rating = p["rating"].is_number() ? p["rating"].get<double>() : 0.0;
  rp.combo.rating = rp.rating;
  rp.dielectric = p.value("dielectric", std::string());
  rp.polarised = p.value("polarised", false);
  rp.combo.polarised = rp.polarised;
  if (p.contains("plus_net") && p["plus_net"].is_string()) rp.plus_net = p["plus_net"].get<std::string>();
  if (p.contains("minus_net") && p["minus_net"].is_string()) rp.minus_net = p["minus_net"].get<std::string>();
  if (p.contains("dc") && p["dc"].is_array()) {
    rp.dc.add(p["dc"][0].get<double>());
    rp.dc.add(p["dc"][1].get<double>());
  }
  if (p.contains("plus_node") && p["plus_node"].is_string()) rp.plus_node = p["plus_node"].get<std::string>();
  if (p.contains("minus_node") && p["minus_node"].is_string()) rp.minus_node = p["minus_node"].get<std::string>();
  rp.lines = p.at("lines").get<std::vector<std::vector<std::int64_t>>>();
  rp.stage = p.value("stage", 0);
  return rp;
}

}  // namespace

synth::Candidate candidate_from_json(const nlohmann::json& j, const std::vector<devices::DeviceRecord>& devs,
                                     const std::vector<devices::MeasuredPiece>& pieces) {
  if (j.contains("stages") && j["stages"].is_array() && !j["stages"].empty()) return chain_from_json(j, devs, pieces);
  synth::Candidate c;
  try {
    const std::string topo = j.at("topology").get<std::string>();
    c.topology = stages::find_topology(topo);
    if (!c.topology) throw InputError(fmt::format("saved design: topology '{}' is unknown to this shelfstage", topo));
    c.id = j.at("id").get<std::string>();
    c.rank = j.value("rank", 0);
    read_device(j, devs, pieces, c);
    for (const auto& p : j.at("parts")) {
      synth::RolePart rp = part_from_json(p);
      const std::size_t i = c.topology->role_index(rp.role);
      if (i >= c.topology->roles().size())
        throw InputError(fmt::format("saved design: {} has no role {}", c.topology->name(), rp.role));
      c.values[i] = rp.combo.nominal;
      c.parts.push_back(rp);
    }
    c.pieces = j.value("pieces", 0);
    c.score = j.value("score", 0.0);
  } catch (const nlohmann::json::exception& e) {
    throw InputError(fmt::format("saved design: the candidate does not read back ({})", e.what()));
  }
  return c;
}

Json design_json(const synth::DesignResult& r) {
  Json j;
  j["schema"] = 1;
  j["spec"] = spec_json(r.spec);
  Json cands = Json::array();
  for (const auto& c : r.candidates) cands.push_back(candidate_json(c));
  j["candidates"] = cands;
  if (r.candidates.empty()) {
    Json d;
    d["binding"] = r.diagnosis.binding;
    d["detail"] = r.diagnosis.detail;
    d["suggestions"] = r.diagnosis.suggestions;
    d["with_purchases"] = r.diagnosis.with_purchases ? candidate_json(*r.diagnosis.with_purchases) : Json(nullptr);
    d["pieces_to_buy"] = r.diagnosis.with_purchases ? r.diagnosis.with_purchases->purchases : 0;
    j["diagnosis"] = d;
  }
  j["search"] = {{"proposals", r.proposals}, {"evaluations", r.evaluations}, {"seconds", r.seconds}};
  return j;
}

}  // namespace shelfstage::report
