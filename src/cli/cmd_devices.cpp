// `shelfstage devices ...`: the transistor and op-amp types on the shelf, as their datasheets
// give them.
#include <fmt/format.h>

#include <algorithm>
#include <cctype>
#include <memory>
#include <optional>

#include "args.hpp"
#include "commands.hpp"
#include "devices_view.hpp"
#include "shelfstage/error.hpp"
#include "shelfstage/report/design_json.hpp"
#include "shelfstage/store/csv.hpp"
#include "shelfstage/store/designs.hpp"
#include "stock_view.hpp"

namespace shelfstage::cli {

using devices::DeviceKind;
using devices::DeviceRecord;
using units::Unit;

namespace {

// --- devices add --------------------------------------------------------------------------

struct DevicesAddOptions {
  std::string name, kind;
  // JFET
  std::optional<std::string> idss, vp, idss_typ, vp_typ, lambda, cgs, cgd, tc_idss, tc_vp;
  // BJT
  std::optional<std::string> hfe, hfe_typ, is, vaf, cje, cjc, vce_sat;
  // Op-amp
  std::optional<std::string> channels, vs, gbw, gbw_min, slew, slew_min, aol, aol_min, pole2, out_drop_hi, out_drop_lo,
      out_drop_ohm, iout_max, cm_drop_hi, cm_drop_lo, vos, ib, ios, en, in, iq;
  // Maximum ratings (every family)
  std::optional<std::string> v_max, v_rev_max, p_max, p_derate;
  std::string note;
  bool replace = false;
};

using FlagList = std::vector<std::pair<const char*, const std::optional<std::string>*>>;

/// The options of each family, to refuse those that do not belong to a record's kind.
FlagList jfet_flags(const DevicesAddOptions& o) {
  return {{"--idss", &o.idss},     {"--vp", &o.vp},           {"--idss-typ", &o.idss_typ},
          {"--vp-typ", &o.vp_typ}, {"--lambda", &o.lambda},   {"--cgs", &o.cgs},
          {"--cgd", &o.cgd},       {"--tc-idss", &o.tc_idss}, {"--tc-vp", &o.tc_vp}};
}
FlagList bjt_flags(const DevicesAddOptions& o) {
  return {{"--hfe", &o.hfe}, {"--hfe-typ", &o.hfe_typ}, {"--is", &o.is},          {"--vaf", &o.vaf},
          {"--cje", &o.cje}, {"--cjc", &o.cjc},         {"--vce-sat", &o.vce_sat}};
}
/// The op-amp options, those a record needs first.
FlagList opamp_flags(const DevicesAddOptions& o) {
  return {{"--channels", &o.channels},
          {"--vs", &o.vs},
          {"--gbw", &o.gbw},
          {"--slew", &o.slew},
          {"--aol", &o.aol},
          {"--out-drop-hi", &o.out_drop_hi},
          {"--out-drop-lo", &o.out_drop_lo},
          {"--out-drop-ohm", &o.out_drop_ohm},
          {"--iout-max", &o.iout_max},
          {"--cm-drop-hi", &o.cm_drop_hi},
          {"--cm-drop-lo", &o.cm_drop_lo},
          {"--vos", &o.vos},
          {"--ib", &o.ib},
          {"--gbw-min", &o.gbw_min},
          {"--slew-min", &o.slew_min},
          {"--aol-min", &o.aol_min},
          {"--pole2", &o.pole2},
          {"--ios", &o.ios},
          {"--en", &o.en},
          {"--in", &o.in},
          {"--iq", &o.iq}};
}
constexpr std::size_t kOpampRequired = 13;  ///< the first options of opamp_flags

/// Names the first option given that does not belong to the device's kind.
void refuse_foreign(const FlagList& options, DeviceKind kind) {
  for (const auto& [flag, value] : options) {
    if (*value)
      throw InputError(fmt::format("{} '{}' does not apply to {}", flag, **value, devices::with_article(kind)));
  }
}

/// A figure typed in a notation of its own (units::parse_slew_rate, parse_open_loop_gain), the
/// error naming the option.
double parse_with(double (*parse)(std::string_view), std::string_view flag, const std::string& text) {
  try {
    return parse(text);
  } catch (const units::ParseError& e) {
    throw InputError(name_field(e.what(), flag));
  }
}

/// The op-amp figures from the options (device_problems checks them when the record is stored).
void read_opamp_options(const DevicesAddOptions& o, DeviceRecord& d) {
  const FlagList flags = opamp_flags(o);
  std::vector<std::string> missing;
  for (std::size_t i = 0; i < kOpampRequired; ++i)
    if (!*flags[i].second) missing.push_back(flags[i].first);
  if (!missing.empty())
    throw InputError(
        fmt::format("an op-amp's figures are missing: {} (see `devices add --help`)", fmt::join(missing, ", ")));
  auto& a = d.opamp;
  a.channels = parse_count("--channels", *o.channels);
  const devices::Range vs = parse_range("--vs", *o.vs, Unit::volt);
  a.vs_min_v = vs.min;
  a.vs_max_v = vs.max;
  a.gbw_hz.typ = parse_quantity("--gbw", *o.gbw, Unit::hertz);
  if (o.gbw_min) a.gbw_hz.min = parse_quantity("--gbw-min", *o.gbw_min, Unit::hertz);
  a.slew_v_per_s.typ = parse_with(units::parse_slew_rate, "--slew", *o.slew);
  if (o.slew_min) a.slew_v_per_s.min = parse_with(units::parse_slew_rate, "--slew-min", *o.slew_min);
  a.aol.typ = parse_with(units::parse_open_loop_gain, "--aol", *o.aol);
  if (o.aol_min) a.aol.min = parse_with(units::parse_open_loop_gain, "--aol-min", *o.aol_min);
  if (o.pole2) a.pole2_hz = parse_quantity("--pole2", *o.pole2, Unit::hertz);
  a.out_drop_hi_v = parse_quantity("--out-drop-hi", *o.out_drop_hi, Unit::volt);
  a.out_drop_lo_v = parse_quantity("--out-drop-lo", *o.out_drop_lo, Unit::volt);
  a.out_drop_ohm = parse_quantity("--out-drop-ohm", *o.out_drop_ohm, Unit::ohm);
  a.iout_max_a = parse_quantity("--iout-max", *o.iout_max, Unit::ampere);
  a.cm_drop_hi_v = parse_quantity("--cm-drop-hi", *o.cm_drop_hi, Unit::volt);
  a.cm_drop_lo_v = parse_quantity("--cm-drop-lo", *o.cm_drop_lo, Unit::volt);
  a.vos_max_v = parse_quantity("--vos", *o.vos, Unit::volt);
  a.ib_max_a = parse_quantity("--ib", *o.ib, Unit::ampere);
  if (o.ios) a.ios_max_a = parse_quantity("--ios", *o.ios, Unit::ampere);
  if (o.en) a.en_v_rthz = parse_quantity("--en", *o.en, Unit::volt);
  if (o.in) a.in_a_rthz = parse_quantity("--in", *o.in, Unit::ampere);
  if (o.iq) a.iq_a = parse_quantity("--iq", *o.iq, Unit::ampere);
}

DeviceRecord record_from_options(const DevicesAddOptions& o) {
  DeviceRecord d;
  d.name = o.name;
  if (d.name.find_first_not_of(" \t") == std::string::npos) throw InputError("device name '' is empty");
  if (!devices::parse_kind(o.kind, d.kind)) {
    throw InputError(fmt::format("--kind '{}' is not one of NJFET, PJFET, NPN, PNP, OPAMP", units::clip(o.kind)));
  }
  d.note = o.note;
  const std::string article = devices::with_article(d.kind);
  if (!devices::is_jfet(d.kind)) refuse_foreign(jfet_flags(o), d.kind);
  if (!devices::is_bjt(d.kind)) refuse_foreign(bjt_flags(o), d.kind);
  if (!devices::is_opamp(d.kind)) refuse_foreign(opamp_flags(o), d.kind);
  if (devices::is_opamp(d.kind)) {
    read_opamp_options(o, d);
  } else if (devices::is_jfet(d.kind)) {
    if (!o.idss || !o.vp) throw InputError(fmt::format("{} needs --idss MIN..MAX and --vp MIN..MAX", article));
    auto& j = d.jfet;
    j.idss_a = parse_range("--idss", *o.idss, Unit::ampere);
    j.vp_v = parse_range("--vp", *o.vp, Unit::volt);
    if (o.idss_typ) j.idss_a.typ = parse_quantity("--idss-typ", *o.idss_typ, Unit::ampere);
    if (o.vp_typ) j.vp_v.typ = parse_quantity("--vp-typ", *o.vp_typ, Unit::volt);
    if (o.lambda) j.lambda_per_v = parse_quantity("--lambda", *o.lambda, Unit::none);
    if (o.cgs) j.cgs_f = parse_quantity("--cgs", *o.cgs, Unit::farad);
    if (o.cgd) j.cgd_f = parse_quantity("--cgd", *o.cgd, Unit::farad);
    if (o.tc_idss) j.tc_idss_per_k = parse_quantity("--tc-idss", *o.tc_idss, Unit::none);
    if (o.tc_vp) j.tc_vp_v_per_k = parse_quantity("--tc-vp", *o.tc_vp, Unit::none);
  } else {
    if (!o.hfe) throw InputError(fmt::format("{} needs --hfe MIN..MAX", article));
    auto& b = d.bjt;
    b.hfe = parse_range("--hfe", *o.hfe, Unit::none);
    if (o.hfe_typ) b.hfe.typ = parse_quantity("--hfe-typ", *o.hfe_typ, Unit::none);
    if (o.is) b.is_a = parse_quantity("--is", *o.is, Unit::ampere);
    if (o.vaf) b.vaf_v = parse_quantity("--vaf", *o.vaf, Unit::volt);
    if (o.cje) b.cje_f = parse_quantity("--cje", *o.cje, Unit::farad);
    if (o.cjc) b.cjc_f = parse_quantity("--cjc", *o.cjc, Unit::farad);
    if (o.vce_sat) b.vce_sat_v = parse_quantity("--vce-sat", *o.vce_sat, Unit::volt);
  }
  // Ratings are magnitudes: a datasheet's -25 V for a P type is 25 V.
  auto rating = [](const char* flag, const std::optional<std::string>& text, Unit unit) -> std::optional<double> {
    if (!text) return std::nullopt;
    const double v = std::abs(parse_quantity(flag, *text, unit));
    if (!(v > 0)) throw InputError(fmt::format("{} '{}' must be above 0", flag, units::clip(*text)));
    return v;
  };
  d.ratings.v_max_v = rating("--v-max", o.v_max, Unit::volt);
  d.ratings.v_rev_max_v = rating("--v-rev-max", o.v_rev_max, Unit::volt);
  d.ratings.p_max_w = rating("--p-max", o.p_max, Unit::watt);
  if (o.p_derate) {
    if (!o.p_max) throw InputError(fmt::format("--p-derate '{}' needs --p-max", units::clip(*o.p_derate)));
    d.ratings.derate_w_per_k = std::abs(parse_quantity("--p-derate", *o.p_derate, Unit::none));
  }
  return d;
}

void run_devices_add(const DevicesAddOptions& o, Context& ctx) {
  const DeviceRecord record = record_from_options(o);
  auto db = ctx.open_database();
  const bool existed = db.device(record.name).has_value();
  if (existed && !o.replace) {
    throw InputError(
        fmt::format("device '{}' is already in the list; add --replace to overwrite its figures", record.name));
  }
  db.put_devices({record});
  if (ctx.global.json) {
    print_json(ctx, {{"schema", 1}, {"replaced", existed}, {"device", device_json(record)}});
    return;
  }
  ctx.out << fmt::format("{} {} {}.\n", existed ? "Replaced" : "Added", devices::kind_name(record.kind), record.name);
}

void setup_devices_add(CLI::App& devices_cmd, Context& ctx) {
  auto o = std::make_shared<DevicesAddOptions>();
  CLI::App* cmd = devices_cmd.add_subcommand("add", "Describe a transistor or op-amp type from its datasheet");
  cmd->add_option("NAME", o->name, "The type's name as written on the bag (what stock lines refer to)")
      ->type_name("")
      ->required()
      ->check(clean_text());
  cmd->add_option("--kind", o->kind, "NJFET, PJFET, NPN, PNP or OPAMP")->type_name("KIND")->required();
  const char* jfet = "JFET (datasheet figures)";
  cmd->add_option("--idss", o->idss, "IDSS range in amperes, MIN..MAX: 1m..5m")->type_name("MIN..MAX")->group(jfet);
  cmd->add_option("--idss-typ", o->idss_typ, "Typical IDSS, when the datasheet gives one")->type_name("A")->group(jfet);
  cmd->add_option("--vp", o->vp, "VGS(off) range, signed as on the datasheet: -0.5..-3")
      ->type_name("MIN..MAX")
      ->group(jfet);
  cmd->add_option("--vp-typ", o->vp_typ, "Typical VGS(off)")->type_name("V")->group(jfet);
  cmd->add_option("--lambda", o->lambda, "Channel-length modulation, 1/V: 0.005")->type_name("1/V")->group(jfet);
  cmd->add_option("--cgs", o->cgs, "Gate-source capacitance: 4.5p")->type_name("F")->group(jfet);
  cmd->add_option("--cgd", o->cgd, "Gate-drain capacitance: 1.5p")->type_name("F")->group(jfet);
  cmd->add_option("--tc-idss", o->tc_idss, "IDSS temperature coefficient, fraction per kelvin (default -0.003)")
      ->type_name("1/K")
      ->group(jfet);
  cmd->add_option("--tc-vp", o->tc_vp, "|VP| temperature coefficient, volts per kelvin (default 0.002)")
      ->type_name("V/K")
      ->group(jfet);
  const char* bjt = "BJT (datasheet figures)";
  cmd->add_option("--hfe", o->hfe, "hFE range, MIN..MAX: 110..450")->type_name("MIN..MAX")->group(bjt);
  cmd->add_option("--hfe-typ", o->hfe_typ, "Typical hFE")->type_name("NUMBER")->group(bjt);
  cmd->add_option("--is", o->is, "Saturation current IS in amperes: 1e-14 (default)")->type_name("A")->group(bjt);
  cmd->add_option("--vaf", o->vaf, "Early voltage VAF in volts: 80 (default 100)")->type_name("V")->group(bjt);
  cmd->add_option("--cje", o->cje, "Base-emitter capacitance: 6p")->type_name("F")->group(bjt);
  cmd->add_option("--cjc", o->cjc, "Base-collector capacitance: 3p")->type_name("F")->group(bjt);
  cmd->add_option("--vce-sat", o->vce_sat, "Saturation edge VCE(sat) used for swing, volts (default 0.2)")
      ->type_name("V")
      ->group(bjt);
  const char* opamp = "Op-amp (datasheet figures; rails are V+ and V-, drops are volts short of a rail)";
  cmd->add_option("--channels", o->channels, "Amplifiers per package: 1, 2 or 4")->type_name("N")->group(opamp);
  cmd->add_option("--vs", o->vs, "Operating supply span V+ - V-, MIN..MAX: 3..36")->type_name("MIN..MAX")->group(opamp);
  cmd->add_option("--gbw", o->gbw, "Gain-bandwidth product, typical: 1M")->type_name("HZ")->group(opamp);
  cmd->add_option("--gbw-min", o->gbw_min, "Guaranteed minimum GBW, when stated (else half the typical is assumed)")
      ->type_name("HZ")
      ->group(opamp);
  cmd->add_option("--slew", o->slew, "Slew rate, typical: 0.5V/us (or in V/s: 500k)")->type_name("V/us")->group(opamp);
  cmd->add_option("--slew-min", o->slew_min, "Guaranteed minimum slew rate, when stated (else half the typical)")
      ->type_name("V/us")
      ->group(opamp);
  cmd->add_option("--aol", o->aol, "Open-loop DC gain, typical: 200k, 200V/mV or 106dB")
      ->type_name("GAIN")
      ->group(opamp);
  cmd->add_option("--aol-min", o->aol_min, "Guaranteed minimum open-loop gain, when stated (else a tenth of typical)")
      ->type_name("GAIN")
      ->group(opamp);
  cmd->add_option("--pole2", o->pole2, "Second pole of the open-loop gain, when known (else one pole): 4M")
      ->type_name("HZ")
      ->group(opamp);
  cmd->add_option("--out-drop-hi", o->out_drop_hi, "Output swing short of V+ at light load: 1.5 (0.02 rail-to-rail)")
      ->type_name("V")
      ->group(opamp);
  cmd->add_option("--out-drop-lo", o->out_drop_lo, "Output swing short of V- at light load")
      ->type_name("V")
      ->group(opamp);
  cmd->add_option("--out-drop-ohm", o->out_drop_ohm, "Extra drop per ampere of output current: 100 (100 mV at 1 mA)")
      ->type_name("OHM")
      ->group(opamp);
  cmd->add_option("--iout-max", o->iout_max, "Output current limit: 20m")->type_name("A")->group(opamp);
  cmd->add_option("--cm-drop-hi", o->cm_drop_hi, "How far short of V+ the inputs may go: 2 (negative: beyond V+)")
      ->type_name("V")
      ->group(opamp);
  cmd->add_option("--cm-drop-lo", o->cm_drop_lo, "How far short of V- the inputs may go: -0.3 includes V-")
      ->type_name("V")
      ->group(opamp);
  cmd->add_option("--vos", o->vos, "Input offset voltage, maximum: 5m")->type_name("V")->group(opamp);
  cmd->add_option("--ib", o->ib, "Input bias current, maximum: 500n")->type_name("A")->group(opamp);
  cmd->add_option("--ios", o->ios, "Input offset current, maximum")->type_name("A")->group(opamp);
  cmd->add_option("--en", o->en, "Input voltage noise density at 1 kHz, V per root hertz: 12n")
      ->type_name("V")
      ->group(opamp);
  cmd->add_option("--in", o->in, "Input current noise density, A per root hertz: 0.5p")->type_name("A")->group(opamp);
  cmd->add_option("--iq", o->iq, "Supply current per amplifier, maximum: 1.5m")->type_name("A")->group(opamp);
  const char* ratings = "Maximum ratings (datasheet absolute maxima; optional, but a type without them is not checked)";
  cmd->add_option("--v-max", o->v_max,
                  "Drain-source VDS(max) or collector-emitter VCEO, volts: 25; an op-amp's total supply: 40")
      ->type_name("V")
      ->group(ratings);
  cmd->add_option("--v-rev-max", o->v_rev_max,
                  "Gate-source reverse voltage, or emitter-base VEBO, volts: 25 or 6; an op-amp's differential input")
      ->type_name("V")
      ->group(ratings);
  cmd->add_option("--p-max", o->p_max, "Total dissipation at 25 °C ambient: 350m")->type_name("W")->group(ratings);
  cmd->add_option("--p-derate", o->p_derate,
                  "Dissipation derating above 25 °C, watts per kelvin: 2.8m (default: to zero at 150 °C)")
      ->type_name("W/K")
      ->group(ratings);
  cmd->add_option("--note", o->note, "Free text kept with the type")->type_name("TEXT")->check(clean_text());
  cmd->add_flag("--replace", o->replace, "Overwrite the figures of a type already in the list");
  cmd->footer(
      "Give the datasheet's guaranteed range: designs are checked over the whole spread.\n"
      "Values take SI or IEC 60062 notation (1m, 4p5, 2u2).\n"
      "  shelfstage devices add SJ-101 --kind NJFET --idss 1m..5m --vp -0.5..-3 --lambda 0.005\n"
      "  shelfstage devices add SQ-410 --kind NPN --hfe 110..450 --vaf 80 --cje 6p --cjc 3p --v-max 40 --p-max 500m\n"
      "  shelfstage devices add SA-210 --kind OPAMP --channels 2 --vs 10..36 --gbw 1.1M --slew 0.5V/us --aol 200k\n"
      "    --out-drop-hi 1.2 --out-drop-lo 1.2 --out-drop-ohm 120 --iout-max 20m --cm-drop-hi 2 --cm-drop-lo 2\n"
      "    --vos 5m --ib 400n --v-max 40");
  cmd->callback([o, &ctx] { run_devices_add(*o, ctx); });
}

// --- devices list -------------------------------------------------------------------------

struct DevicesListOptions {};

void run_devices_list(const DevicesListOptions& /*o*/, Context& ctx) {
  const auto db = ctx.open_database();
  const auto records = db.device_records();
  const auto pieces = db.pieces();
  if (ctx.global.json) {
    print_json(ctx, devices_json(records, pieces));
  } else {
    ctx.out << devices_table(records, pieces);
  }
}

void setup_devices_list(CLI::App& devices_cmd, Context& ctx) {
  auto o = std::make_shared<DevicesListOptions>();
  CLI::App* cmd = devices_cmd.add_subcommand("list", "Show the transistor and op-amp types and the measured pieces");
  cmd->footer(
      "Ranges print as MIN..MAX with units (IDSS 1mA..5mA, VP -3V..-0.5V); TYP is the typical\n"
      "value when known. Measured pieces replace the datasheet range by the bench reading.\n"
      "Op-amps: GBW and slew typical (minima in --json), the output's (at light load) and the\n"
      "inputs' distance from each rail (V+/V-), and RAIL-TO-RAIL for what reaches a rail (in, out).\n"
      "With --json: {\"schema\":1,\"devices\":[...],\"pieces\":[...]}, keys as the CSV columns,\n"
      "plain SI numbers; an op-amp's figures under \"opamp\".");
  cmd->callback([o, &ctx] { run_devices_list(*o, ctx); });
}

// --- devices import -----------------------------------------------------------------------

struct DevicesImportOptions {
  std::string file;
  bool pieces = false;  ///< the file holds measured pieces, not types
  std::string encoding;
};

void run_devices_import(const DevicesImportOptions& o, Context& ctx) {
  auto db = ctx.open_database();
  const std::string source = input_name(o.file);
  std::size_t count = 0;
  with_encoding_hint([&] {
    const std::string text = read_csv_text(o.file, ctx.in, o.encoding);
    if (o.pieces) {
      const auto pieces = store::parse_pieces_csv(text, source, db.device_records());
      db.add_pieces(pieces);
      count = pieces.size();
    } else {
      const auto records = store::parse_devices_csv(text, source);
      db.put_devices(records);
      count = records.size();
    }
  });
  if (ctx.global.json) {
    print_json(ctx, {{"schema", 1}, {"source", source}, {o.pieces ? "pieces" : "devices", count}});
    return;
  }
  const char* what =
      o.pieces ? (count == 1 ? "measured piece" : "measured pieces") : (count == 1 ? "device type" : "device types");
  ctx.out << fmt::format("Imported {} {} from {}.\n", count, what, source);
}

void setup_devices_import(CLI::App& devices_cmd, Context& ctx) {
  auto o = std::make_shared<DevicesImportOptions>();
  CLI::App* cmd =
      devices_cmd.add_subcommand("import", "Add or replace transistor and op-amp types (or measured pieces) from CSV");
  cmd->add_option("FILE", o->file, "The CSV file; - reads standard input")->type_name("")->required();
  cmd->add_flag("--pieces", o->pieces, "The file holds transistors measured on the bench, not types");
  add_encoding_option(*cmd, o->encoding);
  cmd->footer(
      "Types: columns name, kind (NJFET, PJFET, NPN, PNP, OPAMP); for JFETs idss_min, idss_max,\n"
      "vp_min, vp_max (signed as on the datasheet, either order), lambda, cgs, cgd; for BJTs\n"
      "hfe_min, hfe_max, is, vaf, cje, cjc; optional idss_typ, vp_typ, hfe_typ, note. For\n"
      "op-amps channels, vs_min, vs_max, gbw, slew (0.5V/us), aol (200k, 200V/mV, 106dB),\n"
      "out_drop_hi, out_drop_lo, out_drop_ohm, iout_max, cm_drop_hi, cm_drop_lo, vos, ib; optional\n"
      "gbw_min, slew_min, aol_min, pole2, ios, en, in, iq. A type already in the list is replaced.\n"
      "Measured pieces (--pieces): label (as written on the bag), device, idss and vp (JFET)\n"
      "or hfe (BJT), uncertainty (3% or 0.03; default 3%), note. Import the types first.\n"
      "If any row is bad, nothing is imported and every bad row is listed with its line number.");
  cmd->callback([o, &ctx] { run_devices_import(*o, ctx); });
}

// --- devices remove -----------------------------------------------------------------------

struct DevicesRemoveOptions {
  std::string name;
  bool cascade = false;
  std::string reason;
};

bool same_name(std::string_view a, std::string_view b) {
  return a.size() == b.size() && std::equal(a.begin(), a.end(), b.begin(), [](char x, char y) {
           return std::tolower(static_cast<unsigned char>(x)) == std::tolower(static_cast<unsigned char>(y));
         });
}

/// The kept designs that use a device type (a chain's stages included).
std::vector<std::string> designs_using(const store::Database& db, std::string_view device) {
  std::vector<std::string> ids;
  for (const auto& d : store::all_designs(db)) {
    const auto doc = nlohmann::json::parse(d.candidate_json, nullptr, false);
    const auto names = report::candidate_devices(doc);
    if (std::any_of(names.begin(), names.end(), [&](const std::string& n) { return same_name(n, device); }))
      ids.push_back(d.id);
  }
  return ids;
}

/// "3 stock lines (4, 9, 12)": a count and the first few names.
std::string counted(std::size_t n, std::string_view one, std::string_view many, const std::vector<std::string>& names) {
  constexpr std::size_t kShown = 5;
  std::string list;
  for (std::size_t i = 0; i < names.size() && i < kShown; ++i) list += (i > 0 ? ", " : "") + names[i];
  if (names.size() > kShown) list += fmt::format(" and {} more", names.size() - kShown);
  return fmt::format("{} {} ({})", n, n == 1 ? one : many, list);
}

std::vector<std::string> line_ids(const std::vector<store::Part>& lines) {
  std::vector<std::string> ids;
  for (const auto& p : lines) ids.push_back(std::to_string(p.id));
  return ids;
}

void run_devices_remove(const DevicesRemoveOptions& o, Context& ctx) {
  auto db = ctx.open_database();
  const auto record = db.device(o.name);
  if (!record) throw InputError(fmt::format("device '{}' is not in the device list", units::clip(o.name)));
  const auto users = db.device_users(record->name);
  const auto designs = designs_using(db, record->name);
  if (!o.cascade && (!users.empty() || !designs.empty())) {
    std::vector<std::string> what;
    if (!users.lines.empty())
      what.push_back(
          counted(users.lines.size(), "stock line on the shelf", "stock lines on the shelf", line_ids(users.lines)));
    if (!users.pieces.empty())
      what.push_back(counted(users.pieces.size(), "measured piece", "measured pieces", users.pieces));
    if (!designs.empty()) what.push_back(counted(designs.size(), "kept design", "kept designs", designs));
    throw InputError(fmt::format(
        "device '{}' is still named by {}; remove those first, or add --cascade to take them with it (lines "
        "written off through the ledger, pieces deleted, designs forgotten)",
        record->name, fmt::join(what, ", ")));
  }
  const std::string reason = o.reason.empty() ? fmt::format("device {} removed", record->name) : o.reason;
  const store::RemovedDevice r = db.remove_device(record->name, designs, o.cascade, reason);
  std::int64_t pieces = 0;
  for (const auto& p : r.lines) pieces += p.qty;
  if (ctx.global.json) {
    nlohmann::ordered_json lines = nlohmann::ordered_json::array();
    for (const auto& p : r.lines) lines.push_back(part_json(p));
    print_json(ctx, {{"schema", 1},
                     {"removed", r.name},
                     {"lines", lines},
                     {"pieces_written_off", pieces},
                     {"measured_pieces", r.pieces},
                     {"designs", r.designs},
                     {"designs_kept", r.designs_built}});
    return;
  }
  ctx.out << fmt::format("Removed {} {} from the device list.\n", devices::kind_name(record->kind), r.name);
  if (!r.lines.empty())
    ctx.out << fmt::format("Wrote off {} pieces on {} (ledger: \"{}\").\n", pieces,
                           counted(r.lines.size(), "stock line", "stock lines", line_ids(r.lines)), reason);
  if (!r.pieces.empty())
    ctx.out << fmt::format("Deleted {}.\n", counted(r.pieces.size(), "measured piece", "measured pieces", r.pieces));
  if (!r.designs.empty())
    ctx.out << fmt::format("Forgot {}.\n", counted(r.designs.size(), "kept design", "kept designs", r.designs));
  if (!r.designs_built.empty())
    ctx.out << fmt::format("Kept {}: builds record them.\n",
                           counted(r.designs_built.size(), "design", "designs", r.designs_built));
}

void setup_devices_remove(CLI::App& devices_cmd, Context& ctx) {
  auto o = std::make_shared<DevicesRemoveOptions>();
  CLI::App* cmd = devices_cmd.add_subcommand("remove", "Take a transistor or op-amp type off the device list");
  cmd->add_option("NAME", o->name, "The type's name, as `devices list` shows it")->type_name("")->required();
  cmd->add_flag("--cascade", o->cascade,
                "Also write off its stock lines (through the ledger), delete its measured pieces and forget the "
                "kept designs that use it");
  cmd->add_option("--reason", o->reason, "Why, for the ledger (default: device NAME removed)")
      ->type_name("TEXT")
      ->check(clean_text());
  cmd->footer(
      "Refused while stock lines on the shelf, measured pieces or kept designs name the type,\n"
      "unless --cascade: then its lines go to zero through the ledger and off the shelf (their\n"
      "history stays), its pieces are deleted and the designs that use it are forgotten, except\n"
      "those a build records. All in one transaction. The ledger still names the type in old\n"
      "entries; `devices add` of the same name later puts it back with new figures.\n"
      "  shelfstage devices remove SJ-102\n"
      "  shelfstage devices remove SQ-410 --cascade --reason \"type discontinued\"");
  cmd->callback([o, &ctx] { run_devices_remove(*o, ctx); });
}

}  // namespace

// --- devices ------------------------------------------------------------------------------

void setup_devices(CLI::App& parent, Context& ctx) {
  CLI::App* cmd =
      parent.add_subcommand("devices", "The transistor and op-amp types you stock, as their datasheets describe them");
  cmd->require_subcommand(1);
  cmd->footer(
      "A device type holds the datasheet's ranges (IDSS and VGS(off) for a JFET, hFE for a BJT)\n"
      "and a few model figures; designs are checked across the whole range. A measured piece\n"
      "narrows the range to the bench reading (`devices measure`, or `devices fit` from\n"
      "self-bias readings). Stock lines of transistors and op-amps name a type (an op-amp line\n"
      "counts packages). Op-amps are listed and stocked; stages are designed with transistors.\n"
      "Run `shelfstage devices COMMAND --help` for each command.");
  setup_devices_add(*cmd, ctx);
  setup_devices_list(*cmd, ctx);
  setup_devices_import(*cmd, ctx);
  setup_devices_remove(*cmd, ctx);
  setup_devices_measure(*cmd, ctx);
  setup_devices_fit(*cmd, ctx);
}

}  // namespace shelfstage::cli
