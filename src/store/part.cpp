// Stock line basics: kind codes, field checks, the short description used in the ledger, and
// the one table of a device type's figure columns.
#include "shelfstage/store/part.hpp"

#include <fmt/format.h>

#include <algorithm>
#include <array>
#include <cctype>
#include <cmath>

#include "shelfstage/units/notation.hpp"
#include "shelfstage/units/text.hpp"

namespace shelfstage::store {
namespace {

struct KindName {
  PartKind kind;
  std::string_view code;
};
constexpr std::array<KindName, 7> kKinds{{{PartKind::resistor, "R"},
                                          {PartKind::capacitor, "C"},
                                          {PartKind::njfet, "NJFET"},
                                          {PartKind::pjfet, "PJFET"},
                                          {PartKind::npn, "NPN"},
                                          {PartKind::pnp, "PNP"},
                                          {PartKind::opamp, "OPAMP"}}};

std::string lower(std::string_view s) {
  std::string out(s);
  for (char& c : out) c = static_cast<char>(std::tolower(static_cast<unsigned char>(c)));
  return out;
}

std::string_view trim(std::string_view s) {
  while (!s.empty() && std::isspace(static_cast<unsigned char>(s.front()))) s.remove_prefix(1);
  while (!s.empty() && std::isspace(static_cast<unsigned char>(s.back()))) s.remove_suffix(1);
  return s;
}

/// True when `word` appears in `text` as a whole word (letters and digits around it end it).
bool has_word(const std::string& text, std::string_view word) {
  for (std::size_t at = text.find(word); at != std::string::npos; at = text.find(word, at + 1)) {
    const bool left_ok = at == 0 || !std::isalnum(static_cast<unsigned char>(text[at - 1]));
    const std::size_t end = at + word.size();
    const bool right_ok = end >= text.size() || !std::isalnum(static_cast<unsigned char>(text[end]));
    if (left_ok && right_ok) return true;
  }
  return false;
}

}  // namespace

std::string_view kind_code(PartKind kind) {
  for (const auto& k : kKinds)
    if (k.kind == kind) return k.code;
  return "?";
}

bool parse_kind_code(std::string_view text, PartKind& out) {
  const std::string want = lower(trim(text));
  for (const auto& k : kKinds) {
    if (lower(k.code) == want) {
      out = k.kind;
      return true;
    }
  }
  return false;
}

PartKind part_kind(devices::DeviceKind kind) {
  switch (kind) {
    case devices::DeviceKind::njfet: return PartKind::njfet;
    case devices::DeviceKind::pjfet: return PartKind::pjfet;
    case devices::DeviceKind::npn: return PartKind::npn;
    case devices::DeviceKind::pnp: return PartKind::pnp;
    case devices::DeviceKind::opamp: return PartKind::opamp;
  }
  return PartKind::njfet;
}

std::string_view kind_codes_text() { return "R, C, NJFET, PJFET, NPN, PNP, OPAMP"; }

bool device_kind(PartKind kind, devices::DeviceKind& out) {
  switch (kind) {
    case PartKind::njfet: out = devices::DeviceKind::njfet; return true;
    case PartKind::pjfet: out = devices::DeviceKind::pjfet; return true;
    case PartKind::npn: out = devices::DeviceKind::npn; return true;
    case PartKind::pnp: out = devices::DeviceKind::pnp; return true;
    case PartKind::opamp: out = devices::DeviceKind::opamp; return true;
    case PartKind::resistor:
    case PartKind::capacitor: return false;
  }
  return false;
}

bool Part::polarised() const {
  if (kind != PartKind::capacitor) return false;
  const std::string d = lower(dielectric);
  // Bipolar ("non-polar") electrolytics are made for AC and may be reversed.
  for (std::string_view np : {"bipolar", "non-polar", "nonpolar", "non polar", "np", "bp"})
    if (has_word(d, np)) return false;
  for (std::string_view pol : {"electrolytic", "tantalum", "elco", "elko"})
    if (d.find(pol) != std::string::npos) return true;
  return false;
}

std::vector<std::string> part_problems(const Part& p) {
  std::vector<std::string> out;
  const bool passive = is_passive(p.kind);
  if (passive) {
    if (!std::isfinite(p.value) || p.value <= 0.0) {
      out.push_back(fmt::format("value {} must be above zero", p.value));
    } else if (p.kind == PartKind::capacitor && p.value > 1.0) {
      // 1 F and more are supercapacitors, never a coupling or bypass part; far more often
      // the unit was left out ("4.7" meant as 4.7 uF).
      out.push_back(fmt::format("value {} is {} F for a capacitor; write e.g. 4.7u for microfarads", p.value,
                                units::format_value(p.value)));
    }
    if (!p.device.empty())
      out.push_back(fmt::format("device '{}' given for kind {} (only transistors and op-amps name a device)", p.device,
                                kind_code(p.kind)));
  } else {
    const char* what = p.kind == PartKind::opamp ? "an op-amp" : "a transistor";
    if (trim(p.device).empty()) out.push_back(fmt::format("device is missing for kind {}", kind_code(p.kind)));
    if (p.value != 0.0)
      out.push_back(fmt::format("value {} given for kind {} ({} names a device)", p.value, kind_code(p.kind), what));
    if (p.tol)
      out.push_back(fmt::format("tol {} given for kind {}", units::format_tolerance(*p.tol), kind_code(p.kind)));
  }
  if (p.qty < 0) out.push_back(fmt::format("qty {} is negative", p.qty));
  if (p.reserved < 0) out.push_back(fmt::format("reserved {} is negative", p.reserved));
  if (p.reserved > p.qty && p.qty >= 0)
    out.push_back(fmt::format("reserved {} is more than qty {}", p.reserved, p.qty));
  if (p.tol) {
    const auto& t = *p.tol;
    if (!std::isfinite(t.minus) || !std::isfinite(t.plus) || t.minus < 0.0 || t.minus >= 1.0 || t.plus < 0.0 ||
        t.plus > 10.0)
      out.push_back(fmt::format("tol -{}/+{} (fractions) is not a sane tolerance", t.minus, t.plus));
  }
  if (p.power_w) {
    if (p.kind != PartKind::resistor)
      out.push_back(fmt::format("power {} given for kind {} (a resistor rating)", *p.power_w, kind_code(p.kind)));
    else if (!std::isfinite(*p.power_w) || *p.power_w <= 0.0)
      out.push_back(fmt::format("power {} must be above zero", *p.power_w));
  }
  if (p.volts) {
    if (p.kind != PartKind::capacitor)
      out.push_back(fmt::format("volts {} given for kind {} (a capacitor rating)", *p.volts, kind_code(p.kind)));
    else if (!std::isfinite(*p.volts) || *p.volts <= 0.0)
      out.push_back(fmt::format("volts {} must be above zero", *p.volts));
  }
  if (!p.dielectric.empty() && p.kind != PartKind::capacitor)
    out.push_back(fmt::format("dielectric '{}' given for kind {} (capacitors only)", p.dielectric, kind_code(p.kind)));
  return out;
}

namespace {

/// Adds "device 'X': NAME VALUE must be ..." problems for a datasheet range.
void check_range(std::vector<std::string>& out, const std::string& who, std::string_view name,
                 const devices::Range& r) {
  if (!std::isfinite(r.min) || !std::isfinite(r.max)) {
    out.push_back(fmt::format("{}: {}_min {} / {}_max {} must be finite", who, name, r.min, name, r.max));
    return;
  }
  if (r.min > r.max) out.push_back(fmt::format("{}: {}_min {} is above {}_max {}", who, name, r.min, name, r.max));
  if (r.typ) {
    if (!std::isfinite(*r.typ))
      out.push_back(fmt::format("{}: {}_typ {} must be finite", who, name, *r.typ));
    else if (*r.typ < std::min(r.min, r.max) || *r.typ > std::max(r.min, r.max))
      out.push_back(fmt::format("{}: {}_typ {} lies outside {}_min {} .. {}_max {}", who, name, *r.typ, name, r.min,
                                name, r.max));
  }
}

void check_at_least(std::vector<std::string>& out, const std::string& who, std::string_view name, double v,
                    double lowest, bool strict) {
  if (!std::isfinite(v) || (strict ? v <= lowest : v < lowest))
    out.push_back(fmt::format("{}: {} {} must be {} {}", who, name, v, strict ? "above" : "at least", lowest));
}

}  // namespace

namespace {

using Column = DeviceColumn;
using devices::DeviceRecord;
using F = DeviceColumn::Family;
using Form = DeviceColumn::Form;
using units::Unit;

// A column whose figure `at` reaches in a record (a plain number or an optional one), as
// the record is read (const) and written.
template <class At>
constexpr Column column(std::string_view name, F family, Unit unit, Form form, At,
                        Column::Notation notation = Column::Notation::plain) {
  return {name,
          family,
          unit,
          form,
          [](const DeviceRecord& d) -> std::optional<double> { return At{}(d); },
          [](DeviceRecord& d, double v) { At{}(d) = v; },
          notation};
}

// An op-amp's figure stated as a typical value and perhaps a minimum (devices::TypMin): its
// two columns, NAME_min and NAME.
template <class At>
constexpr Column typ_column(std::string_view name, Unit unit, At, Column::Notation notation) {
  return column(
      name, F::opamp, unit, Form::required, [](auto& d) -> auto& { return At{}(d).typ; }, notation);
}
template <class At>
constexpr Column min_column(std::string_view name, Unit unit, At, Column::Notation notation) {
  return column(
      name, F::opamp, unit, Form::stated, [](auto& d) -> auto& { return At{}(d).min; }, notation);
}

using N = Column::Notation;

/// The channel count, a whole number in the record: written as a double, rounded.
constexpr Column channels_column() {
  return {"channels",
          F::opamp,
          Unit::none,
          Form::required,
          [](const DeviceRecord& d) -> std::optional<double> { return d.opamp.channels; },
          [](DeviceRecord& d, double v) {
            d.opamp.channels = std::isnan(v) ? 0 : static_cast<int>(std::clamp(std::round(v), -1e6, 1e6));
          },
          N::count};
}

const Column kDeviceColumns[] = {
    column(
        "idss_min", F::jfet, Unit::ampere, Form::required, [](auto& d) -> auto& { return d.jfet.idss_a.min; }),
    column(
        "idss_max", F::jfet, Unit::ampere, Form::required, [](auto& d) -> auto& { return d.jfet.idss_a.max; }),
    column(
        "idss_typ", F::jfet, Unit::ampere, Form::typical, [](auto& d) -> auto& { return d.jfet.idss_a.typ; }),
    column(
        "vp_min", F::jfet, Unit::volt, Form::required, [](auto& d) -> auto& { return d.jfet.vp_v.min; }),
    column(
        "vp_max", F::jfet, Unit::volt, Form::required, [](auto& d) -> auto& { return d.jfet.vp_v.max; }),
    column(
        "vp_typ", F::jfet, Unit::volt, Form::typical, [](auto& d) -> auto& { return d.jfet.vp_v.typ; }),
    column(
        "lambda", F::jfet, Unit::none, Form::defaulted, [](auto& d) -> auto& { return d.jfet.lambda_per_v; }),
    column(
        "cgs", F::jfet, Unit::farad, Form::defaulted, [](auto& d) -> auto& { return d.jfet.cgs_f; }),
    column(
        "cgd", F::jfet, Unit::farad, Form::defaulted, [](auto& d) -> auto& { return d.jfet.cgd_f; }),
    column(
        "tc_idss", F::jfet, Unit::none, Form::tempco, [](auto& d) -> auto& { return d.jfet.tc_idss_per_k; }),
    column(
        "tc_vp", F::jfet, Unit::volt, Form::tempco, [](auto& d) -> auto& { return d.jfet.tc_vp_v_per_k; }),
    column(
        "hfe_min", F::bjt, Unit::none, Form::required, [](auto& d) -> auto& { return d.bjt.hfe.min; }),
    column(
        "hfe_max", F::bjt, Unit::none, Form::required, [](auto& d) -> auto& { return d.bjt.hfe.max; }),
    column(
        "hfe_typ", F::bjt, Unit::none, Form::typical, [](auto& d) -> auto& { return d.bjt.hfe.typ; }),
    column(
        "is", F::bjt, Unit::ampere, Form::defaulted, [](auto& d) -> auto& { return d.bjt.is_a; }),
    column(
        "vaf", F::bjt, Unit::volt, Form::defaulted, [](auto& d) -> auto& { return d.bjt.vaf_v; }),
    column(
        "cje", F::bjt, Unit::farad, Form::defaulted, [](auto& d) -> auto& { return d.bjt.cje_f; }),
    column(
        "cjc", F::bjt, Unit::farad, Form::defaulted, [](auto& d) -> auto& { return d.bjt.cjc_f; }),
    column(
        "vce_sat", F::bjt, Unit::volt, Form::defaulted, [](auto& d) -> auto& { return d.bjt.vce_sat_v; }),
    // Maximum ratings, magnitudes: VDS or VCEO, gate-source reverse or VEBO, dissipation at
    // 25 °C and its derating in W/K.
    column(
        "v_max", F::rating, Unit::volt, Form::rating, [](auto& d) -> auto& { return d.ratings.v_max_v; }),
    column(
        "v_rev_max", F::rating, Unit::volt, Form::rating, [](auto& d) -> auto& { return d.ratings.v_rev_max_v; }),
    column(
        "p_max", F::rating, Unit::watt, Form::rating, [](auto& d) -> auto& { return d.ratings.p_max_w; }),
    column(
        "p_derate", F::rating, Unit::none, Form::rating, [](auto& d) -> auto& { return d.ratings.derate_w_per_k; }),
    // Op-amp figures (devices::OpampParams): distances from the rails in volts, noise
    // densities per root hertz, the slew rate in V/s and the open-loop gain in V/V.
    channels_column(),
    column(
        "vs_min", F::opamp, Unit::volt, Form::required, [](auto& d) -> auto& { return d.opamp.vs_min_v; }),
    column(
        "vs_max", F::opamp, Unit::volt, Form::required, [](auto& d) -> auto& { return d.opamp.vs_max_v; }),
    min_column(
        "gbw_min", Unit::hertz, [](auto& d) -> auto& { return d.opamp.gbw_hz; }, N::plain),
    typ_column(
        "gbw", Unit::hertz, [](auto& d) -> auto& { return d.opamp.gbw_hz; }, N::plain),
    min_column(
        "slew_min", Unit::none, [](auto& d) -> auto& { return d.opamp.slew_v_per_s; }, N::slew),
    typ_column(
        "slew", Unit::none, [](auto& d) -> auto& { return d.opamp.slew_v_per_s; }, N::slew),
    min_column(
        "aol_min", Unit::none, [](auto& d) -> auto& { return d.opamp.aol; }, N::gain),
    typ_column(
        "aol", Unit::none, [](auto& d) -> auto& { return d.opamp.aol; }, N::gain),
    column(
        "pole2", F::opamp, Unit::hertz, Form::stated, [](auto& d) -> auto& { return d.opamp.pole2_hz; }),
    column(
        "out_drop_hi", F::opamp, Unit::volt, Form::required, [](auto& d) -> auto& { return d.opamp.out_drop_hi_v; }),
    column(
        "out_drop_lo", F::opamp, Unit::volt, Form::required, [](auto& d) -> auto& { return d.opamp.out_drop_lo_v; }),
    column(
        "out_drop_ohm", F::opamp, Unit::ohm, Form::required, [](auto& d) -> auto& { return d.opamp.out_drop_ohm; }),
    column(
        "iout_max", F::opamp, Unit::ampere, Form::required, [](auto& d) -> auto& { return d.opamp.iout_max_a; }),
    column(
        "cm_drop_hi", F::opamp, Unit::volt, Form::required, [](auto& d) -> auto& { return d.opamp.cm_drop_hi_v; }),
    column(
        "cm_drop_lo", F::opamp, Unit::volt, Form::required, [](auto& d) -> auto& { return d.opamp.cm_drop_lo_v; }),
    column(
        "vos", F::opamp, Unit::volt, Form::required, [](auto& d) -> auto& { return d.opamp.vos_max_v; }),
    column(
        "ib", F::opamp, Unit::ampere, Form::required, [](auto& d) -> auto& { return d.opamp.ib_max_a; }),
    column(
        "ios", F::opamp, Unit::ampere, Form::stated, [](auto& d) -> auto& { return d.opamp.ios_max_a; }),
    column(
        "en", F::opamp, Unit::volt, Form::stated, [](auto& d) -> auto& { return d.opamp.en_v_rthz; }),
    column(
        "in", F::opamp, Unit::ampere, Form::stated, [](auto& d) -> auto& { return d.opamp.in_a_rthz; }),
    column(
        "iq", F::opamp, Unit::ampere, Form::stated, [](auto& d) -> auto& { return d.opamp.iq_a; }),
};

}  // namespace

std::span<const DeviceColumn> device_columns() { return kDeviceColumns; }

DeviceColumn::Family device_family(devices::DeviceKind kind) {
  if (devices::is_jfet(kind)) return F::jfet;
  if (devices::is_bjt(kind)) return F::bjt;
  return F::opamp;
}

namespace {

/// A figure given as a typical value and perhaps a minimum: each above `lowest`, the minimum
/// not above the typical.
void check_typ_min(std::vector<std::string>& out, const std::string& who, std::string_view name,
                   const devices::TypMin& f, double lowest) {
  check_at_least(out, who, name, f.typ, lowest, true);
  if (!f.min) return;
  const std::string min_name = fmt::format("{}_min", name);
  check_at_least(out, who, min_name, *f.min, lowest, true);
  if (std::isfinite(f.typ) && std::isfinite(*f.min) && *f.min > f.typ)
    out.push_back(fmt::format("{}: {} {} is above {} {}", who, min_name, *f.min, name, f.typ));
}

/// The op-amp figures (device_problems has the rules).
void check_opamp(std::vector<std::string>& out, const std::string& who, const devices::DeviceRecord& d) {
  const auto& o = d.opamp;
  if (o.channels != 1 && o.channels != 2 && o.channels != 4)
    out.push_back(fmt::format("{}: channels {} must be 1, 2 or 4 (amplifiers in one package)", who, o.channels));
  check_at_least(out, who, "vs_min", o.vs_min_v, 0.0, true);
  check_at_least(out, who, "vs_max", o.vs_max_v, 0.0, true);
  const bool spans = std::isfinite(o.vs_min_v) && std::isfinite(o.vs_max_v) && o.vs_min_v > 0;
  if (spans && o.vs_min_v >= o.vs_max_v)
    out.push_back(fmt::format("{}: vs_min {} is not below vs_max {}", who, o.vs_min_v, o.vs_max_v));
  check_typ_min(out, who, "gbw", o.gbw_hz, 0.0);
  check_typ_min(out, who, "slew", o.slew_v_per_s, 0.0);
  // An open-loop gain of 1 or less is no amplifier (and a dB figure typed as V/V is caught).
  check_typ_min(out, who, "aol", o.aol, 1.0);
  if (o.pole2_hz) check_at_least(out, who, "pole2", *o.pole2_hz, 0.0, true);
  // The output cannot pass a rail; the inputs of some types go a little beyond one.
  check_at_least(out, who, "out_drop_hi", o.out_drop_hi_v, 0.0, false);
  check_at_least(out, who, "out_drop_lo", o.out_drop_lo_v, 0.0, false);
  check_at_least(out, who, "cm_drop_hi", o.cm_drop_hi_v, -1.0, false);
  check_at_least(out, who, "cm_drop_lo", o.cm_drop_lo_v, -1.0, false);
  // Both drops together must leave some range at the lowest supply.
  auto leaves_room = [&](std::string_view hi, double h, std::string_view lo, double l, std::string_view what) {
    if (spans && std::isfinite(h) && std::isfinite(l) && h + l >= o.vs_min_v)
      out.push_back(fmt::format("{}: {} {} and {} {} leave no {} at vs_min {}", who, hi, h, lo, l, what, o.vs_min_v));
  };
  leaves_room("out_drop_hi", o.out_drop_hi_v, "out_drop_lo", o.out_drop_lo_v, "output swing");
  leaves_room("cm_drop_hi", o.cm_drop_hi_v, "cm_drop_lo", o.cm_drop_lo_v, "common-mode range");
  check_at_least(out, who, "out_drop_ohm", o.out_drop_ohm, 0.0, false);
  check_at_least(out, who, "iout_max", o.iout_max_a, 0.0, true);
  check_at_least(out, who, "vos", o.vos_max_v, 0.0, false);
  check_at_least(out, who, "ib", o.ib_max_a, 0.0, false);
  for (auto [name, v] : {std::pair{"ios", o.ios_max_a}, std::pair{"en", o.en_v_rthz}, std::pair{"in", o.in_a_rthz},
                         std::pair{"iq", o.iq_a}})
    if (v) check_at_least(out, who, name, *v, 0.0, false);
  if (d.ratings.v_max_v && std::isfinite(o.vs_max_v) && *d.ratings.v_max_v < o.vs_max_v)
    out.push_back(fmt::format("{}: v_max {} (the absolute maximum supply) is below vs_max {}", who, *d.ratings.v_max_v,
                              o.vs_max_v));
}

}  // namespace

std::vector<std::string> device_problems(const devices::DeviceRecord& d) {
  std::vector<std::string> out;
  const std::string who = fmt::format("device '{}'", d.name);
  if (trim(d.name).empty()) out.push_back("device name is empty");
  if (devices::is_jfet(d.kind)) {
    const auto& j = d.jfet;
    check_range(out, who, "idss", j.idss_a);
    check_at_least(out, who, "idss_min", j.idss_a.min, 0.0, true);
    check_range(out, who, "vp", j.vp_v);
    const bool n = d.kind == devices::DeviceKind::njfet;
    // VGS(off) is negative for an N-channel part and positive for a P-channel one.
    for (auto [name, v] : {std::pair{"vp_min", j.vp_v.min}, std::pair{"vp_max", j.vp_v.max}}) {
      if (std::isfinite(v) && (n ? v >= 0.0 : v <= 0.0))
        out.push_back(fmt::format("{}: {} {} must be {} for {}", who, name, v, n ? "negative" : "positive",
                                  n ? "an N-channel JFET" : "a P-channel JFET"));
    }
    check_at_least(out, who, "lambda", j.lambda_per_v, 0.0, false);
    check_at_least(out, who, "cgs", j.cgs_f, 0.0, false);
    check_at_least(out, who, "cgd", j.cgd_f, 0.0, false);
    if (!std::isfinite(j.tc_idss_per_k))
      out.push_back(fmt::format("{}: tc_idss {} must be finite", who, j.tc_idss_per_k));
    if (!std::isfinite(j.tc_vp_v_per_k))
      out.push_back(fmt::format("{}: tc_vp {} must be finite", who, j.tc_vp_v_per_k));
  } else if (devices::is_opamp(d.kind)) {
    check_opamp(out, who, d);
  } else {
    const auto& b = d.bjt;
    check_range(out, who, "hfe", b.hfe);
    check_at_least(out, who, "hfe_min", b.hfe.min, 0.0, true);
    check_at_least(out, who, "is", b.is_a, 0.0, true);
    check_at_least(out, who, "vaf", b.vaf_v, 0.0, true);
    check_at_least(out, who, "cje", b.cje_f, 0.0, false);
    check_at_least(out, who, "cjc", b.cjc_f, 0.0, false);
    check_at_least(out, who, "vce_sat", b.vce_sat_v, 0.0, false);
  }
  const auto& r = d.ratings;
  for (auto [name, v] :
       {std::pair{"v_max", r.v_max_v}, std::pair{"v_rev_max", r.v_rev_max_v}, std::pair{"p_max", r.p_max_w}})
    if (v) check_at_least(out, who, name, *v, 0.0, true);
  if (r.derate_w_per_k) check_at_least(out, who, "p_derate", *r.derate_w_per_k, 0.0, false);
  if (r.derate_w_per_k && !r.p_max_w) out.push_back(fmt::format("{}: p_derate is given without p_max", who));
  return out;
}

std::vector<std::string> piece_problems(const devices::MeasuredPiece& m, const devices::DeviceRecord& d) {
  std::vector<std::string> out;
  const std::string who = fmt::format("piece '{}'", m.label);
  if (trim(m.label).empty()) out.push_back("piece label is empty");
  if (!std::isfinite(m.uncertainty) || m.uncertainty < 0.0 || m.uncertainty >= 1.0)
    out.push_back(fmt::format("{}: uncertainty {} must be a fraction in [0, 1)", who, m.uncertainty));
  if (devices::is_opamp(d.kind)) {
    out.push_back(fmt::format("{}: device '{}' is an op-amp; measured pieces are transistors (IDSS and VP, or hFE)",
                              who, d.name));
  } else if (devices::is_jfet(d.kind)) {
    if (m.hfe) out.push_back(fmt::format("{}: hfe given for JFET '{}'", who, d.name));
    if (!m.idss_a && !m.vp_v) out.push_back(fmt::format("{}: neither idss nor vp measured", who));
    if (m.idss_a && (!std::isfinite(*m.idss_a) || *m.idss_a <= 0.0))
      out.push_back(fmt::format("{}: idss {} must be above zero", who, *m.idss_a));
    const bool n = d.kind == devices::DeviceKind::njfet;
    if (m.vp_v && (!std::isfinite(*m.vp_v) || (n ? *m.vp_v >= 0.0 : *m.vp_v <= 0.0)))
      out.push_back(fmt::format("{}: vp {} must be {} for {} '{}'", who, *m.vp_v, n ? "negative" : "positive",
                                devices::kind_name(d.kind), d.name));
  } else {
    if (m.idss_a || m.vp_v) out.push_back(fmt::format("{}: idss/vp given for BJT '{}'", who, d.name));
    if (!m.hfe)
      out.push_back(fmt::format("{}: hfe not measured", who));
    else if (!std::isfinite(*m.hfe) || *m.hfe <= 0.0)
      out.push_back(fmt::format("{}: hfe {} must be above zero", who, *m.hfe));
  }
  return out;
}

std::string describe(const Part& p) {
  std::string out(kind_code(p.kind));
  if (is_passive(p.kind)) {
    out += ' ';
    out += units::format_value(p.value);
  } else {
    out += ' ';
    out += p.device;
  }
  if (p.tol) out += ' ' + units::format_tolerance(*p.tol);
  if (p.power_w) out += fmt::format(" {}W", *p.power_w);
  if (p.volts) out += fmt::format(" {}V", *p.volts);
  if (!p.dielectric.empty()) out += ' ' + p.dielectric;
  if (!p.bin.empty()) out += " bin " + p.bin;
  // Clean text even for a line an old database holds with other text: the ledger keeps it.
  return units::escape_text(out);
}

}  // namespace shelfstage::store
