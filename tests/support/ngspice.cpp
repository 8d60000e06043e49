// Runs ngspice in batch mode on a scratch netlist and parses the values it prints.
#include "ngspice.hpp"

#include "scratch.hpp"

#include <algorithm>
#include <array>
#include <cctype>
#include <cstdio>
#include <filesystem>
#include <fstream>
#include <future>
#include <random>
#include <regex>
#include <sstream>
#include <stdexcept>
#include <utility>
#include <sys/wait.h>

namespace shelfstage::test {

namespace {

std::string lower(std::string s) {
  for (char& c : s) c = static_cast<char>(std::tolower(static_cast<unsigned char>(c)));
  return s;
}

std::string quote(const std::string& s) {
  std::string q = "'";
  for (char c : s) q += c == '\'' ? std::string("'\\''") : std::string(1, c);
  return q + "'";
}

}  // namespace

std::string ngspice_program() {
  const std::string p = SHELFSTAGE_NGSPICE;
  if (p.empty() || p.ends_with("NOTFOUND"))
    throw std::runtime_error(
        "ngspice was not found when the build was configured (SHELFSTAGE_NGSPICE is empty): "
        "install the Debian package 'ngspice' and configure again");
  return p;
}

std::map<std::string, double> parse_values(const std::string& text) {
  // "name = 1.23e-04" with an optional "at= 5.6e+03" after it (meas max/min).
  static const std::regex line_re(
      R"(^\s*([A-Za-z_][A-Za-z0-9_().,#@\[\]:+-]*)\s*=\s*([-+]?[0-9]*\.?[0-9]+(?:[eE][-+]?[0-9]+)?)(?:\s+at\s*=\s*([-+]?[0-9]*\.?[0-9]+(?:[eE][-+]?[0-9]+)?))?\s*$)");
  std::map<std::string, double> out;
  std::istringstream in(text);
  std::string line;
  std::smatch m;
  while (std::getline(in, line)) {
    if (!line.empty() && line.back() == '\r') line.pop_back();
    if (!std::regex_match(line, m, line_re)) continue;
    const std::string name = lower(m[1].str());
    out[name] = std::stod(m[2].str());
    if (m[3].matched) out[name + ".at"] = std::stod(m[3].str());
  }
  return out;
}

std::map<std::string, std::vector<double>> parse_fourier(const std::string& text) {
  static const std::regex head_re(R"(^\s*Fourier analysis for\s+(.+?):\s*$)");
  std::map<std::string, std::vector<double>> out;
  std::istringstream in(text);
  std::string line;
  std::smatch m;
  while (std::getline(in, line)) {
    if (!std::regex_match(line, m, head_re)) continue;
    const std::string name = lower(m[1].str());
    // Skip to the dashed rule under the column titles, then read "index freq mag phase ...".
    while (std::getline(in, line) && line.find("--------") == std::string::npos) {
    }
    std::vector<double> mags;
    while (std::getline(in, line)) {
      std::istringstream row(line);
      int index = 0;
      double freq = 0, mag = 0;
      if (!(row >> index >> freq >> mag)) break;
      if (index != static_cast<int>(mags.size())) break;
      mags.push_back(mag);
    }
    out[name] = mags;
  }
  return out;
}

double SpiceRun::get(const std::string& name) const {
  if (auto v = find(name)) return *v;
  throw std::runtime_error("ngspice printed no value for '" + name + "'; its output:\n" + output + "\nthe netlist:\n" +
                           netlist);
}

std::optional<double> SpiceRun::find(const std::string& name) const {
  const auto it = values.find(lower(name));
  if (it == values.end()) return std::nullopt;
  return it->second;
}

std::vector<std::string> SpiceRun::error_lines() const {
  std::vector<std::string> bad;
  std::istringstream in(output);
  std::string line;
  while (std::getline(in, line)) {
    const std::string l = lower(line);
    if (l.find("error") != std::string::npos || l.find("unknown") != std::string::npos ||
        l.find("could not") != std::string::npos || l.find("warning") != std::string::npos ||
        l.find("failed") != std::string::npos)
      bad.push_back(line);
  }
  return bad;
}

namespace {

// Runs ngspice -b on `file` inside `dir` (so nothing ngspice might write lands elsewhere):
// its stdout and stderr together, and its exit status.
std::pair<std::string, int> run_in(const std::filesystem::path& dir, const std::string& file) {
  const std::string program = ngspice_program();
  const std::string cmd = "cd " + quote(dir.string()) + " && " + quote(program) + " -b " + quote(file) + " 2>&1";
  FILE* pipe = ::popen(cmd.c_str(), "r");
  if (!pipe) throw std::runtime_error("cannot start " + program);
  std::string output;
  std::array<char, 4096> buf{};
  std::size_t n = 0;
  while ((n = std::fread(buf.data(), 1, buf.size(), pipe)) > 0) output.append(buf.data(), n);
  const int status = ::pclose(pipe);
  return {output, WIFEXITED(status) ? WEXITSTATUS(status) : -1};
}

void write_file(const std::filesystem::path& file, const std::string& text) {
  std::ofstream f(file);
  f << text;
  if (!f) throw std::runtime_error("cannot write " + file.string());
}

SpiceRun parsed(const std::string& netlist, std::string output, int status) {
  SpiceRun run;
  run.netlist = netlist;
  run.output = std::move(output);
  run.exit_status = status;
  run.values = parse_values(run.output);
  run.fourier = parse_fourier(run.output);
  return run;
}

}  // namespace

SpiceRun run_ngspice(const std::string& netlist) {
  Scratch dir("shelfstage-ngspice-");
  write_file(dir.path / "stage.cir", netlist);
  auto [output, status] = run_in(dir.path, "stage.cir");
  return parsed(netlist, std::move(output), status);
}

std::vector<SpiceRun> run_ngspice_batch(const std::vector<std::string>& netlists) {
  if (netlists.empty()) return {};
  Scratch dir("shelfstage-ngspice-");
  // A marker line before each netlist's output and one after the last.
  const std::string mark = "@@shelfstage-batch-";
  std::string driver = "* shelfstage batch driver\n.control\n";
  for (std::size_t i = 0; i < netlists.size(); ++i) {
    const std::string name = "c" + std::to_string(i) + ".cir";
    write_file(dir.path / name, netlists[i]);
    driver += "echo " + mark + std::to_string(i) + "\nsource " + name + "\n";
  }
  driver += "echo " + mark + "end\n.endc\n.end\n";
  write_file(dir.path / "driver.cir", driver);
  const auto [output, status] = run_in(dir.path, "driver.cir");
  std::vector<SpiceRun> runs;
  std::size_t at = output.find(mark + "0\n");
  for (std::size_t i = 0; i < netlists.size(); ++i) {
    const std::string next = mark + (i + 1 < netlists.size() ? std::to_string(i + 1) : std::string("end")) + "\n";
    const std::size_t end = at == std::string::npos ? at : output.find(next, at);
    if (end == std::string::npos)
      throw std::runtime_error("ngspice stopped before netlist " + std::to_string(i + 1) + " of " +
                               std::to_string(netlists.size()) + " in a batch; its output:\n" + output);
    const std::size_t from = output.find('\n', at) + 1;
    runs.push_back(parsed(netlists[i], output.substr(from, end - from), status));
    at = end;
  }
  return runs;
}

std::vector<SpiceRun> run_ngspice_batches(const std::vector<std::string>& netlists, std::size_t per_process) {
  per_process = std::max<std::size_t>(1, per_process);
  std::vector<std::vector<std::string>> batches;
  for (std::size_t i = 0; i < netlists.size(); i += per_process)
    batches.emplace_back(netlists.begin() + static_cast<std::ptrdiff_t>(i),
                         netlists.begin() + static_cast<std::ptrdiff_t>(std::min(netlists.size(), i + per_process)));
  std::vector<std::vector<SpiceRun>> done(batches.size());
  auto every_other = [&](std::size_t first) {
    for (std::size_t k = first; k < batches.size(); k += 2) done[k] = run_ngspice_batch(batches[k]);
  };
  auto other = std::async(std::launch::async, every_other, 1);
  every_other(0);
  other.get();
  std::vector<SpiceRun> out;
  for (auto& d : done)
    for (auto& r : d) out.push_back(std::move(r));
  return out;
}

}  // namespace shelfstage::test
