// `shelfstage stock ...`: add, list, import, export, adjust and remove stock lines.
#include <fmt/format.h>

#include <algorithm>
#include <cctype>
#include <memory>
#include <optional>

#include "args.hpp"
#include "commands.hpp"
#include "selector.hpp"
#include "shelfstage/error.hpp"
#include "shelfstage/store/csv.hpp"
#include "shelfstage/units/tolerance.hpp"
#include "stock_view.hpp"

namespace shelfstage::cli {

using store::Part;
using store::PartKind;

namespace detail {
namespace {

units::Tolerance parse_tol(std::string_view field, const std::string& text) {
  try {
    return units::parse_tolerance(text);
  } catch (const units::ParseError& e) {
    throw InputError(name_field(e.what(), field));
  }
}

bool iequal(std::string_view a, std::string_view b) {
  return a.size() == b.size() && std::equal(a.begin(), a.end(), b.begin(), [](char x, char y) {
           return std::tolower(static_cast<unsigned char>(x)) == std::tolower(static_cast<unsigned char>(y));
         });
}

}  // namespace
}  // namespace detail

namespace {

// --- stock add ----------------------------------------------------------------------------

struct StockAddOptions {
  std::string kind, value, qty;
  std::optional<std::string> tol, power, volts, dielectric;
  std::string bin, package, note;
  std::string reason = "added by hand";
};

/// Turns what was typed into a Part, refusing ratings that do not belong to the kind.
Part part_from_options(const StockAddOptions& o, const store::Database& db) {
  Part p;
  if (!store::parse_kind_code(o.kind, p.kind)) {
    throw InputError(fmt::format("kind '{}' is not one of {}", units::clip(o.kind), store::kind_codes_text()));
  }
  const bool resistor = p.kind == PartKind::resistor;
  const bool capacitor = p.kind == PartKind::capacitor;
  if (resistor) {
    p.value = parse_quantity("value", o.value, units::Unit::ohm);
  } else if (capacitor) {
    p.value = parse_capacitance("value", o.value);
  } else {
    const auto record = db.device(o.value);
    if (!record) {
      throw InputError(fmt::format(
          "device '{}' is not in the device list; add it first (`shelfstage devices add` or `devices import`)",
          units::clip(o.value)));
    }
    p.device = record->name;
  }
  p.qty = parse_count("qty", o.qty);
  if (o.tol) {
    if (!resistor && !capacitor)
      throw InputError(fmt::format("--tol '{}': transistors and op-amps have no tolerance", units::clip(*o.tol)));
    p.tol = detail::parse_tol("--tol", *o.tol);
  }
  if (o.power) {
    if (!resistor)
      throw InputError(
          fmt::format("--power '{}' is a resistor rating (capacitors take --volts)", units::clip(*o.power)));
    p.power_w = parse_quantity("--power", *o.power, units::Unit::watt);
  }
  if (o.volts) {
    if (!capacitor) throw InputError(fmt::format("--volts '{}' is a capacitor rating", units::clip(*o.volts)));
    p.volts = parse_quantity("--volts", *o.volts, units::Unit::volt);
  }
  if (o.dielectric) {
    if (!capacitor)
      throw InputError(fmt::format("--dielectric '{}' applies to capacitors only", units::clip(*o.dielectric)));
    p.dielectric = *o.dielectric;
  }
  p.bin = o.bin;
  p.package = o.package;
  p.note = o.note;
  return p;
}

void run_stock_add(const StockAddOptions& o, Context& ctx) {
  auto db = ctx.open_database();
  const Part wanted = part_from_options(o, db);
  const auto id = db.add_part(wanted, o.reason);
  const auto stored = db.part(id);
  if (!stored) throw DatabaseError(fmt::format("stock line {} vanished after it was written", id));
  if (ctx.global.json) {
    print_json(ctx, {{"schema", 1}, {"added", wanted.qty}, {"part", part_json(*stored)}});
    return;
  }
  ctx.out << fmt::format("Added {} to line {}: {} (now {} on hand).\n", wanted.qty, id, describe_part(*stored),
                         stored->qty);
}

void setup_stock_add(CLI::App& stock, Context& ctx) {
  auto o = std::make_shared<StockAddOptions>();
  CLI::App* cmd = stock.add_subcommand("add", "Put pieces on the shelf (a new line, or more of an existing one)");
  // (`stock add R:4k7 10`: the line-name form the other stock commands take. Checked as the
  // word is read, before CLI11 would say only that QTY is missing.)
  const CLI::Validator two_words(
      [](const std::string& kind) -> std::string {
        const auto colon = kind.find(':');
        if (colon == std::string::npos || colon == 0) return {};
        std::string value = kind.substr(colon + 1), bin;
        if (const auto at = value.find('@'); at != std::string::npos) {
          bin = " --bin " + value.substr(at + 1);
          value.resize(at);
        }
        return fmt::format(
            "'{}': give the kind and the value as two words, then the count (`shelfstage stock add {} {} QTY{}`)", kind,
            kind.substr(0, colon), value, bin);
      },
      "");
  cmd->add_option("KIND", o->kind, "R, C, NJFET, PJFET, NPN, PNP or OPAMP")
      ->type_name("")
      ->required()
      ->check(two_words);
  cmd->add_option("VALUE", o->value,
                  "R: ohms, C: farads, in SI or IEC 60062 notation (4.7k, 4k7, 100n, 2u2);\n"
                  "a transistor or op-amp: its device name from `shelfstage devices list`")
      ->type_name("")
      ->required();
  cmd->add_option("QTY", o->qty, "How many pieces (op-amps: packages; 0 records a value you are out of)")
      ->type_name("")
      ->required();
  cmd->add_option("--tol", o->tol, "Tolerance: 5%, 1%, or -20/+80% for asymmetric (R and C)")->type_name("TOL");
  cmd->add_option("--power", o->power, "Resistor power rating in watts: 0.25, 0.6, 1")->type_name("W");
  cmd->add_option("--volts", o->volts, "Capacitor voltage rating: 6.3, 16, 50")->type_name("V");
  cmd->add_option("--dielectric", o->dielectric, "Capacitor dielectric: C0G, X7R, film, electrolytic, tantalum")
      ->type_name("TYPE")
      ->check(clean_text());
  cmd->add_option("--bin", o->bin, "Where the pieces live: drawer, bag or box label (A6, B12)")
      ->type_name("BIN")
      ->check(clean_text());
  cmd->add_option("--package", o->package, "Package note: 0207 axial, 5 mm radial, TO-92")
      ->type_name("TEXT")
      ->check(clean_text());
  cmd->add_option("--note", o->note, "Free text kept with the line")->type_name("TEXT")->check(clean_text());
  cmd->add_option("--reason", o->reason, "Why, for the ledger (default: added by hand)")
      ->type_name("TEXT")
      ->check(clean_text());
  cmd->footer(
      "Pieces of the same kind, value, tolerance, ratings, dielectric, package and bin join\n"
      "the existing line; anything different is a new line. Every change is written to the\n"
      "ledger. A capacitor's value states its multiplier or unit (100n, 4u7, 2.2uF, 1F): a bare\n"
      "number such as 1 or 4.7 is refused, as it is usually microfarads with the unit left out.\n"
      "Text (bin, note, package, dielectric, reason) must be UTF-8 without control characters.\n"
      "Examples:\n"
      "  shelfstage stock add R 4k7 25 --tol 5% --power 0.25 --bin A6\n"
      "  shelfstage stock add C 100u 10 --volts 16 --dielectric electrolytic --bin C4\n"
      "  shelfstage stock add NPN SQ-410 20 --bin D10\n"
      "  shelfstage stock add OPAMP SA-210 5 --bin E1 --package DIP-8");
  cmd->callback([o, &ctx] { run_stock_add(*o, ctx); });
}

// --- stock list ---------------------------------------------------------------------------

struct StockListOptions {
  std::string kind;  ///< a kind code, or JFET / BJT for both polarities
  std::string bin;
  bool low = false;
};

std::vector<Part> filter_parts(std::vector<Part> parts, const StockListOptions& o) {
  std::optional<PartKind> kind;
  bool jfets = false, bjts = false;
  if (!o.kind.empty()) {
    PartKind k;
    if (store::parse_kind_code(o.kind, k)) {
      kind = k;
    } else if (detail::iequal(o.kind, "JFET")) {
      jfets = true;
    } else if (detail::iequal(o.kind, "BJT")) {
      bjts = true;
    } else {
      throw InputError(
          fmt::format("--kind '{}' is not one of {}, JFET, BJT", units::clip(o.kind), store::kind_codes_text()));
    }
  }
  std::erase_if(parts, [&](const Part& p) {
    if (kind && p.kind != *kind) return true;
    if (jfets && p.kind != PartKind::njfet && p.kind != PartKind::pjfet) return true;
    if (bjts && p.kind != PartKind::npn && p.kind != PartKind::pnp) return true;
    if (!o.bin.empty() && !detail::iequal(p.bin, o.bin)) return true;
    if (o.low && stock_status(p).empty()) return true;
    return false;
  });
  return parts;
}

void run_stock_list(const StockListOptions& o, Context& ctx) {
  const auto db = ctx.open_database();
  const auto parts = filter_parts(db.parts(), o);
  if (ctx.global.json) {
    print_json(ctx, stock_json(parts));
  } else {
    ctx.out << stock_table(parts);
  }
}

void setup_stock_list(CLI::App& stock, Context& ctx) {
  auto o = std::make_shared<StockListOptions>();
  CLI::App* cmd = stock.add_subcommand("list", "Show what is on the shelf, grouped by kind");
  cmd->add_option("--kind", o->kind, "Only R, C, NJFET, PJFET, NPN, PNP, OPAMP, or JFET / BJT for both polarities")
      ->type_name("KIND");
  cmd->add_option("--bin", o->bin, "Only this bin")->type_name("BIN");
  cmd->add_flag("--low", o->low, fmt::format("Only lines with {} or fewer pieces available (to reorder)", kLowMark));
  cmd->footer(
      fmt::format("Values print in notation with their unit (4.7kΩ, 100nF). QTY is on hand, RESERVED is\n"
                  "held for planned builds; STATUS says `low` when {} or fewer are available and `out` when\n"
                  "none are. The ID column names a line for `stock adjust` and `stock remove`.\n"
                  "With --json: {{\"schema\":1,\"parts\":[...]}}, values in ohms and farads.",
                  kLowMark));
  cmd->callback([o, &ctx] { run_stock_list(*o, ctx); });
}

// --- stock import -------------------------------------------------------------------------

struct StockImportOptions {
  std::string file;
  std::string encoding;
};

void run_stock_import(const StockImportOptions& o, Context& ctx) {
  auto db = ctx.open_database();
  const std::string source = input_name(o.file);
  // Everything is read and checked before the write lock is taken: only the last step, one
  // transaction, holds it.
  std::vector<Part> parts;
  with_encoding_hint([&] {
    const std::string text = read_csv_text(o.file, ctx.in, o.encoding);
    std::vector<std::size_t> lines;
    parts = store::parse_stock_csv(text, source, db.device_records(), &lines);
    db.import_parts(parts, "import from " + source, source, lines);
  });
  std::int64_t pieces = 0;
  for (const auto& p : parts) pieces += p.qty;
  if (ctx.global.json) {
    print_json(ctx, {{"schema", 1}, {"source", source}, {"lines", parts.size()}, {"pieces", pieces}});
    return;
  }
  ctx.out << fmt::format("Imported {} {} ({} {}) from {}.\n", parts.size(), parts.size() == 1 ? "line" : "lines",
                         pieces, pieces == 1 ? "piece" : "pieces", source);
}

void setup_stock_import(CLI::App& stock, Context& ctx) {
  auto o = std::make_shared<StockImportOptions>();
  CLI::App* cmd = stock.add_subcommand("import", "Add the lines of a stock CSV file (all or nothing)");
  cmd->add_option("FILE", o->file, "The CSV file; - reads standard input")->type_name("")->required();
  add_encoding_option(*cmd, o->encoding);
  cmd->footer(
      "The first row names the columns, in any order: kind, value, qty (required) and tol,\n"
      "power, volts, dielectric, bin, package, note. kind is R, C, NJFET, PJFET, NPN, PNP or\n"
      "OPAMP; value is 4.7k / 4k7 / 100n / 2u2 for R and C, a device name for transistors and\n"
      "op-amps (import the devices first; an op-amp's qty counts packages). Quantities add to\n"
      "matching lines. If any row is bad, nothing is imported and every bad row is listed with\n"
      "its line number. Text must be UTF-8 without control characters; a file saved as Latin-1\n"
      "or Windows-1252 imports with --encoding.");
  cmd->callback([o, &ctx] { run_stock_import(*o, ctx); });
}

// --- stock export -------------------------------------------------------------------------

struct StockExportOptions {};

void run_stock_export(const StockExportOptions& /*o*/, Context& ctx) {
  if (ctx.global.json) throw InputError("--json: `stock export` writes CSV; use `stock list --json` for JSON");
  const auto db = ctx.open_database();
  ctx.out << store::write_stock_csv(db.parts());
}

void setup_stock_export(CLI::App& stock, Context& ctx) {
  auto o = std::make_shared<StockExportOptions>();
  CLI::App* cmd = stock.add_subcommand("export", "Write the stock as CSV on standard output");
  cmd->footer(
      "Every column, one row per line; `stock import` of the result into an empty database\n"
      "gives the same stock back. Reservations are not exported.\n"
      "  shelfstage stock export > stock-backup.csv");
  cmd->callback([o, &ctx] { run_stock_export(*o, ctx); });
}

// --- stock adjust -------------------------------------------------------------------------

struct StockAdjustOptions {
  std::string line;
  std::string delta;
  std::string reason;
};

void run_stock_adjust(const StockAdjustOptions& o, Context& ctx) {
  if (o.reason.find_first_not_of(" \t") == std::string::npos) {
    throw InputError("--reason is empty: say why the count changed (recount, lost, used in a repair)");
  }
  auto db = ctx.open_database();
  const auto selector = parse_selector(o.line);
  const int delta = parse_delta("delta", o.delta);
  const Part before = select_part(selector, db.parts());
  db.adjust(before.id, delta, o.reason);
  const auto after = db.part(before.id);
  if (!after) throw DatabaseError(fmt::format("stock line {} vanished after it was written", before.id));
  if (ctx.global.json) {
    print_json(ctx, {{"schema", 1}, {"delta", delta}, {"part", part_json(*after)}});
    return;
  }
  ctx.out << fmt::format("Line {} ({}): {} -> {} on hand ({:+d}, {}).\n", after->id, describe_part(*after), before.qty,
                         after->qty, delta, o.reason);
}

void setup_stock_adjust(CLI::App& stock, Context& ctx) {
  auto o = std::make_shared<StockAdjustOptions>();
  CLI::App* cmd = stock.add_subcommand("adjust", "Correct the count of one line after a recount or a loss");
  cmd->add_option("LINE", o->line, "The line: its ID from `stock list`, or KIND:VALUE[@BIN] such as R:4k7@A6")
      ->type_name("")
      ->required();
  cmd->add_option("DELTA", o->delta, "Pieces to add (+5) or take away (-3)")->type_name("")->required();
  cmd->add_option("--reason", o->reason, "Why, for the ledger: recount, lost, used in a repair")
      ->type_name("TEXT")
      ->required()
      ->check(clean_text());
  cmd->footer(
      "The count never goes below zero or below what is reserved for planned builds.\n"
      "  shelfstage stock adjust 23 -3 --reason \"used in the tremolo repair\"\n"
      "  shelfstage stock adjust R:4k7@A6 +10 --reason recount");
  cmd->callback([o, &ctx] { run_stock_adjust(*o, ctx); });
}

// --- stock remove -------------------------------------------------------------------------

struct StockRemoveOptions {
  std::string line;
  std::string reason = "taken off the shelf";
};

void run_stock_remove(const StockRemoveOptions& o, Context& ctx) {
  auto db = ctx.open_database();
  const auto selector = parse_selector(o.line);
  const Part part = select_part(selector, db.parts());
  db.remove_part(part.id, o.reason);
  if (ctx.global.json) {
    print_json(ctx, {{"schema", 1}, {"removed", part_json(part)}});
    return;
  }
  ctx.out << fmt::format("Removed line {} ({}); {} {} written off in the ledger.\n", part.id, describe_part(part),
                         part.qty, part.qty == 1 ? "piece" : "pieces");
}

void setup_stock_remove(CLI::App& stock, Context& ctx) {
  auto o = std::make_shared<StockRemoveOptions>();
  CLI::App* cmd = stock.add_subcommand("remove", "Take a whole line off the shelf");
  cmd->add_option("LINE", o->line, "The line: its ID from `stock list`, or KIND:VALUE[@BIN]")
      ->type_name("")
      ->required();
  cmd->add_option("--reason", o->reason, "Why, for the ledger (default: taken off the shelf)")
      ->type_name("TEXT")
      ->check(clean_text());
  cmd->footer(
      "The pieces go to zero through the ledger, which keeps the line's history; the line no\n"
      "longer shows in `stock list`. Refused while pieces of it are reserved for a build.");
  cmd->callback([o, &ctx] { run_stock_remove(*o, ctx); });
}

}  // namespace

// --- stock --------------------------------------------------------------------------------

void setup_stock(CLI::App& parent, Context& ctx) {
  CLI::App* stock = parent.add_subcommand("stock", "Add, list, import, export and correct the parts on the shelf");
  stock->require_subcommand(1);
  stock->footer(
      "A stock line is one value (or transistor or op-amp type) in one bin. Name a line by the ID\n"
      "that `stock list` shows, or by KIND:VALUE[@BIN] (R:4k7@A6, C:100n, NPN:SQ-410, OPAMP:SA-210).\n"
      "Every change of a count goes through the ledger with its reason.\n"
      "Run `shelfstage stock COMMAND --help` for each command.");
  setup_stock_add(*stock, ctx);
  setup_stock_list(*stock, ctx);
  setup_stock_import(*stock, ctx);
  setup_stock_export(*stock, ctx);
  setup_stock_adjust(*stock, ctx);
  setup_stock_remove(*stock, ctx);
}

}  // namespace shelfstage::cli
