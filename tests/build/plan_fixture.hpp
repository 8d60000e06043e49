// A common-emitter stage and a shelf it is picked from: the fixture of the build plan and
// pick list tests.
#pragma once
#include <cstdint>
#include <string>
#include <vector>

#include <doctest/doctest.h>

#include "shelfstage/stages/chain.hpp"
#include "shelfstage/stages/topology.hpp"
#include "shelfstage/store/part.hpp"
#include "shelfstage/synth/design.hpp"

namespace shelfstage::test {

inline store::Part resistor(std::int64_t id, double ohms, int qty, const std::string& bin, int reserved = 0) {
  store::Part p;
  p.id = id;
  p.kind = store::PartKind::resistor;
  p.value = ohms;
  p.qty = qty;
  p.reserved = reserved;
  p.bin = bin;
  p.tol = units::Tolerance{0.05, 0.05};
  p.power_w = 0.25;
  return p;
}

inline store::Part capacitor(std::int64_t id, double farads, int qty, const std::string& bin, const std::string& diel,
                             double volts) {
  store::Part p;
  p.id = id;
  p.kind = store::PartKind::capacitor;
  p.value = farads;
  p.qty = qty;
  p.bin = bin;
  p.dielectric = diel;
  p.volts = volts;
  p.tol = units::Tolerance{0.2, 0.2};
  return p;
}

inline store::Part transistor(std::int64_t id, const std::string& device, int qty, const std::string& bin) {
  store::Part p;
  p.id = id;
  p.kind = store::PartKind::npn;
  p.device = device;
  p.qty = qty;
  p.bin = bin;
  return p;
}

inline store::Part opamp_line(std::int64_t id, const std::string& device, int qty, const std::string& bin,
                              int reserved = 0) {
  store::Part p;
  p.id = id;
  p.kind = store::PartKind::opamp;
  p.device = device;
  p.qty = qty;
  p.reserved = reserved;
  p.bin = bin;
  return p;
}

inline synth::RolePart role(const std::string& name, const std::string& designator, char kind,
                            std::vector<double> values, std::vector<std::vector<std::int64_t>> lines,
                            synth::Join join = synth::Join::single) {
  synth::RolePart rp;
  rp.role = name;
  rp.designator = designator;
  rp.kind = kind;
  rp.values = std::move(values);
  rp.lines = std::move(lines);
  rp.combo.join = join;
  rp.combo.count = static_cast<std::uint8_t>(rp.values.size());
  double v = 0;
  if (join == synth::Join::parallel) {
    for (double x : rp.values) v += 1.0 / x;
    v = 1.0 / v;
  } else {
    for (double x : rp.values) v += x;
  }
  rp.combo.nominal = v;
  rp.tol = units::Tolerance{0.05, 0.05};
  return rp;
}

/// A common-emitter stage (the roles of bjt-ce-divider, docs/interface.md) on the shelf below.
inline synth::Candidate ce_stage() {
  synth::Candidate c;
  c.id = "s0000pick";
  c.topology = stages::find_topology("bjt-ce-divider");
  REQUIRE(c.topology != nullptr);
  c.device.name = "SQ-420";
  c.device.kind = devices::DeviceKind::npn;
  c.parts.push_back(role("R1", "R1", 'R', {47e3}, {{1, 2}}));
  c.parts.push_back(role("R2", "R2", 'R', {10e3}, {{3}}));
  c.parts.push_back(role("RC", "R3", 'R', {10e3}, {{3}}));
  c.parts.push_back(role("RE1", "R4", 'R', {470, 4750}, {{4}, {5}}, synth::Join::parallel));
  c.parts.push_back(role("RE2", "R5", 'R', {1e3, 150}, {{6}, {7}}, synth::Join::series));
  auto ce = role("CE", "C2", 'C', {220e-6}, {{10}});
  ce.polarised = true;
  ce.plus_net = "x";
  ce.dielectric = "electrolytic";
  c.parts.push_back(ce);
  c.parts.push_back(role("CIN", "C1", 'C', {470e-9}, {{11}}));
  auto cout = role("COUT", "C3", 'C', {4.7e-6}, {{12}});
  cout.polarised = true;
  cout.plus_net = "collector";
  cout.dielectric = "electrolytic";
  c.parts.push_back(cout);
  return c;
}

inline std::vector<store::Part> ce_shelf() {
  return {resistor(1, 47e3, 1, "A10"),
          resistor(2, 47e3, 5, "A11"),
          resistor(3, 10e3, 9, "A2"),
          resistor(4, 470, 4, "A3"),
          resistor(5, 4750, 4, "A3"),
          resistor(6, 1e3, 4, "A1"),
          resistor(7, 150, 4, "A1"),
          capacitor(10, 220e-6, 3, "C5", "electrolytic", 16),
          capacitor(11, 470e-9, 3, "B6", "film", 63),
          capacitor(12, 4.7e-6, 3, "C1", "electrolytic", 35),
          transistor(20, "sq-420", 1, "D11"),
          transistor(21, "SQ-420", 5, "D9")};
}

/// An op-amp stage as the build plan sees it: U1 of an op-amp type with `channels`
/// amplifiers per package ("SA-2" a dual, "SA-4" a quad ...) and two resistors from the CE
/// shelf (R1 47k, R2 10k). The plan reads no more of the topology than its name, and no
/// op-amp topology is registered yet: a transistor topology's name stands in.
inline synth::Candidate opamp_stage(int channels) {
  synth::Candidate c;
  c.id = "s0000opamp";
  c.topology = stages::find_topology("bjt-ce-divider");
  REQUIRE(c.topology != nullptr);
  c.device.name = "SA-" + std::to_string(channels);
  c.device.kind = devices::DeviceKind::opamp;
  c.device.opamp.channels = channels;
  c.parts.push_back(role("RF", "R1", 'R', {47e3}, {{1, 2}}));
  c.parts.push_back(role("RG", "R2", 'R', {10e3}, {{3}}));
  return c;
}

/// A chain of the given stages as synth::detail's link makes one: designators in the
/// hundreds (R101, R201 ...), each part marked with its stage.
inline synth::Candidate chain_of(std::vector<synth::Candidate> stage_list) {
  synth::Candidate ch;
  ch.id = "c0000chain";
  for (std::size_t k = 0; k < stage_list.size(); ++k) {
    for (auto& rp : stage_list[k].parts) {
      rp.designator = stages::chain_designator(k, rp.designator);
      rp.stage = static_cast<int>(k) + 1;
      ch.parts.push_back(rp);
    }
  }
  ch.device = stage_list.front().device;
  ch.stages = std::move(stage_list);
  return ch;
}

}  // namespace shelfstage::test
