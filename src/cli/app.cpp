// The root command and the one place where failures become `error:` lines and exit statuses.
#include <algorithm>
#include <cctype>
#include <exception>
#include <new>
#include <ostream>
#include <string>
#include <vector>

#include "commands.hpp"
#include "output.hpp"
#include "shelfstage/error.hpp"
#include "shelfstage/store/csv.hpp"
#include "shelfstage/units/text.hpp"

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

/// " (did you mean X?)" when `typed` is a slip for one of `known`, else empty.
std::string did_you_mean(std::string_view typed, const std::vector<std::string>& known) {
  const std::string near = units::closest_word(typed, known);
  return near.empty() ? std::string() : " (did you mean " + near + "?)";
}

/// Every option `where` takes as it is written (--load, -o), the root's (--db, --json) too.
std::vector<std::string> option_names(const CLI::App& root, const CLI::App& where) {
  std::vector<std::string> names;
  for (const CLI::App* a : {&where, &root})
    for (const CLI::Option* opt : a->get_options()) {
      for (const std::string& l : opt->get_lnames()) names.push_back("--" + l);
      for (const std::string& s : opt->get_snames()) names.push_back("-" + s);
    }
  return names;
}

/// The one-line message for a parse error. CLI11 says "A subcommand is required" both for a
/// missing command and for a misspelt one; say which, and name the commands there are. For
/// words it did not expect it lists them all, last first: name the first option it did not
/// know (with the one meant, for a slip), else the first stray word.
std::string parse_error_text(const CLI::App& app, const CLI::ParseError& e) {
  const std::string hint = " (see `" + command_path(app) + " --help`)";
  const CLI::App* where = deepest(app);
  if (dynamic_cast<const CLI::ExtrasError*>(&e) != nullptr) {
    const auto extra = app.remaining(true);
    const std::vector<std::string> known = option_names(app, *where);
    for (const std::string& word : extra) {
      const bool number = word.size() > 1 && (std::isdigit(static_cast<unsigned char>(word[1])) != 0 || word[1] == '.');
      if (word.size() < 2 || word[0] != '-' || number) continue;
      const std::string name = word.substr(0, word.find('='));
      // A known option left over stood where none is taken (after `--`): a stray word.
      if (std::find(known.begin(), known.end(), name) != known.end()) break;
      return "unknown option '" + name + "'" + did_you_mean(name, known) + hint;
    }
    if (!extra.empty()) return "unexpected argument '" + extra.front() + "'" + hint;
  }
  if (dynamic_cast<const CLI::RequiredError*>(&e) != nullptr && where->get_require_subcommand_min() > 0 &&
      where->get_subcommands().empty()) {
    const auto extra = app.remaining(true);
    std::vector<std::string> commands;
    for (const CLI::App* sub : where->get_subcommands({})) commands.push_back(sub->get_name());
    if (!extra.empty()) return "unknown command '" + extra.front() + "'" + did_you_mean(extra.front(), commands) + hint;
    std::string names;
    for (const std::string& c : commands) names += (names.empty() ? "" : ", ") + c;
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

/// A message as one clean line of reasonable length: control characters and bytes that are
/// not UTF-8 escaped, and cut (a long value echoed in it is already cut where it is quoted;
/// this is the guard for any that is not). The guard leaves room for the longest message the
/// program writes itself, a design's diagnosis with its stop counts (600 to 900 characters):
/// cut at 500, it lost its last counts mid-word.
std::string one_line(std::string_view message) {
  constexpr std::size_t kLongestValue = 200;
  constexpr std::size_t kLongest = 2000;
  std::string out;
  std::size_t pos = 0;
  while (pos < message.size()) {
    const auto open = message.find('\'', pos);
    const auto close = open == std::string_view::npos ? open : message.find('\'', open + 1);
    if (close == std::string_view::npos) {
      out += message.substr(pos);
      break;
    }
    out += message.substr(pos, open + 1 - pos);
    out += units::clip(message.substr(open + 1, close - open - 1), kLongestValue);
    out += '\'';
    pos = close + 1;
  }
  // By bytes: an escaped byte is four (a message quoting a value with a stray quote in it
  // echoed its bytes unclipped, each as \xNN).
  return units::clip_bytes(out, kLongest);
}

/// Runs the parsed command; returns its exit status, having printed any error.
int run_command(CLI::App& app, Context& ctx, int argc, const char* const* argv) {
  // After a committed change, a failure is reported as what it is: the change stands.
  auto after_commit = [&](std::string_view what) {
    ctx.err << "warning: the change was saved in the database, but its report failed: " << one_line(what) << '\n';
    return static_cast<int>(ExitCode::ok);
  };
  try {
    // CLI11 reads `--db=` as `--db` alone and takes the next word for its value, so that
    // `--db= stock list` would look for the command `list`: say what is wrong instead.
    // (Past `--` every word is a positional, a file name such as `-hum.csv` included.)
    for (int i = 1; i < argc && std::string_view(argv[i]) != "--"; ++i) {
      const std::string_view arg = argv[i];
      if (arg.size() > 3 && arg.starts_with("--") && arg.ends_with('=') && arg.find('=') == arg.size() - 1)
        throw CLI::ValidationError(std::string(arg.substr(0, arg.size() - 1)),
                                   "nothing after '=': give a value, or leave the option out");
      // CLI11 would take `--version=1` or `--help=yes` as the flag itself and print text even
      // under --json: these flags take no value at all.
      for (const std::string_view flag : {"--help", "--version"})
        if (arg.starts_with(flag) && arg.size() > flag.size() && arg[flag.size()] == '=')
          throw CLI::ValidationError(std::string(flag), "takes no value: write it alone");
      // Nor `-h1`, `-h=1` or `-hx`: CLI11 reads the flag and prints the help, whatever follows.
      if (arg.size() > 2 && arg.starts_with("-h"))
        throw CLI::ValidationError(
            "-h", "takes no value and joins no other flag: write it alone, not '" + std::string(arg) + "'");
    }
    app.parse(argc, argv);
    return 0;
  } catch (const CLI::CallForHelp& e) {
    return app.exit(e, ctx.out, ctx.err);
  } catch (const CLI::CallForAllHelp& e) {
    return app.exit(e, ctx.out, ctx.err);
  } catch (const CLI::CallForVersion& e) {
    return app.exit(e, ctx.out, ctx.err);
  } catch (const CLI::ParseError& e) {
    ctx.err << "error: " << one_line(parse_error_text(app, e)) << '\n';
    return static_cast<int>(ExitCode::bad_input);
  } catch (const store::CsvError& e) {
    if (ctx.database_changed) return after_commit(e.what());
    ctx.err << "error: " << one_line(e.what()) << '\n';
    for (const auto& problem : e.problems()) ctx.err << one_line(problem) << '\n';
    return static_cast<int>(e.code());
  } catch (const Error& e) {
    if (ctx.database_changed) return after_commit(e.what());
    ctx.err << "error: " << one_line(e.what()) << '\n';
    return static_cast<int>(e.code());
  } catch (const std::bad_alloc&) {
    if (ctx.database_changed) return after_commit("memory ran out");
    ctx.err << "error: out of memory\n";
    return static_cast<int>(ExitCode::bad_input);
  } catch (const std::exception& e) {
    if (ctx.database_changed) return after_commit(std::string("an internal error happened: ") + e.what());
    // A bug, not the user's fault; still exit 1 so that scripts see a plain failure.
    ctx.err << "error: internal: " << one_line(e.what()) << " (please report this)\n";
    return static_cast<int>(ExitCode::bad_input);
  }
}

/// Flushes standard output and says so when anything written to it was lost.
int finish_output(Context& ctx, int status) {
  ctx.out.flush();
  if (!ctx.out.fail()) return status;
  const auto* source = dynamic_cast<const WriteErrorSource*>(ctx.out.rdbuf());
  const std::string what = stdout_failure(source != nullptr ? source->write_error() : 0);
  if (ctx.database_changed && status == 0) {
    ctx.err << "warning: the change was saved in the database, but its report was lost: " << what << '\n';
    return status;
  }
  ctx.err << "error: " << what << '\n';
  return status == 0 ? static_cast<int>(ExitCode::bad_input) : status;
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
      ->type_name("FILE")
      ->check([](const std::string& path) -> std::string {
        if (path.empty()) return "'' is no file name: give the database file, or leave --db out for the default one";
        return {};
      });
  app.add_flag("--json", ctx.global.json, "Print one JSON document (schema 1, plain SI numbers) instead of tables");
  app.set_version_flag("--version", version_text, "Print the version and stop");
  app.fallthrough();  // `shelfstage stock list --json` hands --json to the root
  app.require_subcommand(1);
  app.footer(
      "Exit status: 0 done (also when a change was saved and only printing it failed: a\n"
      "warning says so); 1 bad input or usage, or output that could not be written; 2 no\n"
      "feasible design or not enough stock; 3 database problem (locked, damaged, read-only,\n"
      "or written by a newer shelfstage). On 1, 2 and 3 the database is unchanged.\n"
      "Run `shelfstage COMMAND --help` for each command.");
}

int run_app(CLI::App& app, Context& ctx, int argc, const char* const* argv) {
  detail::note_global_options(app, true);
  return detail::finish_output(ctx, detail::run_command(app, ctx, argc, argv));
}

}  // namespace shelfstage::cli
