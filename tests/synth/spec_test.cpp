// The design request: its derived figures and its validation. Every refusal names the field
// and the value given; the limits are checked against the ranges parts and datasheets state.
#include "shelfstage/synth/spec.hpp"

#include <doctest/doctest.h>

#include <cmath>
#include <limits>
#include <string>

#include "shelfstage/error.hpp"

using namespace shelfstage;
using synth::Spec;

namespace {

/// A request that passes: gain 10 into 10k on a 9 V battery (a PP3, the common supply of
/// small audio and test gear), the audio band 20 Hz .. 20 kHz (common practice).
Spec good() {
  Spec s;
  s.gain = 10;
  s.load_ohm = 10e3;
  s.supply_lo_v = s.supply_hi_v = 9;
  s.band_hz = std::pair{20.0, 20e3};
  return s;
}

/// The message validate() throws for s, or "" when it accepts it.
std::string refusal(const Spec& s) {
  try {
    synth::validate(s);
  } catch (const InputError& e) {
    return e.what();
  }
  return {};
}

}  // namespace

TEST_CASE("spec: a sound request passes, and its derived figures are the ends' midpoints") {
  Spec s = good();
  CHECK(refusal(s).empty());
  // A PP3 runs from 9.6 V fresh to about 7 V spent (common practice for the alkaline cell):
  // the nominal supply is the middle of that range.
  s.supply_lo_v = 7;
  s.supply_hi_v = 9.6;
  CHECK(refusal(s).empty());
  CHECK(s.supply_nominal_v() == doctest::Approx(8.3));
  // With no range given, the ambient is the 25 °C datasheets state their figures at (JEDEC's
  // reference ambient); a range is taken at its middle: 0..70 °C (the commercial range) -> 35.
  CHECK(s.temp_nominal_c() == doctest::Approx(25.0));
  s.temp_c = std::pair{0.0, 70.0};
  CHECK(s.temp_nominal_c() == doctest::Approx(35.0));
  // Capacitors are sized for the band's lower edge, else for 20 Hz, the low end of hearing
  // (common practice for audio stages).
  CHECK(s.f_low_target_hz() == doctest::Approx(20.0));
  s.band_hz = std::pair{5.0, 50e3};
  CHECK(s.f_low_target_hz() == doctest::Approx(5.0));
  s.band_hz.reset();
  CHECK(s.f_low_target_hz() == doctest::Approx(20.0));
  CHECK(s.rail_sign() == 1.0);
  s.negative_rail = true;
  CHECK(s.rail_sign() == -1.0);
}

TEST_CASE("spec: each kind of nonsense is refused with the field and the value it was given") {
  struct Case {
    const char* what;
    void (*spoil)(Spec&);
    const char* field_and_value;  // the message begins with these
  };
  const Case cases[] = {
      {"a negative gain", [](Spec& s) { s.gain = -3; }, "gain -3:"},
      {"a gain of NaN", [](Spec& s) { s.gain = std::nan(""); }, "gain nan:"},
      {"a gain no small-signal stage is asked for", [](Spec& s) { s.gain = 2e5; }, "gain 200000:"},
      {"a load of zero", [](Spec& s) { s.load_ohm = 0; }, "load 0:"},
      // Coaxial cable is about 100 pF per metre (common practice): a farad of it is nonsense.
      {"a load capacitance of 1 mF", [](Spec& s) { s.load_farads = 1e-3; }, "load-cap 0.001:"},
      {"a supply of zero", [](Spec& s) { s.supply_lo_v = 0; }, "supply 0:"},
      {"a supply range upside down", [](Spec& s) { s.supply_hi_v = 5; }, "supply 5:"},
      {"a supply beyond small-signal stages", [](Spec& s) { s.supply_hi_v = 1200; }, "supply 1200:"},
      {"a negative input impedance", [](Spec& s) { s.zin_min_ohm = -1; }, "zin -1:"},
      {"a negative source impedance", [](Spec& s) { s.source_ohm = -50; }, "source-z -50:"},
      {"a band from 0 Hz",
       [](Spec& s) {
         s.band_hz = std::pair{0.0, 20e3};
       },
       "band 0:"},
      {"a band upside down",
       [](Spec& s) {
         s.band_hz = std::pair{20e3, 20.0};
       },
       "band 20:"},
      {"a swing of zero", [](Spec& s) { s.swing_vpp = 0.0; }, "swing 0:"},
      // A stage inside one rail cannot swing more than the rail peak to peak, twice counted.
      {"a swing of twice the supply", [](Spec& s) { s.swing_vpp = 18.0; }, "swing 18:"},
      {"a distortion bound of 50 %", [](Spec& s) { s.max_thd = 0.5; }, "max-distortion 0.5:"},
      {"a distortion bound of zero", [](Spec& s) { s.max_thd = 0; }, "max-distortion 0:"},
      {"a current limit of zero", [](Spec& s) { s.max_current_a = 0.0; }, "max-current 0:"},
      // -55 °C and 150 °C: the ends of the military temperature grade (common practice).
      {"an ambient below -55 °C",
       [](Spec& s) {
         s.temp_c = std::pair{-60.0, 25.0};
       },
       "temp -60:"},
      {"an ambient above 150 °C",
       [](Spec& s) {
         s.temp_c = std::pair{25.0, 175.0};
       },
       "temp 175:"},
      {"an ambient range upside down",
       [](Spec& s) {
         s.temp_c = std::pair{50.0, 20.0};
       },
       "temp 20:"},
      {"zero copies", [](Spec& s) { s.copies = 0; }, "copies 0:"},
      {"no designs to show", [](Spec& s) { s.top = 0; }, "top 0:"},
      {"four parts per value", [](Spec& s) { s.combine = 4; }, "combine 4:"},
      {"a gain window of 100 %", [](Spec& s) { s.gain_tol = 1; }, "gain-tol 1:"},
      {"a negative sample count", [](Spec& s) { s.mc_samples = -1; }, "samples -1:"},
      {"chains of four stages", [](Spec& s) { s.stages_max = 4; }, "stages 4:"},
      {"a stage range upside down", [](Spec& s) { s.stages_min = 3, s.stages_max = 2; }, "stages 2:"},
      {"two copies of one measured piece", [](Spec& s) { s.piece = "bag 3", s.copies = 2; }, "copies 2:"},
  };
  for (const auto& c : cases) {
    CAPTURE(c.what);
    Spec s = good();
    c.spoil(s);
    const std::string m = refusal(s);
    CAPTURE(m);
    CHECK(m.rfind(c.field_and_value, 0) == 0);
    CHECK(m.find(':') + 2 < m.size());  // and says why
  }
}

TEST_CASE("spec: the limits themselves are accepted") {
  // Each end of each accepted range: a limit that moved would refuse one of these.
  Spec s = good();
  s.max_thd = 0.0001;  // 0.01 %, about what a good audio stage reaches (common practice)
  CHECK(refusal(s).empty());
  s.max_thd = 0.3;
  CHECK(refusal(s).empty());
  s.temp_c = std::pair{-55.0, 150.0};
  CHECK(refusal(s).empty());
  s.supply_lo_v = s.supply_hi_v = 1000;
  CHECK(refusal(s).empty());
  s.gain = 1e5;
  CHECK(refusal(s).empty());
  s.copies = 10000;
  s.top = 1000;
  s.combine = 3;
  s.mc_samples = 0;
  s.stages_min = s.stages_max = 3;
  CHECK(refusal(s).empty());
  s = good();
  s.swing_vpp = 17.9;  // just under twice the 9 V supply
  CHECK(refusal(s).empty());
  s.piece = "bag 3";  // one measured piece, one copy
  CHECK(refusal(s).empty());
  s.load_farads = std::numeric_limits<double>::infinity();
  CHECK(refusal(s).rfind("load-cap inf:", 0) == 0);
}
