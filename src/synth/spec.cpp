// Validation of a design request: one clear error for each kind of nonsense.
#include "shelfstage/synth/spec.hpp"

#include <cmath>
#include <fmt/format.h>

#include "shelfstage/devices/models.hpp"
#include "shelfstage/error.hpp"

namespace shelfstage::synth {

double Spec::temp_nominal_c() const {
  return temp_c ? 0.5 * (temp_c->first + temp_c->second) : devices::kNominalCelsius;
}

namespace {
void require(bool ok, const std::string& field, double value, const char* why) {
  if (!ok) throw InputError(fmt::format("{} {:g}: {}", field, value, why));
}
bool finite(double x) { return std::isfinite(x); }
}  // namespace

void validate(const Spec& s) {
  require(finite(s.gain) && s.gain > 0, "gain", s.gain, "must be a positive number (V/V, or dB with a dB suffix)");
  require(s.gain <= 1e5, "gain", s.gain, "is beyond what a small-signal stage can be asked for");
  require(finite(s.load_ohm) && s.load_ohm > 0, "load", s.load_ohm, "must be a positive resistance");
  require(finite(s.load_farads) && s.load_farads >= 0 && s.load_farads < 1e-3, "load-cap", s.load_farads,
          "must be zero or a capacitance below 1 mF (a cable's is tens of pF per metre)");
  require(finite(s.supply_lo_v) && s.supply_lo_v > 0, "supply", s.supply_lo_v, "must be a positive voltage");
  require(finite(s.supply_hi_v) && s.supply_hi_v >= s.supply_lo_v, "supply", s.supply_hi_v,
          "range must run from low to high (e.g. 7..9.6)");
  require(!(s.split_supply && s.negative_rail), "supply", -s.supply_lo_v,
          "is negative with a split supply: give the rails' magnitude (15 for +/-15 V)");
  require(s.supply_hi_v <= 1000, "supply", s.supply_hi_v, "is far beyond small-signal stages (at most 1000 V)");
  require(finite(s.zin_min_ohm) && s.zin_min_ohm >= 0, "zin", s.zin_min_ohm, "must be zero or a positive resistance");
  require(finite(s.source_ohm) && s.source_ohm >= 0, "source-z", s.source_ohm, "must be zero or a positive resistance");
  if (s.band_hz) {
    require(finite(s.band_hz->first) && s.band_hz->first > 0, "band", s.band_hz->first,
            "low edge must be a positive frequency");
    require(finite(s.band_hz->second) && s.band_hz->second > s.band_hz->first, "band", s.band_hz->second,
            "high edge must be above the low edge (e.g. 20..20k)");
  }
  if (s.swing_vpp) require(finite(*s.swing_vpp) && *s.swing_vpp > 0, "swing", *s.swing_vpp, "must be a positive Vpp");
  require(finite(s.least_swing) && s.least_swing >= 0 && s.least_swing < 1, "least swing", s.least_swing,
          "must be a fraction of the supply from 0 to below 1");
  if (s.swing_vpp)
    require(*s.swing_vpp < 2 * s.supply_lo_v, "swing", *s.swing_vpp, "cannot exceed twice the supply (Vpp)");
  require(finite(s.max_thd) && s.max_thd >= 0.0001 && s.max_thd <= 0.3, "max-distortion", s.max_thd,
          "must be a fraction from 0.01 % to 30 % (e.g. 1%)");
  require(finite(s.least_margin_deg) && s.least_margin_deg >= 20 && s.least_margin_deg <= 135, "phase-margin",
          s.least_margin_deg, "must be from 20 to 135 degrees (common practice: 45, or 60 without overshoot)");
  if (s.max_current_a)
    require(finite(*s.max_current_a) && *s.max_current_a > 0, "max-current", *s.max_current_a,
            "must be a positive current");
  if (s.temp_c) {
    require(finite(s.temp_c->first) && s.temp_c->first >= -55, "temp", s.temp_c->first,
            "low end must be at least -55 °C");
    require(finite(s.temp_c->second) && s.temp_c->second >= s.temp_c->first && s.temp_c->second <= 150, "temp",
            s.temp_c->second, "range must run from low to high, at most 150 °C");
  }
  require(s.copies >= 1 && s.copies <= 10000, "copies", s.copies, "must be a whole number from 1 to 10000");
  require(s.top >= 1 && s.top <= 1000, "top", s.top, "must be a whole number from 1 to 1000");
  require(s.combine >= 1 && s.combine <= 3, "combine", s.combine, "must be 1, 2 or 3 parts per value");
  require(finite(s.gain_tol) && s.gain_tol > 0 && s.gain_tol < 1, "gain-tol", s.gain_tol,
          "must be a fraction between 0 and 1");
  require(s.mc_samples >= 0 && s.mc_samples <= 1000000, "samples", s.mc_samples, "must be from 0 to 1000000");
  require(s.stages_min >= 1 && s.stages_min <= 3, "stages", s.stages_min, "must be from 1 to 3 (e.g. 1..3)");
  require(s.stages_max >= s.stages_min && s.stages_max <= 3, "stages", s.stages_max,
          "must run from low to high, at most 3 (e.g. 1..3)");
  if (s.piece) require(s.copies == 1, "copies", s.copies, "must be 1 when designing for one measured piece");
}

}  // namespace shelfstage::synth
