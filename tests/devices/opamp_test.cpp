// Tests of src/devices/opamp.cpp: the op-amp pieces a worst case takes from a datasheet
// record. The figures are the record's own (the demo's invented types, data-demo/devices.csv,
// restated here); the rules checked are the datasheet conventions opamp.hpp states (limits
// are maxima of magnitudes; a slow piece is slow in GBW, slew rate and open-loop gain
// together; FET-input leakage doubling every 10 K: common datasheet behaviour, from memory).
#include "shelfstage/devices/opamp.hpp"
#include "support/opamp_records.hpp"

#include <doctest/doctest.h>

#include <algorithm>
#include <set>
#include <utility>

using namespace shelfstage::devices;
using shelfstage::test::bipolar_input;
using shelfstage::test::jfet_input;

TEST_CASE("op-amp nominal piece: typical dynamics, no offset, half the bias current into both inputs") {
  const OpampParams o = bipolar_input();
  const OpampInstance q = opamp_nominal(o);
  CHECK(q.gbw_hz == 1.1e6);
  CHECK(q.slew_v_per_s == 5e5);
  CHECK(q.aol == 2e5);
  CHECK(q.pole1_hz() == doctest::Approx(5.5));  // GBW / Aol: 1.1 MHz over 200 V/mV
  CHECK(q.pole2_hz == 2.5e6);
  CHECK(q.vos_v == 0);
  CHECK(q.ib_plus_a == doctest::Approx(200e-9));
  CHECK(q.ib_minus_a == q.ib_plus_a);
  CHECK(q.out_drop_hi_v == 1.5);
  CHECK(q.en_v_rthz == 10e-9);
  CHECK(q.iq_a == 2e-3);
}

TEST_CASE("op-amp corner pieces reach every limit the datasheet states, and none beyond") {
  for (const OpampParams& o : {bipolar_input(), jfet_input()}) {
    const auto corners = opamp_corners(o);
    REQUIRE(corners.size() == 16);
    std::set<std::string> tags;
    std::set<std::pair<double, double>> currents;
    double gbw_lo = 1e300, gbw_hi = 0, vos_lo = 0, vos_hi = 0;
    for (const auto& c : corners) {
      const OpampInstance& q = c.figures;
      tags.insert(c.tag);
      // A slow piece is slow in all three figures together.
      const bool slow = q.gbw_hz == o.gbw_low_hz();
      CHECK(q.slew_v_per_s == (slow ? o.slew_low_v_per_s() : o.slew_v_per_s.typ));
      CHECK(q.aol == (slow ? o.aol_low() : o.aol.typ));
      gbw_lo = std::min(gbw_lo, q.gbw_hz);
      gbw_hi = std::max(gbw_hi, q.gbw_hz);
      vos_lo = std::min(vos_lo, q.vos_v);
      vos_hi = std::max(vos_hi, q.vos_v);
      // Never beyond the maxima; the two inputs apart by at most the offset current.
      CHECK(std::abs(q.vos_v) == o.vos_max_v);
      CHECK(std::abs(q.ib_plus_a) <= o.ib_max_a * (1 + 1e-12));
      CHECK(std::abs(q.ib_minus_a) <= o.ib_max_a * (1 + 1e-12));
      CHECK(std::abs(q.ib_plus_a - q.ib_minus_a) <= o.ios_max_a.value_or(o.ib_max_a) * (1 + 1e-12));
      CHECK(std::max(std::abs(q.ib_plus_a), std::abs(q.ib_minus_a)) == doctest::Approx(o.ib_max_a));
      currents.insert({q.ib_plus_a, q.ib_minus_a});
      CHECK(q.out_drop_hi_v == o.out_drop_hi_v);
      CHECK(q.cm_drop_lo_v == o.cm_drop_lo_v);
    }
    CHECK(tags.size() == corners.size());  // every piece named apart
    CHECK(gbw_lo == o.gbw_low_hz());
    CHECK(gbw_hi == o.gbw_hz.typ);
    CHECK(vos_lo == -o.vos_max_v);
    CHECK(vos_hi == o.vos_max_v);
    CHECK(currents.size() == 4);  // either sign, either input the larger
  }
  // Without a stated minimum the JFET-input type's slow piece takes the documented shares.
  const auto slow = opamp_corners(jfet_input()).front().figures;
  CHECK(slow.gbw_hz == doctest::Approx(2e6));
  CHECK(slow.slew_v_per_s == doctest::Approx(6.5e6));
  CHECK(slow.aol == doctest::Approx(1e4));
}

TEST_CASE("a FET input's bias current doubles every 10 K above 25 C; a bipolar input's stays") {
  const OpampParams fet = jfet_input(), bip = bipolar_input();
  const OpampInstance f = opamp_corners(fet).front().figures, b = opamp_corners(bip).front().figures;
  CHECK(opamp_at(f, fet, 45).ib_plus_a == doctest::Approx(4 * f.ib_plus_a));
  CHECK(opamp_at(f, fet, 85).ib_minus_a == doctest::Approx(64 * f.ib_minus_a));
  CHECK(opamp_at(f, fet, 0).ib_plus_a == f.ib_plus_a);  // the 25 C maximum stays the floor
  CHECK(opamp_at(b, bip, 85).ib_plus_a == b.ib_plus_a);
  CHECK(opamp_at(f, fet, 85).gbw_hz == f.gbw_hz);
}
