// `shelfstage devices measure DEVICE ...`: one piece measured on the bench, stored with its figures.
#include <fmt/format.h>

#include <cmath>
#include <memory>
#include <optional>

#include "args.hpp"
#include "commands.hpp"
#include "devices_view.hpp"
#include "piece_store.hpp"
#include "shelfstage/devices/fit.hpp"
#include "shelfstage/error.hpp"

namespace shelfstage::cli {

using devices::DeviceKind;
using devices::MeasuredPiece;
using units::Unit;

namespace {

struct DevicesMeasureOptions {
  std::string device;
  std::optional<std::string> idss, vp, hfe, ib, ic, label;
  std::string uncertainty = "3%";
  std::string note;
};

/// Names the first option given that does not belong to the device's kind.
void refuse_options(std::initializer_list<std::pair<const char*, const std::optional<std::string>*>> options,
                    const devices::DeviceRecord& record) {
  for (const auto& [flag, value] : options) {
    if (*value) {
      throw InputError(fmt::format("{} '{}' does not apply to {} ({})", flag, **value, record.name,
                                   devices::kind_name(record.kind)));
    }
  }
}

MeasuredPiece piece_from_options(const DevicesMeasureOptions& o, const devices::DeviceRecord& record) {
  MeasuredPiece p;
  p.device = record.name;
  p.label = o.label.value_or("");
  if (o.label && o.label->find_first_not_of(" \t") == std::string::npos)
    throw InputError("--label '' is empty; leave it out for the next free label");
  p.note = o.note;
  p.uncertainty = parse_fraction("--uncertainty", o.uncertainty);
  if (p.uncertainty >= 1.0) throw InputError(fmt::format("--uncertainty '{}' must be below 100%", o.uncertainty));
  if (devices::is_jfet(record.kind)) {
    refuse_options({{"--hfe", &o.hfe}, {"--ib", &o.ib}, {"--ic", &o.ic}}, record);
    if (!o.idss || !o.vp) {
      throw InputError(fmt::format("{} is {} JFET: give --idss and --vp", record.name,
                                   record.kind == DeviceKind::njfet ? "an N-channel" : "a P-channel"));
    }
    const double idss = parse_quantity("--idss", *o.idss, Unit::ampere);
    if (!(idss > 0)) throw InputError(fmt::format("--idss '{}' must be above zero", *o.idss));
    const double vp = parse_quantity("--vp", *o.vp, Unit::volt);
    if (vp == 0) throw InputError(fmt::format("--vp '{}' must not be zero", *o.vp));
    p.idss_a = idss;
    // The sign follows the kind: a tired hand types 1.2 for an N-channel piece's -1.2 V.
    p.vp_v = record.kind == DeviceKind::njfet ? -std::abs(vp) : std::abs(vp);
  } else {
    refuse_options({{"--idss", &o.idss}, {"--vp", &o.vp}}, record);
    if (o.hfe && (o.ib || o.ic))
      throw InputError(fmt::format("--hfe '{}' and --ib/--ic: give one or the other", *o.hfe));
    if (o.hfe) {
      const double hfe = parse_quantity("--hfe", *o.hfe, Unit::none);
      if (!(hfe > 0)) throw InputError(fmt::format("--hfe '{}' must be above zero", *o.hfe));
      p.hfe = hfe;
    } else if (o.ib && o.ic) {
      p.hfe = devices::hfe_from_currents(parse_quantity("--ib", *o.ib, Unit::ampere),
                                         parse_quantity("--ic", *o.ic, Unit::ampere));
    } else if (o.ib || o.ic) {
      throw InputError(fmt::format("{} '{}' needs {} as well (hFE = IC/IB)", o.ib ? "--ib" : "--ic",
                                   o.ib ? *o.ib : *o.ic, o.ib ? "--ic" : "--ib"));
    } else {
      throw InputError(fmt::format("{} is a BJT: give --hfe, or --ib and --ic", record.name));
    }
  }
  return p;
}

void run_devices_measure(const DevicesMeasureOptions& o, Context& ctx) {
  auto db = ctx.open_database();
  const auto record = db.device(o.device);
  if (!record) throw InputError(fmt::format("device '{}' is not in the device list", units::clip(o.device)));
  if (!devices::is_transistor(record->kind))
    throw InputError(
        fmt::format("device '{}' is an op-amp; measured pieces are transistors (IDSS and VP, or hFE)", record->name));
  const MeasuredPiece stored = store_piece(db, piece_from_options(o, *record));
  const auto warnings = warn_departures(*record, stored, ctx);
  if (ctx.global.json) {
    print_json(ctx, {{"schema", 1}, {"piece", piece_json(stored)}, {"warnings", warnings}});
    return;
  }
  ctx.out << stored_piece_text(stored);
}

}  // namespace

void setup_devices_measure(CLI::App& devices_cmd, Context& ctx) {
  auto o = std::make_shared<DevicesMeasureOptions>();
  CLI::App* cmd = devices_cmd.add_subcommand("measure", "Store one piece measured on the bench");
  cmd->add_option("DEVICE", o->device, "The type the piece belongs to (from `devices list`)")
      ->type_name("")
      ->required();
  const char* jfet = "JFET";
  cmd->add_option("--idss", o->idss, "Measured IDSS: 2.9m")->type_name("A")->group(jfet);
  cmd->add_option("--vp", o->vp, "Measured VGS(off); the sign follows the kind, so 1.45 and -1.45 both do")
      ->type_name("V")
      ->group(jfet);
  const char* bjt = "BJT";
  cmd->add_option("--hfe", o->hfe, "Measured hFE: 287")->type_name("NUMBER")->group(bjt);
  cmd->add_option("--ib", o->ib, "Base current of the reading (with --ic): 10u")->type_name("A")->group(bjt);
  cmd->add_option("--ic", o->ic, "Collector current of the reading (with --ib): 2.87m")->type_name("A")->group(bjt);
  cmd->add_option("--label", o->label, "What is written on the bag or tape (default: DEVICE-1, DEVICE-2, ...)")
      ->type_name("LABEL")
      ->check(clean_text());
  cmd->add_option("--uncertainty", o->uncertainty, "How far the figures may be off: 3% (default) or 0.03")
      ->type_name("PERCENT");
  cmd->add_option("--note", o->note, "Free text kept with the piece")->type_name("TEXT")->check(clean_text());
  cmd->footer(
      "A measured piece replaces its type's datasheet range by the figures +/- the uncertainty;\n"
      "`design --piece LABEL` designs for that one piece. A figure outside the datasheet range is\n"
      "stored with a warning. hFE from currents is IC/IB (IB must be below IC). For IDSS and VP\n"
      "from source-resistor readings use `devices fit`.\n"
      "  shelfstage devices measure SJ-101 --idss 2.9m --vp -1.45 --label J4\n"
      "  shelfstage devices measure SQ-410 --ib 10u --ic 2.87m --uncertainty 5%");
  cmd->callback([o, &ctx] { run_devices_measure(*o, ctx); });
}

}  // namespace shelfstage::cli
