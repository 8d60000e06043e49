// Tests of src/devices/record.cpp: the transistor kind names of docs/interface.md.
#include "shelfstage/devices/record.hpp"

#include <doctest/doctest.h>

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
