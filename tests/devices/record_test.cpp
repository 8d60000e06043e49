// Tests of src/devices/record.cpp: the device kind names of docs/interface.md, the op-amp
// record's derived figures, and how a type's stock is counted.
#include "shelfstage/devices/record.hpp"

#include <doctest/doctest.h>

#include <limits>

using shelfstage::devices::DeviceKind;
using shelfstage::devices::kind_name;
using shelfstage::devices::parse_kind;

// The `kind` column of stock.csv and devices.csv (docs/interface.md): NJFET, PJFET, NPN, PNP.
TEST_CASE("Kind names as the CSV files write them: NJFET PJFET NPN PNP") {
  CHECK(kind_name(DeviceKind::njfet) == "NJFET");
  CHECK(kind_name(DeviceKind::pjfet) == "PJFET");
  CHECK(kind_name(DeviceKind::npn) == "NPN");
  CHECK(kind_name(DeviceKind::pnp) == "PNP");
}

TEST_CASE("parse_kind reads the names in any case and nothing else") {
  for (const DeviceKind k : {DeviceKind::njfet, DeviceKind::pjfet, DeviceKind::npn, DeviceKind::pnp}) {
    DeviceKind out = k == DeviceKind::npn ? DeviceKind::pnp : DeviceKind::npn;
    CHECK(parse_kind(kind_name(k), out));
    CHECK(out == k);
  }
  DeviceKind out = DeviceKind::npn;
  CHECK(parse_kind("njfet", out));
  CHECK(out == DeviceKind::njfet);
  CHECK(parse_kind("Pnp", out));
  CHECK(out == DeviceKind::pnp);
  for (const char* text : {"", "JFET", "N", "NJFETS", "N-JFET", " NPN", "NPN ", "BJT", "R", "C", "npn\n"}) {
    CAPTURE(text);
    CHECK_FALSE(parse_kind(text, out));
  }
  CHECK(out == DeviceKind::pnp);  // untouched by the failures
}

// Sign conventions (docs/physics.md): P-channel and PNP mirror every voltage and current.
TEST_CASE("Polarity: N-channel and NPN +1, P-channel and PNP -1") {
  CHECK(shelfstage::devices::polarity(DeviceKind::njfet) == 1.0);
  CHECK(shelfstage::devices::polarity(DeviceKind::npn) == 1.0);
  CHECK(shelfstage::devices::polarity(DeviceKind::pjfet) == -1.0);
  CHECK(shelfstage::devices::polarity(DeviceKind::pnp) == -1.0);
  CHECK(shelfstage::devices::is_jfet(DeviceKind::pjfet));
  CHECK_FALSE(shelfstage::devices::is_jfet(DeviceKind::npn));
}

TEST_CASE("OPAMP: a kind of its own, no transistor, no polarity") {
  using namespace shelfstage::devices;
  CHECK(kind_name(DeviceKind::opamp) == "OPAMP");
  DeviceKind out = DeviceKind::npn;
  CHECK(parse_kind("opamp", out));
  CHECK(out == DeviceKind::opamp);
  CHECK_FALSE(parse_kind("op-amp", out));
  CHECK(is_opamp(DeviceKind::opamp));
  CHECK_FALSE(is_transistor(DeviceKind::opamp));
  CHECK_FALSE(is_jfet(DeviceKind::opamp));
  CHECK_FALSE(is_bjt(DeviceKind::opamp));
  for (const DeviceKind k : {DeviceKind::njfet, DeviceKind::pjfet, DeviceKind::npn, DeviceKind::pnp}) {
    CHECK(is_transistor(k));
    CHECK_FALSE(is_opamp(k));
    CHECK(is_jfet(k) != is_bjt(k));
  }
  // A transistor-only path that took an op-amp is a bug, not a P-type device.
  CHECK_THROWS_AS(polarity(DeviceKind::opamp), std::invalid_argument);
  CHECK(with_article(DeviceKind::opamp) == "an op-amp");
  CHECK(with_article(DeviceKind::npn) == "an NPN");
  CHECK(with_article(DeviceKind::njfet) == "an NJFET");
  CHECK(with_article(DeviceKind::pnp) == "a PNP");
  CHECK(with_article(DeviceKind::pjfet) == "a PJFET");
}

TEST_CASE("op-amp record: stated minima kept, unstated ones derived; rails reached within 50 mV") {
  using namespace shelfstage::devices;
  OpampParams o;
  o.gbw_hz.typ = 1e6;
  o.slew_v_per_s.typ = 5e5;
  o.aol.typ = 2e5;
  // Unstated: half the typical GBW and slew rate, a tenth of the open-loop gain (the
  // judgements documented in record.hpp and docs/physics.md).
  CHECK_FALSE(o.gbw_hz.min);
  CHECK(o.gbw_low_hz() == 5e5);
  CHECK(o.slew_low_v_per_s() == 2.5e5);
  CHECK(o.aol_low() == doctest::Approx(2e4));
  o.gbw_hz.min = 7e5;
  o.slew_v_per_s.min = 3e5;
  o.aol.min = 2.5e4;
  CHECK(o.gbw_low_hz() == 7e5);
  CHECK(o.slew_low_v_per_s() == 3e5);
  CHECK(o.aol_low() == 2.5e4);
  // A single-supply bipolar type: inputs to 0.3 V beyond V-, output to 20 mV of V-.
  o.cm_drop_hi_v = 1.5;
  o.cm_drop_lo_v = -0.3;
  o.out_drop_hi_v = 1.5;
  o.out_drop_lo_v = 0.02;
  o.out_drop_ohm = 100;
  CHECK_FALSE(o.inputs_reach_hi());
  CHECK(o.inputs_reach_lo());
  CHECK_FALSE(o.output_reaches_hi());
  CHECK(o.output_reaches_lo());
  o.out_drop_hi_v = 0.05;  // the threshold itself counts
  CHECK(o.output_reaches_hi());
  o.out_drop_hi_v = 0.051;
  CHECK_FALSE(o.output_reaches_hi());
  // Headroom grows by the drop per ampere: 5 mA through 100 ohms is 0.5 V more.
  CHECK(o.out_headroom_hi_v(5e-3) == doctest::Approx(0.551));
  CHECK(o.out_headroom_lo_v(0) == 0.02);
}

TEST_CASE("counting: a transistor line counts pieces, an op-amp line packages of its channels") {
  // Counting rules of the bench (common practice): a stock line of an op-amp counts
  // packages, each op-amp place takes one amplifier of a package; a transistor is one
  // piece per place.
  using namespace shelfstage::devices;
  DeviceRecord q;
  q.kind = DeviceKind::npn;
  q.opamp.channels = 4;  // meaningless for a transistor: never read
  CHECK(channel_units(q, 5) == 5);
  CHECK(packages_for(q, 5) == 5);
  DeviceRecord dual;
  dual.kind = DeviceKind::opamp;
  dual.opamp.channels = 2;
  CHECK(channel_units(dual, 1) == 2);
  CHECK(channel_units(dual, 3) == 6);
  CHECK(packages_for(dual, 1) == 1);
  CHECK(packages_for(dual, 2) == 1);
  CHECK(packages_for(dual, 5) == 3);  // five places: three packages, one channel spare
  DeviceRecord quad = dual;
  quad.opamp.channels = 4;
  CHECK(packages_for(quad, 3) == 1);
  CHECK(packages_for(quad, 4) == 1);
  CHECK(packages_for(quad, 5) == 2);
  CHECK(channel_units(quad, 2) == 8);
  DeviceRecord single = dual;
  single.opamp.channels = 1;
  CHECK(packages_for(single, 3) == 3);
  // Nothing, or less, needs and gives nothing; a huge stock does not overflow.
  CHECK(packages_for(quad, 0) == 0);
  CHECK(channel_units(quad, -2) == 0);
  CHECK(channel_units(quad, std::numeric_limits<int>::max()) == std::numeric_limits<int>::max());
  // The board's designators: Q1 for a transistor, U1 for an op-amp (an integrated circuit).
  CHECK(device_designator(DeviceKind::njfet) == "Q1");
  CHECK(device_designator(DeviceKind::pnp) == "Q1");
  CHECK(device_designator(DeviceKind::opamp) == "U1");
}
