// Test support: runs a netlist through ngspice in batch mode and reads back its printed values.
#pragma once
#include <map>
#include <optional>
#include <string>
#include <vector>

namespace shelfstage::test {

/// What one `ngspice -b` run printed.
struct SpiceRun {
  std::string netlist;  ///< the input, kept for failure messages
  std::string output;   ///< stdout and stderr together
  int exit_status = 0;
  /// Every `name = value` line (print and meas output), names lower-cased; a meas line's
  /// trailing `at= x` is stored as "name.at".
  std::map<std::string, double> values;
  /// Fourier tables (`fourier` command), by signal name lower-cased ("v(out)"): the
  /// magnitude of each harmonic, index 0 the DC term.
  std::map<std::string, std::vector<double>> fourier;

  /// The value of a name; throws std::runtime_error (quoting the output) when absent.
  double get(const std::string& name) const;
  std::optional<double> find(const std::string& name) const;
  /// Lines of the output that report an error ("Error", "error:", "unknown", "could not").
  std::vector<std::string> error_lines() const;
};

/// The ngspice program the build found (compile definition SHELFSTAGE_NGSPICE); throws
/// std::runtime_error when the build found none: tests that need ngspice then fail, as CI
/// installs it.
std::string ngspice_program();

/// Writes the netlist to a scratch file, runs `ngspice -b` on it and parses what it printed.
/// Throws std::runtime_error if the program cannot be started.
SpiceRun run_ngspice(const std::string& netlist);

/// Runs several netlists through one ngspice process and returns one SpiceRun per netlist, in
/// order, each with the part of the output printed for it. A driver sources each netlist in
/// turn: each one's .control block runs on its own circuit, with its own plots and vectors,
/// and `option` settings do not carry over to the next. The plots' names number on across
/// the batch (the second netlist's first AC sweep is not "ac1"): a netlist that names a plot
/// takes the name from `$curplot` (support/spice_loop.hpp does). Starting ngspice costs about as much as
/// a small circuit's analyses, so the checks that run thousands of builds batch them.
/// Throws std::runtime_error if the program cannot be started or the output is not split as
/// expected (ngspice stopped part way).
std::vector<SpiceRun> run_ngspice_batch(const std::vector<std::string>& netlists);

/// Runs many netlists through run_ngspice_batch, `per_process` to a process, two processes at
/// a time (CI's two cores), and returns their runs in order.
std::vector<SpiceRun> run_ngspice_batches(const std::vector<std::string>& netlists, std::size_t per_process = 16);

/// Parses `name = value` lines (exposed for tests of the parser itself).
std::map<std::string, double> parse_values(const std::string& text);
/// Parses the tables the `fourier` command prints.
std::map<std::string, std::vector<double>> parse_fourier(const std::string& text);

}  // namespace shelfstage::test
