// `shelfstage devices fit --self-bias RS:VS ...`: a JFET piece's IDSS and VP from the voltage
// across known source resistors, optionally stored as a measured piece.
#include <fmt/format.h>

#include <memory>
#include <optional>
#include <vector>

#include "args.hpp"
#include "commands.hpp"
#include "devices_view.hpp"
#include "piece_store.hpp"
#include "shelfstage/devices/fit.hpp"
#include "shelfstage/error.hpp"

namespace shelfstage::cli {

using devices::DeviceKind;
using units::Unit;

namespace {

struct DevicesFitOptions {
  std::vector<std::string> self_bias;
  std::optional<std::string> kind, device, label;
  bool store = false;
  std::string meter = "0.5%", rs_tol = "1%";
  std::optional<std::string> note, drain_supply, lambda;
};

/// "1k:0.82" -> {1000, 0.82}; "470:-0.35" for a P-channel piece.
devices::SelfBiasReading parse_reading(const std::string& text) {
  const auto colon = text.find(':');
  if (colon == std::string::npos) {
    throw InputError(fmt::format(
        "--self-bias '{}': write RS:VS, the source resistor and the voltage across it, as in 1k:0.82", text));
  }
  const std::string context = fmt::format("--self-bias '{}':", text);
  return {parse_quantity(context + " RS", text.substr(0, colon), Unit::ohm),
          parse_quantity(context + " VS", text.substr(colon + 1), Unit::volt)};
}

void run_devices_fit(const DevicesFitOptions& o, Context& ctx) {
  std::vector<devices::SelfBiasReading> readings;
  for (const auto& t : o.self_bias) readings.push_back(parse_reading(t));
  const devices::ReadingAccuracy accuracy{parse_fraction("--meter-accuracy", o.meter),
                                          parse_fraction("--rs-tol", o.rs_tol)};
  const bool store = o.store || o.label.has_value();
  if (store && !o.device) {
    throw InputError(o.label ? fmt::format("--label '{}' stores the fitted piece and needs --device NAME", *o.label)
                             : std::string("--store needs --device NAME (the type the piece belongs to)"));
  }
  if (o.note && !store)
    throw InputError(fmt::format("--note '{}' goes with a stored piece (--label or --store)", *o.note));

  DeviceKind kind = DeviceKind::njfet;
  if (o.kind && (!devices::parse_kind(*o.kind, kind) || !devices::is_jfet(kind)))
    throw InputError(fmt::format("--kind '{}' is not NJFET or PJFET", *o.kind));
  std::optional<store::Database> db;
  std::optional<devices::DeviceRecord> record;
  if (o.device) {
    db.emplace(ctx.open_database());
    record = db->device(*o.device);
    if (!record) throw InputError(fmt::format("--device '{}' is not in the device list", *o.device));
    if (!devices::is_jfet(record->kind))
      throw InputError(fmt::format("--device '{}' is {}; self-bias readings fit JFETs", record->name,
                                   devices::with_article(record->kind)));
    if (o.kind && kind != record->kind)
      throw InputError(fmt::format("--kind '{}' contradicts --device '{}', which is {}", *o.kind, record->name,
                                   devices::kind_name(record->kind)));
    kind = record->kind;
  }

  devices::BenchConditions bench;
  if (o.drain_supply) bench.drain_supply_v = parse_quantity("--drain-supply", *o.drain_supply, Unit::volt);
  if (o.lambda) {
    if (!o.drain_supply)
      throw InputError(fmt::format("--lambda '{}' goes with --drain-supply (lambda acts through VDS)", *o.lambda));
    bench.lambda_per_v = parse_quantity("--lambda", *o.lambda, Unit::none);
  } else if (record) {
    bench.lambda_per_v = record->jfet.lambda_per_v;
  }
  const auto fit = devices::fit_self_bias(readings, kind, accuracy, bench);

  std::optional<devices::MeasuredPiece> piece;
  if (record) {
    piece.emplace();
    piece->device = record->name;
    piece->idss_a = fit.idss_a;
    piece->vp_v = fit.vp_v;
    piece->uncertainty = fit.piece_uncertainty();
    piece->note = o.note.value_or(fmt::format("fitted from {} self-bias readings", readings.size()));
  }
  if (store) {
    if (piece->uncertainty > 0.5) {
      throw InputError(
          fmt::format("the fit's uncertainty ±{:g}% is too wide to design a piece by (50% at most): take readings with "
                      "source resistors further apart, or more of them",
                      piece->uncertainty * 100.0));
    }
    piece->label = o.label.value_or("");
    piece = store_piece(*db, *piece);
  }
  for (const auto& note : fit.notes) ctx.err << "warning: " << note << '\n';
  const auto departures = piece ? warn_departures(*record, *piece, ctx) : std::vector<std::string>{};

  if (ctx.global.json) {
    auto doc = fit_json(fit, accuracy, bench);
    doc["device"] = record ? nlohmann::ordered_json(record->name) : nlohmann::ordered_json(nullptr);
    doc["departures"] = departures;
    doc["piece"] = store ? piece_json(*piece) : nlohmann::ordered_json(nullptr);
    print_json(ctx, doc);
    return;
  }
  ctx.out << fit_text(fit, accuracy, bench);
  if (record) {
    ctx.out << fmt::format("{} {}'s datasheet range (IDSS {}, VP {}).\n", departures.empty() ? "Within" : "Outside",
                           record->name, range_text(record->jfet.idss_a, Unit::ampere),
                           range_text(record->jfet.vp_v, Unit::volt));
  }
  if (store) ctx.out << stored_piece_text(*piece);
}

}  // namespace

void setup_devices_fit(CLI::App& devices_cmd, Context& ctx) {
  auto o = std::make_shared<DevicesFitOptions>();
  CLI::App* cmd = devices_cmd.add_subcommand("fit", "IDSS and VP of a JFET piece from self-bias readings");
  cmd->add_option("--self-bias", o->self_bias, "One reading RS:VS (repeat, two or more): 1k:0.82")
      ->type_name("RS:VS")
      ->required()
      ->take_all()
      ->expected(1);
  cmd->add_option("--kind", o->kind, "NJFET (default) or PJFET; --device sets it")->type_name("KIND");
  cmd->add_option("--device", o->device, "The type of the piece: compare with its datasheet range")->type_name("NAME");
  cmd->add_option("--label", o->label, "Store the piece under this label (needs --device)")
      ->type_name("LABEL")
      ->check(clean_text());
  cmd->add_flag("--store", o->store, "Store the piece under the next free label DEVICE-N (needs --device)");
  cmd->add_option("--note", o->note, "Free text kept with a stored piece")->type_name("TEXT")->check(clean_text());
  cmd->add_option("--drain-supply", o->drain_supply, "The drain supply of the readings: refers IDSS to VDS = 0")
      ->type_name("V");
  cmd->add_option("--lambda", o->lambda, "Channel-length modulation for --drain-supply (default: the --device's)")
      ->type_name("1/V");
  cmd->add_option("--meter-accuracy", o->meter, "Voltmeter accuracy, a share of the reading (default 0.5%)")
      ->type_name("PERCENT");
  cmd->add_option("--rs-tol", o->rs_tol, "Source resistor tolerance (default 1%, metal film)")->type_name("PERCENT");
  cmd->footer(
      "Wire the piece with its gate at ground, a known resistor RS from source to ground and the\n"
      "drain on a supply well above |VP|; read the voltage VS across RS. Then ID = VS/RS and\n"
      "VGS = -VS, one point on the square law ID = IDSS (1 - VGS/VP)^2. Two readings fix IDSS and\n"
      "VP; more are fitted by least squares. Resistors far apart pin the figures best: one small\n"
      "(VS a fifth of |VP| or less), one large (VS over half of |VP|). P-channel readings may be\n"
      "given as measured (negative) or as magnitudes.\n"
      "The ± figures are expanded uncertainties (k = 2, about 95 %) carried through the fit from\n"
      "--meter-accuracy and --rs-tol, each a bound on every reading; with three or more readings\n"
      "they widen when the readings scatter more than those allow. Readings no square-law piece\n"
      "gives (a larger RS with a smaller VS or a larger ID, ...) are refused, naming them.\n"
      "IDSS comes out at the bench's drain-source voltage; with --drain-supply (and lambda from\n"
      "--lambda or the --device) it is referred to VDS = 0, as designs take it, and a supply\n"
      "below |VP| (the piece out of saturation) is refused.\n"
      "With --device the piece is compared with the type's datasheet (warnings on standard error);\n"
      "--label or --store keeps it as a measured piece with the larger of its two relative\n"
      "uncertainties, for `design --piece LABEL`.\n"
      "With --json: {\"schema\":1,\"idss\",\"vp\",\"idss_uncertainty\",\"vp_uncertainty\",...,\"readings\":[...]}.\n"
      "  shelfstage devices fit --self-bias 100:0.2116 --self-bias 2k2:0.9041\n"
      "  shelfstage devices fit --self-bias 100:0.2116 --self-bias 470:0.5385 --self-bias 2k2:0.9041 \\\n"
      "      --device SJ-101 --label J4");
  cmd->callback([o, &ctx] { run_devices_fit(*o, ctx); });
}

}  // namespace shelfstage::cli
