// Benchmark: the time one candidate costs the fast closed-form evaluator (each topology,
// Detail::core with the distortion off, as the search's gain screens and corner estimates
// call it, Detail::core and Detail::full), the exact MNA evaluation, and ngspice solving the same
// stage's operating point (one process running `op` N times in a .control loop that alters a
// resistor each time; whole process timed and divided, with and without its start-up).
// Usage: bench_evaluator [path-to-ngspice]   (default: ngspice on the PATH)
#include <unistd.h>

#include <array>
#include <chrono>
#include <cstdio>
#include <filesystem>
#include <fmt/format.h>
#include <fstream>
#include <string>
#include <vector>

#include "shelfstage/circuit/spice.hpp"
#include "shelfstage/report/table.hpp"
#include "shelfstage/stages/exact.hpp"
#include "shelfstage/stages/topology.hpp"

using namespace shelfstage;
using Clock = std::chrono::steady_clock;

namespace {

// Keeps results observable so the timed calls are not optimised away.
volatile double g_sink = 0;

struct Bench {
  const stages::Topology* topology;
  stages::Values values;
  stages::Transistor q;
  stages::Conditions c;
};

stages::Transistor jfet() {
  stages::Transistor q;
  q.kind = devices::DeviceKind::njfet;
  q.jfet.kind = q.kind;
  q.jfet.idss_a = 4e-3;
  q.jfet.vp_abs_v = 2.0;
  q.jfet.lambda_per_v = 0.01;
  q.jfet.cgs_f = 4.5e-12;
  q.jfet.cgd_f = 1.5e-12;
  return q;
}

stages::Transistor bjt() {
  stages::Transistor q;
  q.kind = devices::DeviceKind::npn;
  devices::BjtParams params;
  params.is_a = 6.7e-15;
  params.vaf_v = 75;
  params.cje_f = 4.5e-12;
  params.cjc_f = 3.6e-12;
  q.bjt = devices::bjt_at(params, q.kind, 200, devices::kNominalCelsius);
  return q;
}

// A working stage of each topology (12 V, 10 kOhm load, 600 Ohm source), values by role name.
Bench make(std::string_view name, std::initializer_list<std::pair<std::string_view, double>> roles) {
  Bench b;
  b.topology = stages::find_topology(name);
  if (!b.topology) throw std::runtime_error(fmt::format("no topology {}", name));
  for (const auto& [role, value] : roles) {
    const std::size_t i = b.topology->role_index(role);
    if (i >= b.topology->roles().size()) throw std::runtime_error(fmt::format("{} has no role {}", name, role));
    b.values[i] = value;
  }
  b.q = b.topology->accepts(devices::DeviceKind::njfet) ? jfet() : bjt();
  b.c.source_ohm = 600;
  b.c.hd2_peak_v = 0.5;
  return b;
}

std::vector<Bench> benches() {
  return {
      make("jfet-cs-self",
           {{"RG", 1e6}, {"RD", 4.7e3}, {"RS1", 470}, {"RS2", 560}, {"CS", 100e-6}, {"CIN", 100e-9}, {"COUT", 10e-6}}),
      make("jfet-cs-divider", {{"R1", 3.3e6},
                               {"R2", 1e6},
                               {"RD", 4.7e3},
                               {"RS1", 1.5e3},
                               {"RS2", 2.4e3},
                               {"CS", 100e-6},
                               {"CIN", 100e-9},
                               {"COUT", 10e-6}}),
      make("jfet-follower", {{"RG", 1e6}, {"RS", 1e3}, {"CIN", 100e-9}, {"COUT", 10e-6}}),
      make("bjt-ce-divider", {{"R1", 47e3},
                              {"R2", 10e3},
                              {"RC", 4.7e3},
                              {"RE1", 220},
                              {"RE2", 820},
                              {"CE", 100e-6},
                              {"CIN", 10e-6},
                              {"COUT", 10e-6}}),
      make("bjt-follower", {{"R1", 22e3}, {"R2", 27e3}, {"RE", 2.2e3}, {"CIN", 10e-6}, {"COUT", 10e-6}}),
  };
}

// Nanoseconds per call of f, over n calls.
template <class F>
double ns_per_call(std::size_t n, F f) {
  const auto t0 = Clock::now();
  for (std::size_t i = 0; i < n; ++i) f(i);
  const auto t1 = Clock::now();
  return std::chrono::duration<double, std::nano>(t1 - t0).count() / static_cast<double>(n);
}

// Runs ngspice -b on a netlist that solves the operating point `ops` times, altering the first
// resistor of the stage by one ohm more each time. Returns the wall time in seconds, or a
// negative value when ngspice did not print the final operating point.
double ngspice_seconds(const std::string& program, const Bench& b, int ops) {
  const circuit::Circuit net = b.topology->netlist(b.values, b.q, b.c);
  const circuit::Element* r = nullptr;
  for (const auto& role : b.topology->roles()) {
    if (role.kind == 'R' && (r = net.find(std::string(role.designator)))) break;
  }
  if (!r) return -1;
  const std::string rname = circuit::spice_name(r->c);
  circuit::SpiceOptions o;
  o.analyses = {".control",
                "let k = 0",
                fmt::format("while k < {}", ops),
                fmt::format("  let rv = {:.10g} + k", r->c.value),
                fmt::format("  alter {} = $&rv", rname),
                "  op",
                "  let k = k + 1",
                "end",
                "op",
                "print v(out) i(vdd)",
                ".endc"};
  const auto path = std::filesystem::temp_directory_path() / fmt::format("shelfstage-bench-{}.cir", ::getpid());
  std::ofstream(path) << circuit::to_spice(net, o);
  const std::string cmd = fmt::format("'{}' -b '{}' 2>&1", program, path.string());
  const auto t0 = Clock::now();
  FILE* pipe = ::popen(cmd.c_str(), "r");
  if (!pipe) return -1;
  std::string out;
  std::array<char, 4096> buf{};
  std::size_t n = 0;
  while ((n = std::fread(buf.data(), 1, buf.size(), pipe)) > 0) out.append(buf.data(), n);
  ::pclose(pipe);
  const auto t1 = Clock::now();
  std::filesystem::remove(path);
  if (out.find("i(vdd) =") == std::string::npos) return -1;
  return std::chrono::duration<double>(t1 - t0).count();
}

}  // namespace

int main(int argc, char** argv) {
  const std::string ngspice = argc > 1 ? argv[1] : "ngspice";
  constexpr std::size_t kCore = 200000, kFull = 20000, kExactCore = 200, kExactFull = 50;
  constexpr int kOps = 1000;
  report::TextTable table({{"topology"},
                           {"search ns", report::Align::right},
                           {"fast core ns", report::Align::right},
                           {"fast full ns", report::Align::right},
                           {"exact core us", report::Align::right},
                           {"exact full us", report::Align::right},
                           {"ngspice op us", report::Align::right},
                           {"op w/o start us", report::Align::right},
                           {"op / fast core", report::Align::right}});
  for (const Bench& b : benches()) {
    const auto& t = *b.topology;
    const stages::Performance p = t.evaluate(b.values, b.q, b.c, stages::Detail::full);
    if (!p.active) {
      std::fprintf(stderr, "%s: the benchmark stage is not active: %s\n", std::string(t.name()).c_str(),
                   p.problem.c_str());
      return 1;
    }
    // Vary the load a little on every call, as a search varies its candidates.
    stages::Conditions c = b.c;
    stages::Conditions gain_only = b.c;
    gain_only.distortion = false;
    const double search = ns_per_call(kCore, [&](std::size_t i) {
      gain_only.load_ohm = 10e3 + static_cast<double>(i % 64);
      g_sink = g_sink + t.evaluate(b.values, b.q, gain_only, stages::Detail::core).gain;
    });
    const double core = ns_per_call(kCore, [&](std::size_t i) {
      c.load_ohm = 10e3 + static_cast<double>(i % 64);
      g_sink = g_sink + t.evaluate(b.values, b.q, c, stages::Detail::core).gain;
    });
    const double full = ns_per_call(kFull, [&](std::size_t i) {
      c.load_ohm = 10e3 + static_cast<double>(i % 64);
      g_sink = g_sink + t.evaluate(b.values, b.q, c, stages::Detail::full).f_low_hz;
    });
    const double exact_core = ns_per_call(kExactCore, [&](std::size_t i) {
      c.load_ohm = 10e3 + static_cast<double>(i % 64);
      g_sink = g_sink + stages::evaluate_exact(t, b.values, b.q, c, stages::Detail::core).gain;
    });
    const double exact_full = ns_per_call(kExactFull, [&](std::size_t i) {
      c.load_ohm = 10e3 + static_cast<double>(i % 64);
      g_sink = g_sink + stages::evaluate_exact(t, b.values, b.q, c, stages::Detail::full).hd2;
    });
    const double with_ops = ngspice_seconds(ngspice, b, kOps);
    const double start_only = ngspice_seconds(ngspice, b, 0);
    std::string op_us = "n/a", op_net = "n/a", ratio = "n/a";
    if (with_ops > 0 && start_only > 0) {
      const double per_op = with_ops / kOps;
      op_us = fmt::format("{:.1f}", per_op * 1e6);
      op_net = fmt::format("{:.1f}", (with_ops - start_only) / kOps * 1e6);
      ratio = fmt::format("{:.0f}", per_op * 1e9 / core);
    }
    table.add_row({std::string(t.name()), fmt::format("{:.0f}", search), fmt::format("{:.0f}", core),
                   fmt::format("{:.0f}", full), fmt::format("{:.1f}", exact_core / 1e3),
                   fmt::format("{:.1f}", exact_full / 1e3), op_us, op_net, ratio});
  }
  fmt::print(
      "Time per candidate: fast evaluator ({} calls each without and with the distortion, {} in full), exact MNA "
      "evaluation ({} and {}),\n"
      "ngspice operating point ({} `op` in one ngspice -b process; 'w/o start' subtracts a run with none)\n\n",
      kCore, kFull, kExactCore, kExactFull, kOps);
  fmt::print("{}", table.render());
  return 0;
}
