// Tests of src/stages/bjt_fb_pair.cpp and the pair's closed form (src/stages/pair.cpp): fast
// evaluator and evaluate_exact against ngspice (operating point, gain, corners, noise,
// distortion, clipping), and the feedback's promise: the gain follows 1 + RF / RE1 rather
// than either device's hFE (the series-shunt feedback amplifier's rule, common practice).
#include <doctest/doctest.h>

#include "stage_bench.hpp"

using namespace shelfstage;
using namespace shelfstage::test;

TEST_CASE("bjt-fb-pair against ngspice: NPN-PNP and PNP-NPN, hFE 100 to 400, 5 V to 24 V") {
  // Both evaluators within tolerance of ngspice at every case (stage_bench.hpp); most of the
  // harness's cases have an active reference design.
  CHECK(check_pair_cases(*stages::find_topology("bjt-fb-pair")) >= 12);
}

TEST_CASE("bjt-fb-pair: the gain follows 1 + RF / RE1 across both devices' hFE limits, in ngspice") {
  // Every pairing of Q1's and Q2's hFE-limit pieces (hFE 100..400 and 100..300, each with VBE
  // +/- 30 mV): the gain moves by a few per cent across a 4:1 and a 3:1 hFE spread.
  const std::vector<double> gains =
      check_gain_follows_ratio(*stages::find_topology("bjt-fb-pair"), devices::DeviceSpread(npn_record()),
                               devices::DeviceSpread(pnp_record()), 0.8, 1.08);
  CHECK(gains.size() == 16);  // four corner pieces of each device, every pairing
}
