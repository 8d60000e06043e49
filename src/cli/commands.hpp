// The shelfstage commands: the context they share and one setup function per command.
//
// Each command lives in its own file, cmd_<name>.cpp: a small options struct, a
// setup_<name>(CLI::App& parent, Context&) that adds the subcommand and binds the options,
// and a run_<name>(const Options&, Context&) that calls the library and formats the result.
// Adding a command is one new file, its setup function declared below and called from
// setup_commands() (app.cpp). Commands never print errors themselves: they throw shelfstage::Error and run_app() turns
// it into `error: ...` and the exit status.
#pragma once
#include <CLI/CLI.hpp>
#include <nlohmann/json.hpp>

#include <filesystem>
#include <iosfwd>
#include <string>

#include "shelfstage/store/database.hpp"

namespace shelfstage::cli {

/// Options of the root command, valid before or after the subcommand.
struct GlobalOptions {
  std::string db;     ///< --db FILE; empty when not given
  bool json = false;  ///< --json: one JSON document on stdout instead of tables
};

/// What every command gets: the global options and the streams to use (std::cout,
/// std::cerr, std::cin in the program; string streams in tests).
struct Context {
  Context(std::ostream& out_stream, std::ostream& err_stream, std::istream& in_stream)
      : out(out_stream), err(err_stream), in(in_stream) {}

  GlobalOptions global;
  std::ostream& out;
  std::ostream& err;
  std::istream& in;

  /// True once a change to the stock database has been committed during this command
  /// (set by the databases that open_database() and create_database() return). From then on
  /// run_app reports anything that goes wrong as a warning with exit status 0: the change is
  /// made and a retry would make it twice.
  bool database_changed = false;

  /// --db, else store::default_database_path() ($SHELFSTAGE_DB, else the XDG data folder).
  std::filesystem::path database_path() const;
  /// Opens the database at database_path(). A missing file is an InputError that
  /// suggests `shelfstage init`.
  store::Database open_database();
  /// Creates a new database at path (store::Database::create), watched as open_database() is.
  store::Database create_database(const std::filesystem::path& path);
};

/// Sets up the root command: description, --db, --json, --version (printing
/// `version_text`), subcommand fall-through so global options work after a subcommand.
void setup_root(CLI::App& app, Context& ctx, const std::string& version_text);

/// Parses the command line and runs the chosen command. Returns the exit status:
///  0 success, and for --help and --version (printed on ctx.out); also when a change to the
///    database was committed and something failed afterwards (printing the result, writing
///    standard output): one `warning: ...` line on ctx.err says what;
///  1 a usage error from the parser, or an InputError;
///  2 an InfeasibleError; 3 a DatabaseError (shelfstage::Error::code());
///  1 also for anything unexpected, printed as `error: internal: ...`.
/// Every failure prints one `error: ...` line on ctx.err; a CsvError adds one line per bad row.
/// Standard output is flushed and checked at the end: a write that failed is an error
/// ("error: writing standard output: No space left on device", exit 1) unless the database
/// was changed (a warning, exit 0).
int run_app(CLI::App& app, Context& ctx, int argc, const char* const* argv);

// One per command file.
/// Every command, in the order `--help` lists them (each one's setup_NAME below).
void setup_commands(CLI::App& app, Context& ctx);

void setup_init(CLI::App& parent, Context& ctx);
void setup_stock(CLI::App& parent, Context& ctx);
void setup_devices(CLI::App& parent, Context& ctx);
void setup_check(CLI::App& parent, Context& ctx);
void setup_demo(CLI::App& parent, Context& ctx);
void setup_design(CLI::App& parent, Context& ctx);
void setup_show(CLI::App& parent, Context& ctx);
void setup_analyze(CLI::App& parent, Context& ctx);
void setup_pick(CLI::App& parent, Context& ctx);
void setup_reserve(CLI::App& parent, Context& ctx);
void setup_release(CLI::App& parent, Context& ctx);
void setup_build(CLI::App& parent, Context& ctx);
void setup_builds(CLI::App& parent, Context& ctx);
void setup_ledger(CLI::App& parent, Context& ctx);
void setup_shop(CLI::App& parent, Context& ctx);
void setup_report(CLI::App& parent, Context& ctx);
// Subcommands of `devices` with a file of their own (cmd_devices_<name>.cpp), added by setup_devices.
void setup_devices_fit(CLI::App& devices_cmd, Context& ctx);
void setup_devices_measure(CLI::App& devices_cmd, Context& ctx);

/// Writes a JSON document on ctx.out (indented two spaces, then a newline). Text that is not
/// UTF-8 (from a database written before text was checked) is escaped as \xNN first, so the
/// document is always valid JSON.
void print_json(Context& ctx, const nlohmann::ordered_json& doc);

}  // namespace shelfstage::cli
