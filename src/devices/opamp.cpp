// Op-amp pieces from a datasheet record (opamp.hpp).
#include "shelfstage/devices/opamp.hpp"

#include <cmath>
#include <fmt/format.h>

#include "shelfstage/units/notation.hpp"

namespace shelfstage::devices {

namespace {

// The figures every piece shares: the datasheet's limits of swing, common-mode range and
// noise, and its supply current.
OpampInstance limits_of(const OpampParams& p) {
  OpampInstance q;
  q.pole2_hz = p.pole2_hz.value_or(0.0);
  q.out_drop_hi_v = p.out_drop_hi_v;
  q.out_drop_lo_v = p.out_drop_lo_v;
  q.out_drop_ohm = p.out_drop_ohm;
  q.iout_max_a = p.iout_max_a;
  q.cm_drop_hi_v = p.cm_drop_hi_v;
  q.cm_drop_lo_v = p.cm_drop_lo_v;
  q.en_v_rthz = p.en_v_rthz.value_or(0.0);
  q.in_a_rthz = p.in_a_rthz.value_or(0.0);
  q.iq_a = p.iq_a.value_or(0.0);
  q.vs_min_v = p.vs_min_v;
  q.vs_max_v = p.vs_max_v;
  return q;
}

std::string amps(double a) { return units::format_value(a, units::Unit::ampere); }

}  // namespace

OpampInstance opamp_nominal(const OpampParams& p) {
  OpampInstance q = limits_of(p);
  q.gbw_hz = p.gbw_hz.typ;
  q.slew_v_per_s = p.slew_v_per_s.typ;
  q.aol = p.aol.typ;
  q.ib_plus_a = q.ib_minus_a = 0.5 * p.ib_max_a;
  return q;
}

std::vector<OpampPiece> opamp_corners(const OpampParams& p) {
  std::vector<OpampPiece> out;
  const double ios = std::min(p.ios_max_a.value_or(p.ib_max_a), p.ib_max_a);
  for (const bool slow : {true, false})
    for (const double vos_sign : {-1.0, 1.0})
      for (const double ib_sign : {1.0, -1.0})
        for (const bool plus_larger : {true, false}) {
          OpampInstance q = limits_of(p);
          q.gbw_hz = slow ? p.gbw_low_hz() : p.gbw_hz.typ;
          q.slew_v_per_s = slow ? p.slew_low_v_per_s() : p.slew_v_per_s.typ;
          q.aol = slow ? p.aol_low() : p.aol.typ;
          // A slow process is slow throughout: its second pole sits lower in proportion.
          if (slow && q.pole2_hz > 0) q.pole2_hz *= p.gbw_low_hz() / p.gbw_hz.typ;
          q.vos_v = vos_sign * p.vos_max_v;
          // Both inputs at the bias current's maximum magnitude but one, which sits the
          // offset current nearer zero.
          const double big = ib_sign * p.ib_max_a, small = ib_sign * (p.ib_max_a - ios);
          q.ib_plus_a = plus_larger ? big : small;
          q.ib_minus_a = plus_larger ? small : big;
          const std::string tag = fmt::format(
              "{}, Vos {}{}, Ib {}{} ({} input {})",
              slow ? "GBW, slew and Aol at their minima" : "GBW, slew and Aol typical", vos_sign > 0 ? "+" : "-",
              units::format_value(p.vos_max_v, units::Unit::volt), ib_sign > 0 ? "+" : "-", amps(p.ib_max_a),
              plus_larger ? "-" : "+", ios > 0 ? "nearer zero by the offset current" : "alike");
          out.push_back({tag, q});
        }
  return out;
}

OpampInstance opamp_at(const OpampInstance& piece, const OpampParams& p, double celsius) {
  OpampInstance q = piece;
  if (p.ib_max_a <= kFetInputBiasA && celsius > 25.0) {
    const double k = std::pow(2.0, (celsius - 25.0) / 10.0);
    q.ib_plus_a *= k;
    q.ib_minus_a *= k;
  }
  return q;
}

}  // namespace shelfstage::devices
