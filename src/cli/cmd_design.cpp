// `shelfstage design`: stages from the parts on the shelf, ranked by error and spread.
#include <fmt/format.h>
#include <unistd.h>

#include <cmath>

#include "args.hpp"
#include "design_run.hpp"
#include "shelfstage/error.hpp"
#include "shelfstage/report/design_json.hpp"
#include "shelfstage/report/design_text.hpp"
#include "shelfstage/stages/topology.hpp"
#include "shelfstage/store/designs.hpp"
#include "shelfstage/units/tolerance.hpp"

namespace shelfstage::cli {

namespace {

// "LOW..HIGH" with both ends in notation; upside-down ranges are refused, not reordered.
std::pair<double, double> parse_span(std::string_view field, const std::string& text, units::Unit unit,
                                     bool allow_single) {
  const auto dots = text.find("..");
  if (dots == std::string::npos) {
    if (!allow_single) throw InputError(fmt::format("{} '{}': give a range LOW..HIGH, e.g. 20..20k", field, text));
    const double v = parse_quantity(field, text, unit);
    return {v, v};
  }
  const double lo = parse_quantity(field, text.substr(0, dots), unit);
  const double hi = parse_quantity(field, text.substr(dots + 2), unit);
  if (!(hi >= lo)) throw InputError(fmt::format("{} '{}': the range is upside down (low end first)", field, text));
  return {lo, hi};
}

double parse_positive(std::string_view field, const std::string& text, units::Unit unit) {
  const double v = parse_quantity(field, text, unit);
  if (!std::isfinite(v) || v <= 0) throw InputError(fmt::format("{} '{}' must be positive", field, text));
  return v;
}

struct DesignCommand {
  DesignOptions o;
};

void run_design(const DesignOptions& o, Context& ctx) {
  const synth::Spec spec = spec_from_options(o);
  auto db = ctx.open_database();
  run_design_on(db, spec, !o.no_save, ctx);
}

}  // namespace

void bind_design_options(CLI::App& cmd, DesignOptions& o) {
  cmd.add_option("--gain", o.gain, "Voltage gain from the source to the load: V/V (10) or dB (20dB)")->required();
  cmd.add_option("--load", o.load, "Load resistance at the output (10k, 4k7)")->required();
  cmd.add_option("--supply", o.supply,
                 "Supply voltage, or its range over a battery's life (9, 7..9.6); negative for a negative rail "
                 "(-9, -7..-9.6: ground at the battery's + terminal)")
      ->required();
  cmd.add_flag("--split", o.split,
               "The supply is split: rails at +V and -V with ground between (--supply 15 --split for +/-15 V); "
               "op-amp stages referred to ground are offered, and single-rail stages take the + rail");
  cmd.add_option("--zin", o.zin, "Lowest acceptable input impedance (1M, 100k; 0 for none)")->required();
  cmd.add_option("--load-cap", o.load_cap, "Capacitance across the load, e.g. a cable's (470p); default none");
  cmd.add_option("--source-z", o.source_z, "Output resistance of the source driving the stage (default 0)");
  cmd.add_option("--band", o.band, "Band to pass flat within 1 dB (20..20k); capacitors are sized for it");
  cmd.add_option(
      "--swing", o.swing,
      "Output swing the stage must deliver at every corner, Vpp (2, 5Vpp); unset: room for a tenth of the supply");
  cmd.add_option("--max-current", o.max_current, "Supply current budget per copy (2m, 1.5mA)");
  cmd.add_option("--temp", o.temp, "Ambient temperature range in °C (0..50); corners include both ends");
  cmd.add_option("--copies", o.copies, "How many copies will be built: all draw on one stock")
      ->check(CLI::Range(1, 10000));
  cmd.add_option("--topology", o.topologies, "Only these stages (repeatable): " + stages::topology_names());
  cmd.add_option("--device", o.devices, "Only these transistor types (repeatable)");
  cmd.add_option("--piece", o.piece, "Design for one measured piece (its narrower spread); implies --copies 1");
  cmd.add_option("--top", o.top, "How many candidates to list (default 5)")->check(CLI::Range(1, 1000));
  cmd.add_option("--combine", o.combine, "Parts per value: 1 singles, 2 pairs (default), 3 triples")
      ->check(CLI::Range(1, 3));
  cmd.add_option("--gain-tol", o.gain_tol, "Gain window that counts as meeting the spec (default 10%)");
  cmd.add_option("--stages", o.stages,
                 "Stages in a row: 1 (single stages only), 2..3 (chains only) or 1..3 (default: chains when no "
                 "single stage holds the gain window at every corner)");
  cmd.add_option("--max-distortion", o.max_distortion,
                 "Total harmonic distortion an output may have and count as undistorted (default 1%): the swing "
                 "must stay within it at every corner");
  cmd.add_option("--phase-margin", o.phase_margin,
                 "Least phase margin of a feedback stage's loop at every corner, degrees (default 45; 60 for no "
                 "overshoot): a stage short of it gets a capacitor across its feedback resistor from the shelf");
  cmd.add_option("--prefer", o.prefer,
                 "Rank by gain accuracy alone (accuracy, the default) or by the distortion at the requested swing "
                 "as well (distortion)");
  cmd.add_option("--spread", o.spread,
                 "Which transistor pieces the worst case covers: correlated (default: JFETs between and around the "
                 "datasheet's IDSS-VP diagonal, every limit of each reached) or box (every IDSS with every VP)");
  cmd.add_option("--seed", o.seed, "Seed of the Monte Carlo yield (default 1: reproducible)");
  cmd.add_option("--samples", o.samples, "Monte Carlo builds per listed candidate (default 500)")
      ->check(CLI::Range(0, 1000000));
  cmd.add_flag("--no-save", o.no_save, "Do not keep the candidates in the database");
}

synth::Spec spec_from_options(const DesignOptions& o) {
  synth::Spec s;
  try {
    s.gain = units::parse_gain(o.gain);
  } catch (const units::ParseError& e) {
    throw InputError(name_field(e.what(), "--gain"));
  }
  s.load_ohm = parse_positive("--load", o.load, units::Unit::ohm);
  if (o.load_cap) s.load_farads = parse_positive("--load-cap", *o.load_cap, units::Unit::farad);
  const Supply supply = parse_supply("--supply", o.supply);
  s.supply_lo_v = supply.lo_v;
  s.supply_hi_v = supply.hi_v;
  s.negative_rail = supply.negative;
  if (o.split && supply.negative)
    throw InputError(fmt::format("--supply '{}' with --split: give the rails' magnitude (15 for +/-15 V)", o.supply));
  s.split_supply = o.split;
  s.zin_min_ohm = parse_quantity("--zin", o.zin, units::Unit::ohm);
  if (!(s.zin_min_ohm >= 0)) throw InputError(fmt::format("--zin '{}' must be zero or positive", o.zin));
  s.source_ohm = parse_quantity("--source-z", o.source_z, units::Unit::ohm);
  if (!(s.source_ohm >= 0)) throw InputError(fmt::format("--source-z '{}' must be zero or positive", o.source_z));
  if (o.band) {
    s.band_hz = parse_span("--band", *o.band, units::Unit::hertz, false);
    if (!(s.band_hz->first > 0)) throw InputError(fmt::format("--band '{}': the low edge must be above 0 Hz", *o.band));
    if (s.band_hz->first == s.band_hz->second)
      throw InputError(fmt::format("--band '{}': the band needs two different edges", *o.band));
  }
  if (o.swing) {
    std::string t = *o.swing;
    for (const char* suffix : {"Vpp", "vpp", "VPP"})
      if (t.size() > 3 && t.ends_with(suffix)) t = t.substr(0, t.size() - 3);
    s.swing_vpp = parse_positive("--swing", t, units::Unit::volt);
  }
  if (o.max_current) s.max_current_a = parse_positive("--max-current", *o.max_current, units::Unit::ampere);
  if (o.temp) {
    const auto t = parse_span("--temp", *o.temp, units::Unit::none, true);
    s.temp_c = t;
  }
  s.copies = o.copies;
  s.topologies = o.topologies;
  s.devices = o.devices;
  s.piece = o.piece;
  s.top = o.top;
  s.combine = o.combine;
  s.gain_tol = parse_gain_tolerance(o.gain_tol);
  s.max_thd = parse_fraction("--max-distortion", o.max_distortion);
  if (o.phase_margin) s.least_margin_deg = parse_degrees("--phase-margin", *o.phase_margin);
  if (o.prefer == "distortion")
    s.prefer = synth::Spec::Prefer::distortion;
  else if (o.prefer != "accuracy")
    throw InputError(fmt::format("--prefer '{}': give accuracy or distortion", o.prefer));
  if (!devices::parse_spread_model(o.spread, s.spread))
    throw InputError(fmt::format("--spread '{}': give correlated or box", o.spread));
  s.seed = o.seed;
  s.mc_samples = o.samples;
  {
    // "2", "1..3": whole numbers from 1 to 3.
    const auto dots = o.stages.find("..");
    auto whole = [&](const std::string& t) {
      std::size_t used = 0;
      int v = 0;
      try {
        v = std::stoi(t, &used);
      } catch (const std::exception&) {
        used = 0;
      }
      if (used == 0 || used != t.size() || v < 1 || v > 3)
        throw InputError(fmt::format("--stages '{}': give 1, 2 or 3 stages, or a range such as 1..3", o.stages));
      return v;
    };
    s.stages_min = whole(dots == std::string::npos ? o.stages : o.stages.substr(0, dots));
    s.stages_max = dots == std::string::npos ? s.stages_min : whole(o.stages.substr(dots + 2));
    if (s.stages_max < s.stages_min)
      throw InputError(fmt::format("--stages '{}': the range is upside down (fewest first)", o.stages));
  }
  synth::validate(s);
  return s;
}

synth::Inventory load_inventory(const store::Database& db) {
  synth::Inventory inv;
  inv.parts = db.parts();
  inv.devices = db.device_records();
  inv.pieces = db.pieces();
  return inv;
}

synth::DesignResult run_design_on(store::Database& db, const synth::Spec& spec, bool save, Context& ctx) {
  const synth::Inventory inv = load_inventory(db);
  // Progress only for a person watching a terminal, never in --json output.
  synth::Progress progress;
  const bool show_progress = !ctx.global.json && ::isatty(2) && &ctx.err == &std::cerr;
  if (show_progress)
    progress = [&](double done, double total, const std::string& what) {
      ctx.err << fmt::format("\r{}: {:.0f}/{:.0f}   ", what, done, total) << std::flush;
    };
  synth::DesignResult r = synth::design(spec, inv, progress);
  if (show_progress) ctx.err << "\r" << std::string(40, ' ') << "\r" << std::flush;
  if (save && !r.candidates.empty()) {
    std::vector<store::SavedDesign> saved;
    // Kept as valid JSON whatever text an old database holds (never throws after the search).
    constexpr auto replace = nlohmann::ordered_json::error_handler_t::replace;
    const std::string spec_text = report::spec_json(spec).dump(-1, ' ', false, replace);
    for (const auto& c : r.candidates)
      saved.push_back({c.id, {}, spec_text, report::candidate_json(c).dump(-1, ' ', false, replace)});
    store::save_designs(db, saved);
  }
  if (ctx.global.json) {
    print_json(ctx, report::design_json(r));
  } else if (!r.candidates.empty()) {
    ctx.out << "Request: " << report::spec_line(spec) << "\n";
    ctx.out << fmt::format("Searched {} stage proposals ({} evaluations) in {:.2f} s.\n\n", r.proposals, r.evaluations,
                           r.seconds);
    ctx.out << report::candidates_table(r);
    if (const std::string note = report::gain_window_note(r); !note.empty()) ctx.out << "\n" << note;
    const auto& best = r.candidates.front();
    ctx.out << fmt::format(
        "\nScore: gain error in percent points, half the nominal plus the worst case, plus one per piece.\n");
    if (save)
      ctx.out << fmt::format(
          "Kept in the database: `shelfstage show {}` for the full analysis, `shelfstage pick {}` for "
          "the pick list.\n",
          best.id, best.id);
    if (!best.cautions.empty()) {
      ctx.out << "\nCautions for #1:\n";
      for (const auto& c : best.cautions) ctx.out << "  - " << c << "\n";
    }
    if (const std::string loop = report::loop_text(best); !loop.empty()) ctx.out << "\n#1: " << loop;
  }
  if (r.candidates.empty()) {
    // The diagnosis goes to stderr as the error (exit 2); its first line is the error line.
    const std::string text = report::diagnosis_text(r);
    const auto nl = text.find('\n');
    const std::string first = text.substr(std::string("error: ").size(), nl - std::string("error: ").size());
    if (nl + 1 < text.size()) ctx.err << text.substr(nl + 1);
    throw InfeasibleError(first);
  }
  return r;
}

void setup_design(CLI::App& parent, Context& ctx) {
  auto* cmd = parent.add_subcommand(
      "design",
      "Design a small-signal stage from the parts on the shelf. Every topology and every stocked transistor "
      "type is tried; resistor and capacitor values come only from the stock (single parts and series or "
      "parallel pairs, within the quantities on hand for all copies). Each candidate is checked at nominal "
      "and at the worst-case corners of device spread, part tolerances, supply and temperature, then ranked "
      "by gain error and spread; the best get a Monte Carlo yield. When no single stage holds the gain "
      "within --gain-tol at every corner, chains of two or three stages are designed too (--stages). Candidates "
      "are kept in the database under their id for show, pick and build.");
  auto opts = std::make_shared<DesignCommand>();
  bind_design_options(*cmd, opts->o);
  cmd->callback([opts, &ctx] { run_design(opts->o, ctx); });
}

}  // namespace shelfstage::cli
