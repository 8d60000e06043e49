// `shelfstage report ID -o FILE.html`: the design report of a kept design as one self-contained HTML file.
#include <fmt/format.h>

#include <memory>

#include "commands.hpp"
#include "kept_design.hpp"
#include "output.hpp"
#include "shelfstage/error.hpp"
#include "shelfstage/report/design_text.hpp"
#include "shelfstage/report/html_report.hpp"

namespace shelfstage::cli {

namespace {

struct ReportOptions {
  std::string id;
  std::string output;          ///< -o FILE; "-" for stdout
  std::optional<int> copies;   ///< the pick list's copies (default: the design's)
  std::optional<int> samples;  ///< Monte Carlo builds in the bias plot
};

void run_report(const ReportOptions& o, Context& ctx) {
  if (o.output.empty()) throw InputError("-o: give the file to write the report to (FILE.html, or - for stdout)");
  if (o.output == "-" && ctx.global.json)
    throw InputError("--json with -o -: the report is HTML; write it to a file (-o FILE.html) for a JSON summary");
  if (o.samples && (*o.samples < 0 || *o.samples > 100000))
    throw InputError(fmt::format("--samples {} must be from 0 to 100000", *o.samples));
  auto db = ctx.open_database();
  KeptDesign d = load_kept(db, o.id);
  const int copies = copies_of(d, o.copies);
  synth::evaluate_candidate(d.candidate, d.spec);

  report::ReportInput in;
  in.id = d.saved.id;
  in.created = d.saved.created;
  in.generator = "shelfstage " SHELFSTAGE_VERSION;
  in.spec = d.spec;
  in.candidate = d.candidate;
  in.pick = report::make_pick_list(d.candidate, copies, db.parts(), store::held_for(db, d.saved.id));
  in.pick->rail = report::rail_words(d.spec);
  in.bias_samples = o.samples.value_or(std::min(d.spec.mc_samples, 500));
  const std::string html = report::html_report(in);

  if (o.output == "-") {
    ctx.out << html;
    return;
  }
  write_file("-o", o.output, html);
  if (ctx.global.json) {
    nlohmann::ordered_json doc;
    doc["schema"] = 1;
    doc["id"] = d.saved.id;
    doc["file"] = o.output;
    doc["bytes"] = html.size();
    print_json(ctx, doc);
    return;
  }
  ctx.out << fmt::format(
      "Report on {} written to {} ({:.0f} kB): schematic, frequency response, bias spread, output swing, parts and "
      "ratings, pick list for {} cop{}, figures, cautions.\n",
      d.saved.id, o.output, static_cast<double>(html.size()) / 1024.0, copies, copies == 1 ? "y" : "ies");
}

}  // namespace

void setup_report(CLI::App& parent, Context& ctx) {
  auto o = std::make_shared<ReportOptions>();
  CLI::App* cmd =
      parent.add_subcommand("report", "Write the design report of a kept design: one self-contained HTML file");
  cmd->add_option("ID", o->id, "Design id from `shelfstage design` (or its first four or more characters)")
      ->type_name("")
      ->required();
  cmd->add_option("-o,--output", o->output, "The file to write (FILE.html), or - for stdout")
      ->type_name("FILE")
      ->required();
  add_copies_option(*cmd, o->copies);
  cmd->add_option("--samples", o->samples,
                  "Monte Carlo builds in the bias plot (default: the design's samples, at most 500)")
      ->type_name("N");
  cmd->footer(
      "The report holds the schematic drawn from the stage's netlist, the frequency response at\n"
      "the nominal piece with the envelope over the device's corner pieces, the bias point across\n"
      "the corners and Monte Carlo builds with the safe region marked, the output swing (transfer\n"
      "curve and a sine at the rated output), the parts with their rating checks, the pick list,\n"
      "the figures of `show` and the cautions. It loads nothing from elsewhere (no scripts, fonts or\n"
      "images), opens offline and prints on A4. Every figure is recomputed from the device list as\n"
      "it is now. The file is replaced whole or not at all (a new file is written beside it and\n"
      "renamed over it); a symbolic link is followed and the file it names replaced; a folder,\n"
      "device, fifo or socket is refused.");
  cmd->callback([o, &ctx] { run_report(*o, ctx); });
}

}  // namespace shelfstage::cli
