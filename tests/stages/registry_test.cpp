// Tests of src/stages/registry.cpp: every topology registered once, found by its name, listed
// for the help texts; and each entry is the stage it says it is: a buffer follows its input
// with a gain just under one, any other stage inverts and amplifies, as ngspice measures its
// reference design (Sedra & Smith: the common source and common emitter invert, the source
// and emitter followers have a gain just under one, in phase).
#include <doctest/doctest.h>

#include <set>

#include "stage_bench.hpp"

using namespace shelfstage;
using namespace shelfstage::test;

TEST_CASE("registry: each topology once, found by its exact name, unknown names found nowhere") {
  const auto all = stages::registry();
  REQUIRE(all.size() >= 6);
  std::set<std::string_view> names;
  for (const stages::Topology* t : all) {
    REQUIRE(t != nullptr);
    INFO(t->name());
    CHECK(names.insert(t->name()).second);
    CHECK(stages::find_topology(t->name()) == t);
    // Names as scripts type them: lower-case letters, digits and hyphens (command-line
    // option values in POSIX utility style; common practice).
    for (char ch : t->name()) CHECK(((ch >= 'a' && ch <= 'z') || (ch >= '0' && ch <= '9') || ch == '-'));
    // One help line each, and a device kind to build it with.
    CHECK(!t->summary().empty());
    CHECK(t->summary().find('\n') == std::string_view::npos);
    bool any_kind = false;
    for (auto k : {DeviceKind::njfet, DeviceKind::pjfet, DeviceKind::npn, DeviceKind::pnp, DeviceKind::opamp})
      any_kind |= t->accepts(k);
    CHECK(any_kind);
  }
  CHECK(stages::find_topology("") == nullptr);
  CHECK(stages::find_topology("jfet") == nullptr);
  CHECK(stages::find_topology("JFET-CS-SELF") == nullptr);
  CHECK(stages::find_topology("jfet-cs-self ") == nullptr);
}

TEST_CASE("registry: a topology takes transistors or op-amps, never both; an op-amp is never a pair's Q2") {
  int opamp_stages = 0;
  for (const stages::Topology* t : stages::registry()) {
    INFO(t->name());
    const bool transistors = t->accepts(DeviceKind::njfet) || t->accepts(DeviceKind::pjfet) ||
                             t->accepts(DeviceKind::npn) || t->accepts(DeviceKind::pnp);
    CHECK(transistors != t->accepts(DeviceKind::opamp));
    if (t->accepts(DeviceKind::opamp)) {
      ++opamp_stages;
      CHECK(t->device_designator() == "U1");
      CHECK(t->second_device() == stages::SecondDevice::none);
    } else {
      CHECK(t->device_designator() == "Q1");
      CHECK(t->supply_form() == stages::SupplyForm::single);
    }
    for (auto k : {DeviceKind::njfet, DeviceKind::pjfet, DeviceKind::npn, DeviceKind::pnp}) {
      CHECK_FALSE(t->accepts_second(k, DeviceKind::opamp));
      CHECK_FALSE(t->accepts_second(DeviceKind::opamp, k));
    }
  }
  CHECK(opamp_stages == 6);  // non-inverting, inverting and buffer, on one supply and split
}

TEST_CASE("topology_names: every name in registry order, joined by the separator") {
  const auto all = stages::registry();
  const std::string comma = stages::topology_names();
  const std::string bar = stages::topology_names(" | ");
  std::size_t at = 0;
  for (std::size_t i = 0; i < all.size(); ++i) {
    const std::string_view n = all[i]->name();
    CHECK(comma.compare(at, n.size(), n) == 0);
    at += n.size();
    if (i + 1 < all.size()) {
      CHECK(comma.compare(at, 2, ", ") == 0);
      at += 2;
    }
  }
  CHECK(at == comma.size());
  CHECK(bar.size() == comma.size() + (all.size() - 1));  // " | " is one character longer than ", "
  CHECK(bar.find(", ") == std::string::npos);
}

TEST_CASE(
    "registry: a buffer follows in phase just under one, a feedback pair amplifies in phase (two inverting devices), "
    "every other stage inverts with gain (ngspice)") {
  for (const stages::Topology* t : stages::registry()) {
    if (!takes_transistors(*t)) continue;  // op-amp stages' signs: opamp_stages_test.cpp
    const StageCase sc = nominal_reference(*t, 1e3);
    INFO(sc.label);
    const SpiceFigures ng = spice_small_signal(sc, 1000.0);
    if (t->is_buffer()) {
      CHECK(ng.gain > 0.5);
      CHECK(ng.gain < 1.0);
    } else if (t->second_device() != stages::SecondDevice::none) {
      CHECK(ng.gain > 1.0);
    } else {
      CHECK(ng.gain < -1.0);
    }
  }
}
