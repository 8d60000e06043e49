// Benchmark: whole `design` searches (all five topologies, every device, spread ranking, top
// 10 with the Monte Carlo) over a table of varied requests on generated stocks of several
// sizes and value distributions. Each case runs in a child process of its own, so its peak
// memory (max RSS) is its own. Prints one row per case: proposals, evaluations, seconds (the
// best of the runs), the processor seconds of all its threads (best of the runs: on a machine
// that is busy with other work, the steadier figure), peak memory, the number of designs listed
// and their scores summed (a change that makes the search faster should not make this worse),
// and the top design. With `--lists 1`, each row is followed by the designs listed, by id and
// score, so that two builds' lists can be compared line by line (a change meant only to make the
// search faster must leave them as they were).
//
// Usage: bench_design [--runs N] [--sizes 250,1000,...] [--stocks eseries,random,hobby]
//                     [--requests name,...] [--combine 3] [--stages 1] [--lists 1]
#include <sys/resource.h>
#include <sys/wait.h>
#include <unistd.h>

#include <algorithm>
#include <chrono>
#include <cmath>
#include <cstdio>
#include <cstring>
#include <random>
#include <sstream>
#include <string>
#include <vector>

#include <fmt/format.h>

#include "shelfstage/synth/design.hpp"
#include "shelfstage/units/eseries.hpp"

using namespace shelfstage;

namespace {

// --- Generated stocks ---------------------------------------------------------------------

class StockMaker {
 public:
  explicit StockMaker(unsigned seed) : rng_(seed) {}
  synth::Inventory inv;

  void add(store::PartKind k, double v, units::Tolerance tol, std::optional<double> power, std::optional<double> volts,
           const char* diel, int qty) {
    store::Part p;
    p.id = id_++;
    p.kind = k;
    p.value = v;
    p.tol = tol;
    p.power_w = power;
    p.volts = volts;
    p.dielectric = diel;
    p.qty = qty;
    p.bin = "B" + std::to_string(bin_++ / 20);
    inv.parts.push_back(p);
  }
  int qty(int lo, int hi) { return std::uniform_int_distribution<int>(lo, hi)(rng_); }
  double uniform() { return std::uniform_real_distribution<double>(0, 1)(rng_); }

  // Capacitors of a working drawer: E6 film 1n..1u, electrolytics 1u..1000u at three ratings.
  void capacitors() {
    for (double dec = 1e-9; dec <= 1e-7 * 1.01; dec *= 10)
      for (double m : units::eseries(6))
        add(store::PartKind::capacitor, m * dec, {0.1, 0.1}, {}, 63, "film", qty(2, 30));
    for (double dec = 1e-6; dec <= 1e-4 * 1.01; dec *= 10)
      for (double m : units::eseries(6))
        for (double v : {16.0, 35.0, 63.0})
          add(store::PartKind::capacitor, m * dec, {0.2, 0.2}, {}, v, "electrolytic", qty(2, 20));
    add(store::PartKind::capacitor, 1e-3, {0.2, 0.2}, {}, 35, "electrolytic", qty(1, 5));
  }

  void devices() {
    auto jfet = [&](const char* name, devices::DeviceKind k, double i0, double i1, double v0, double v1) {
      devices::DeviceRecord d;
      d.name = name;
      d.kind = k;
      d.jfet.idss_a = {i0, i1, {}};
      d.jfet.vp_v = {v0, v1, {}};
      d.jfet.lambda_per_v = 0.01;
      d.jfet.cgs_f = 5e-12;
      d.jfet.cgd_f = 2e-12;
      inv.devices.push_back(d);
    };
    auto bjt = [&](const char* name, devices::DeviceKind k, double h0, double h1, double vceo) {
      devices::DeviceRecord d;
      d.name = name;
      d.kind = k;
      d.bjt.hfe = {h0, h1, {}};
      d.bjt.is_a = 1e-14;
      d.bjt.vaf_v = 80;
      d.bjt.cje_f = 6e-12;
      d.bjt.cjc_f = 3e-12;
      d.ratings.v_max_v = vceo;
      d.ratings.v_rev_max_v = 6;
      d.ratings.p_max_w = 0.5;
      inv.devices.push_back(d);
    };
    jfet("BJ-1", devices::DeviceKind::njfet, 1e-3, 5e-3, -3, -0.5);
    jfet("BJ-2", devices::DeviceKind::njfet, 2e-3, 20e-3, -6, -1);
    jfet("BJ-3", devices::DeviceKind::pjfet, 2e-3, 15e-3, 1, 5);
    bjt("BQ-1", devices::DeviceKind::npn, 110, 450, 45);
    bjt("BQ-2", devices::DeviceKind::npn, 420, 800, 30);
    bjt("BQ-3", devices::DeviceKind::pnp, 110, 450, 45);
    bjt("BQ-4", devices::DeviceKind::npn, 60, 250, 120);
    // Two op-amp types, as a drawer holds them: a dual bipolar-input one for 10..36 V and a
    // dual rail-to-rail CMOS one for low supplies (figures of the usual order, invented).
    auto opamp = [&](const char* name, double vs0, double vs1, double gbw, double slew, double drop, double cm,
                     double vos, double ib) {
      devices::DeviceRecord d;
      d.name = name;
      d.kind = devices::DeviceKind::opamp;
      devices::OpampParams& o = d.opamp;
      o.channels = 2;
      o.vs_min_v = vs0;
      o.vs_max_v = vs1;
      o.gbw_hz.typ = gbw;
      o.slew_v_per_s.typ = slew;
      o.aol.typ = 1e5;
      o.out_drop_hi_v = o.out_drop_lo_v = drop;
      o.out_drop_ohm = 80;
      o.iout_max_a = 20e-3;
      o.cm_drop_hi_v = o.cm_drop_lo_v = cm;
      o.vos_max_v = vos;
      o.ib_max_a = ib;
      o.iq_a = 1e-3;
      d.ratings.v_max_v = vs1 * 1.1;
      inv.devices.push_back(d);
    };
    opamp("BU-1", 10, 36, 1e6, 0.5e6, 1.5, 2, 5e-3, 400e-9);
    opamp("BU-2", 2.7, 5.5, 1e6, 0.6e6, 0.02, -0.1, 6e-3, 10e-12);
    for (const auto& d : inv.devices) {
      store::Part p;
      p.id = id_++;
      p.kind = store::part_kind(d.kind);
      p.device = d.name;
      p.qty = 25;
      p.bin = "T1";
      inv.parts.push_back(p);
    }
  }

 private:
  std::mt19937 rng_;
  std::int64_t id_ = 1;
  int bin_ = 0;
};

// Resistor lines until the stock holds `lines` lines, by distribution (one seed per
// distribution, whatever the size: a stock is the first lines of every larger one of its
// distribution, so that a row's change with the size is the size's and not another draw's):
//  eseries: E24 5 % then E96 1 % values over six decades from 10 ohm, round-robin by decade,
//           then the same values again in further bins;
//  random:  log-uniform 1 % values 10 ohm..10M (no two alike), a few pieces each;
//  hobby:   E12 5 % values 10 ohm..10M with gaps, in small bags, many duplicated across bins.
synth::Inventory make_stock(const std::string& dist, std::size_t lines) {
  StockMaker m(static_cast<unsigned>(7 + 1000 * dist.size()));
  m.capacitors();
  m.devices();
  const auto& e96 = units::eseries(96);
  const auto& e24 = units::eseries(24);
  const auto& e12 = units::eseries(12);
  std::size_t k = 0;
  while (m.inv.parts.size() < lines) {
    if (dist == "eseries") {
      // Round-robin over the six decades, so that a small stock still spans them: E24 5 %
      // first, then E96 1 %, then the same again in further bins.
      const std::size_t round = k / (6 * (24 + 96));
      const std::size_t i = k % (6 * (24 + 96));
      const double dec = std::pow(10.0, 1 + static_cast<double>(i % 6));
      const std::size_t j = i / 6;
      if (j < 24)
        m.add(store::PartKind::resistor, e24[j] * dec, {0.05, 0.05}, round % 2 ? 0.6 : 0.25, {}, "", m.qty(0, 40));
      else
        m.add(store::PartKind::resistor, e96[j - 24] * dec, {0.01, 0.01}, 0.25, {}, "", m.qty(0, 40));
    } else if (dist == "random") {
      const double v = 10.0 * std::pow(10.0, 6.0 * m.uniform());
      m.add(store::PartKind::resistor, std::round(v * 1000) / 1000, {0.01, 0.01}, 0.25, {}, "", m.qty(1, 10));
    } else {
      const double dec = std::pow(10.0, 1 + static_cast<double>(m.qty(0, 5)));
      const double v = e12[static_cast<std::size_t>(m.qty(0, 11))] * dec;
      if (m.uniform() < 0.3) {
        ++k;
        continue;  // a gap in the drawer
      }
      m.add(store::PartKind::resistor, v, {0.05, 0.05}, 0.25, {}, "", m.qty(1, 8));
    }
    ++k;
  }
  return std::move(m.inv);
}

// --- Requests -----------------------------------------------------------------------------

struct Request {
  const char* name;
  const char* text;  // as the command line would say it
  synth::Spec spec;
};

std::vector<Request> requests() {
  // One row per request: what the command line would say, then the figures (0: not asked).
  struct Row {
    const char* name;
    const char* text;
    double gain, load, supply_lo, supply_hi, zin;
    double source = 0, band_lo = 0, band_hi = 0, swing = 0, max_current = 0;
  };
  static const Row rows[] = {
      {"plain", "gain 8 into 10k, 12 V, Zin 100k (no band, no swing)", 8, 10e3, 12, 12, 100e3},
      {"audio", "gain 10 into 10k, 12 V, Zin 100k, 1k source, 20..20k, 2 Vpp", 10, 10e3, 12, 12, 100e3, 1e3, 20, 20e3,
       2},
      {"line-24v", "gain 5 into 2k2, 24 V, Zin 1M, 8 Vpp", 5, 2.2e3, 24, 24, 1e6, 0, 0, 0, 8},
      {"buffer", "gain 1 into 600, 9 V, Zin 100k, 20..20k, 2 Vpp", 1, 600, 9, 9, 100e3, 0, 20, 20e3, 2},
      {"heavy", "gain 3 into 330, 15 V, Zin 10k, 3 Vpp", 3, 330, 15, 15, 10e3, 0, 0, 0, 3},
      {"hv-48v", "gain 20 into 47k, 48 V, Zin 100k, 10..50k, 20 Vpp", 20, 47e3, 48, 48, 100e3, 0, 10, 50e3, 20},
      {"hi-zin", "gain 4 into 10k, 9 V, Zin 10M, 1M source, 5..20k", 4, 10e3, 9, 9, 10e6, 1e6, 5, 20e3},
      {"5v-1ma", "gain 6 into 4k7, 4.5..5.5 V, Zin 20k, 1 mA budget", 6, 4.7e3, 4.5, 5.5, 20e3, 0, 0, 0, 0, 1e-3},
      {"chain", "gain 100 into 10k, 12 V, Zin 1M, 10k source (needs a chain)", 100, 10e3, 12, 12, 1e6, 10e3},
      // A preamplifier on a battery: a gain no single transistor holds over its spread, a
      // high input impedance and a swing, so that the feedback pairs' corner passes (their
      // quasi-static distortion sweeps) carry the search.
      {"preamp", "gain 25 into 2k, 9 V, Zin 470k, 30..15k, 3 Vpp", 25, 2e3, 9, 9, 470e3, 0, 30, 15e3, 3},
      // A request nothing on these drawers meets: 1.55 V peak into 150 ohm from 9 V at a gain
      // of 8 and a 10k input. Every plan is searched, then the diagnosis searches again (the
      // gain probe, each limit let go, the smallest purchase): the time a person waits to hear
      // why not.
      {"no-fit", "gain 8 into 150, 9 V, Zin 10k, 50..15k, 3.1 Vpp (fits nothing)", 8, 150, 9, 9, 10e3, 0, 50, 15e3,
       3.1},
  };
  std::vector<Request> out;
  for (const Row& r : rows) {
    Request& q = out.emplace_back();
    q.name = r.name;
    q.text = r.text;
    synth::Spec& s = q.spec;
    s.gain = r.gain;
    s.load_ohm = r.load;
    s.supply_lo_v = r.supply_lo;
    s.supply_hi_v = r.supply_hi;
    s.zin_min_ohm = r.zin;
    s.source_ohm = r.source;
    if (r.band_hi > 0) s.band_hz = std::make_pair(r.band_lo, r.band_hi);
    if (r.swing > 0) s.swing_vpp = r.swing;
    if (r.max_current > 0) s.max_current_a = r.max_current;
    s.top = 10;
  }
  return out;
}

// --- One case in a child process ----------------------------------------------------------

struct Result {
  long proposals = 0, evaluations = 0;
  double seconds = 0, cpu_seconds = 0, peak_mb = 0;
  int found = 0;
  double points = 0;                   // the listed designs' scores, summed (lower is better)
  synth::DesignResult::Phases phases;  // of the best run
  char top[96] = {};
  char list[400] = {};  // the designs listed: id:score, in order
  bool ok = false;
};

Result run_case(const std::string& dist, std::size_t lines, const Request& rq, int runs, int combine, int stages) {
  int fd[2];
  if (pipe(fd) != 0) return {};
  const pid_t pid = fork();
  if (pid == 0) {
    close(fd[0]);
    // A cap so that a runaway case fails instead of taking the machine: 3 GB of address space.
    rlimit lim{3UL << 30, 3UL << 30};
    setrlimit(RLIMIT_AS, &lim);
    Result r;
    const synth::Inventory inv = make_stock(dist, lines);
    synth::Spec spec = rq.spec;
    spec.combine = combine;
    if (stages > 0) spec.stages_max = stages;
    double best = 1e300, best_cpu = 1e300;
    auto cpu_now = [] {
      rusage u{};
      getrusage(RUSAGE_SELF, &u);
      return static_cast<double>(u.ru_utime.tv_sec + u.ru_stime.tv_sec) +
             1e-6 * static_cast<double>(u.ru_utime.tv_usec + u.ru_stime.tv_usec);
    };
    for (int i = 0; i < runs; ++i) {
      const auto t0 = std::chrono::steady_clock::now();
      const double c0 = cpu_now();
      const synth::DesignResult d = synth::design(spec, inv);
      const double took = std::chrono::duration<double>(std::chrono::steady_clock::now() - t0).count();
      if (took < best) r.phases = d.phases;
      best = std::min(best, took);
      best_cpu = std::min(best_cpu, cpu_now() - c0);
      r.proposals = d.proposals;
      r.evaluations = d.evaluations;
      r.found = static_cast<int>(d.candidates.size());
      r.points = 0;
      std::string list;
      for (const auto& c : d.candidates) {
        r.points += c.score;
        list += fmt::format("{}{}:{:.4f}", list.empty() ? "" : " ", c.id, c.score);
      }
      std::snprintf(r.list, sizeof r.list, "%s", list.c_str());
      if (!d.candidates.empty())
        std::snprintf(r.top, sizeof r.top, "%s %s err %.1f%%", d.candidates[0].topology_name().c_str(),
                      d.candidates[0].device.name.c_str(), 100 * d.candidates[0].error_worst);
    }
    r.seconds = best;
    r.cpu_seconds = best_cpu;
    rusage ru{};
    getrusage(RUSAGE_SELF, &ru);
    r.peak_mb = static_cast<double>(ru.ru_maxrss) / 1024.0;
    r.ok = true;
    const ssize_t n = write(fd[1], &r, sizeof r);
    _exit(n == static_cast<ssize_t>(sizeof r) ? 0 : 1);
  }
  close(fd[1]);
  Result r;
  const ssize_t n = read(fd[0], &r, sizeof r);
  close(fd[0]);
  int status = 0;
  waitpid(pid, &status, 0);
  if (n != static_cast<ssize_t>(sizeof r)) r = Result{};
  return r;
}

std::vector<std::string> split(const std::string& s) {
  std::vector<std::string> out;
  std::stringstream ss(s);
  for (std::string item; std::getline(ss, item, ',');)
    if (!item.empty()) out.push_back(item);
  return out;
}

}  // namespace

int main(int argc, char** argv) {
  int runs = 3, combine = 2, stages = 0;
  bool lists = false;
  std::vector<std::string> sizes{"250", "1000", "4000", "10000"}, stocks{"eseries", "random", "hobby"}, names;
  // Options come in pairs: a word left without its value (`--help` among them) stops it
  // before the default table, which takes a quarter of an hour.
  if (argc % 2 == 0) {
    std::fprintf(stderr,
                 "usage: bench_design [--runs N] [--sizes 250,1000,...] [--stocks eseries,random,hobby] "
                 "[--requests NAME,...] [--combine N] [--stages N] [--lists 1]\n");
    return 1;
  }
  for (int i = 1; i + 1 < argc; i += 2) {
    const std::string k = argv[i], v = argv[i + 1];
    if (k == "--runs")
      runs = std::max(1, std::atoi(v.c_str()));
    else if (k == "--sizes")
      sizes = split(v);
    else if (k == "--stocks")
      stocks = split(v);
    else if (k == "--requests")
      names = split(v);
    else if (k == "--combine")
      combine = std::atoi(v.c_str());
    else if (k == "--stages")
      stages = std::atoi(v.c_str());
    else if (k == "--lists")
      lists = std::atoi(v.c_str()) != 0;
    else {
      std::fprintf(stderr, "bench_design: unknown option %s\n", k.c_str());
      return 1;
    }
  }
  const auto all = requests();
  std::printf("design, all topologies and devices, top 10 with Monte Carlo; best of %d run(s); combine %d\n", runs,
              combine);
  for (const auto& rq : all)
    if (names.empty() || std::find(names.begin(), names.end(), rq.name) != names.end())
      std::printf("  %-9s %s\n", rq.name, rq.text);
  std::printf("\n%-9s %-8s %6s %10s %11s %8s %8s %8s  %-35s %-12s %s\n", "request", "stock", "lines", "proposals",
              "evaluations", "seconds", "cpu s", "peak MB", "shelf/propose/finish/chains/yield/diag s", "listed/points",
              "top design");
  for (const auto& rq : all) {
    if (!names.empty() && std::find(names.begin(), names.end(), rq.name) == names.end()) continue;
    for (const auto& dist : stocks)
      for (const auto& size : sizes) {
        const auto lines = static_cast<std::size_t>(std::atol(size.c_str()));
        const Result r = run_case(dist, lines, rq, runs, combine, stages);
        if (!r.ok) {
          std::printf("%-9s %-8s %6zu  failed (out of memory or crashed)\n", rq.name, dist.c_str(), lines);
          continue;
        }
        const auto& ph = r.phases;
        char phases[64];
        std::snprintf(phases, sizeof phases, "%.2f/%.2f/%.2f/%.2f/%.2f/%.2f", ph.shelf, ph.propose, ph.finish,
                      ph.chains, ph.yield, ph.diagnose);
        char listed[32];
        std::snprintf(listed, sizeof listed, "%d/%.1f", r.found, r.points);
        std::printf("%-9s %-8s %6zu %10ld %11ld %8.3f %8.3f %8.1f  %-35s %-12s %s\n", rq.name, dist.c_str(), lines,
                    r.proposals, r.evaluations, r.seconds, r.cpu_seconds, r.peak_mb, phases, listed,
                    r.found ? r.top : "(nothing fits)");
        if (lists) std::printf("  list %s %s %zu: %s\n", rq.name, dist.c_str(), lines, r.list);
        std::fflush(stdout);
      }
  }
  return 0;
}
