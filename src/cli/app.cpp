// The root command and the one place where failures become `error:` lines and exit statuses.
#include <exception>
#include <new>
#include <ostream>

#include "commands.hpp"
#include "shelfstage/error.hpp"
#include "shelfstage/store/csv.hpp"

namespace shelfstage::cli {

namespace detail {
namespace {

/// The deepest subcommand the parser got to.
const CLI::App* deepest(const CLI::App& app) {
  const CLI::App* current = &app;
  for (auto chosen = current->get_subcommands(); !chosen.empty(); chosen = current->get_subcommands()) {
    current = chosen.front();
  }
  return current;
}

/// "shelfstage stock add", for the "see --help" hint.
std::string command_path(const CLI::App& app) {
  std::string path = app.get_name();
  const CLI::App* current = &app;
  for (auto chosen = current->get_subcommands(); !chosen.empty(); chosen = current->get_subcommands()) {
    current = chosen.front();
    path += " " + current->get_name();
  }
  return path;
}

/// The one-line message for a parse error. CLI11 says "A subcommand is required" both for a
/// missing command and for a misspelt one; say which, and name the commands there are.
std::string parse_error_text(const CLI::App& app, const CLI::ParseError& e) {
  const std::string hint = " (see `" + command_path(app) + " --help`)";
  const CLI::App* where = deepest(app);
  if (dynamic_cast<const CLI::RequiredError*>(&e) != nullptr && where->get_require_subcommand_min() > 0 &&
      where->get_subcommands().empty()) {
    const auto extra = app.remaining(true);
    if (!extra.empty()) return "unknown command '" + extra.front() + "'" + hint;
    std::string names;
    for (const CLI::App* sub : where->get_subcommands({})) {
      if (!names.empty()) names += ", ";
      names += sub->get_name();
    }
    return "`" + command_path(app) + "` needs a command: " + names + hint;
  }
  return e.what() + hint;
}

/// Every command's help ends with a note on the root's options, which CLI11 shows only in
/// the root's help but which work after any command.
void note_global_options(CLI::App& app, bool is_root) {
  const auto subs = app.get_subcommands([](CLI::App*) { return true; });
  if (!is_root && subs.empty()) {
    std::string footer = app.get_footer();
    if (!footer.empty()) footer += "\n";
    footer += "Also: --db FILE picks the stock database; --json prints one JSON document.";
    app.footer(footer);
  }
  for (CLI::App* sub : subs) note_global_options(*sub, false);
}

}  // namespace
}  // namespace detail

void setup_commands(CLI::App& app, Context& ctx) {
  // One line per command; each lives in src/cli/cmd_<name>.cpp.
  setup_init(app, ctx);
  setup_stock(app, ctx);
  setup_devices(app, ctx);
  setup_check(app, ctx);
  setup_demo(app, ctx);
  setup_design(app, ctx);
  setup_show(app, ctx);
  setup_analyze(app, ctx);
  setup_pick(app, ctx);
  setup_reserve(app, ctx);
  setup_release(app, ctx);
  setup_build(app, ctx);
  setup_builds(app, ctx);
  setup_ledger(app, ctx);
  setup_shop(app, ctx);
  setup_report(app, ctx);
}

void setup_root(CLI::App& app, Context& ctx, const std::string& version_text) {
  app.description(
      "shelfstage designs small-signal JFET and BJT amplifier stages from the resistors and\n"
      "capacitors you actually have, and keeps the count of those parts honest.");
  app.add_option("--db", ctx.global.db,
                 "The stock database file. Default: $SHELFSTAGE_DB, else\n"
                 "$XDG_DATA_HOME/shelfstage/stock.db, else ~/.local/share/shelfstage/stock.db")
      ->type_name("FILE");
  app.add_flag("--json", ctx.global.json, "Print one JSON document (schema 1, plain SI numbers) instead of tables");
  app.set_version_flag("--version", version_text, "Print the version and stop");
  app.fallthrough();  // `shelfstage stock list --json` hands --json to the root
  app.require_subcommand(1);
  app.footer(
      "Exit status: 0 done; 1 bad input or usage; 2 no feasible design or not enough stock;\n"
      "3 database problem (locked, corrupt, or written by a newer shelfstage).\n"
      "Run `shelfstage COMMAND --help` for each command.");
}

int run_app(CLI::App& app, Context& ctx, int argc, const char* const* argv) {
  detail::note_global_options(app, true);
  try {
    app.parse(argc, argv);
    return 0;
  } catch (const CLI::CallForHelp& e) {
    return app.exit(e, ctx.out, ctx.err);
  } catch (const CLI::CallForAllHelp& e) {
    return app.exit(e, ctx.out, ctx.err);
  } catch (const CLI::CallForVersion& e) {
    return app.exit(e, ctx.out, ctx.err);
  } catch (const CLI::ParseError& e) {
    ctx.err << "error: " << detail::parse_error_text(app, e) << '\n';
    return static_cast<int>(ExitCode::bad_input);
  } catch (const store::CsvError& e) {
    ctx.err << "error: " << e.what() << '\n';
    for (const auto& problem : e.problems()) ctx.err << problem << '\n';
    return static_cast<int>(e.code());
  } catch (const Error& e) {
    ctx.err << "error: " << e.what() << '\n';
    return static_cast<int>(e.code());
  } catch (const std::bad_alloc&) {
    ctx.err << "error: out of memory\n";
    return static_cast<int>(ExitCode::bad_input);
  } catch (const std::exception& e) {
    // A bug, not the user's fault; still exit 1 so that scripts see a plain failure.
    ctx.err << "error: internal: " << e.what() << " (please report this)\n";
    return static_cast<int>(ExitCode::bad_input);
  }
}

}  // namespace shelfstage::cli
