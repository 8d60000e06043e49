// Benchmark: a whole `design` across all five topologies with spread ranking, on a
// generated 1,000-line stock (E96 and E24 resistors over five decades, E6/E12 capacitors,
// six device types). Prints wall time per run (median of several) and peak memory.
#include <sys/resource.h>

#include <algorithm>
#include <chrono>
#include <cstdio>
#include <random>
#include <string>
#include <vector>

#include "shelfstage/synth/design.hpp"
#include "shelfstage/units/eseries.hpp"

using namespace shelfstage;

namespace {

synth::Inventory generated_stock() {
  synth::Inventory inv;
  std::mt19937 rng(42);
  std::uniform_int_distribution<int> qty(0, 40);
  std::int64_t id = 1;
  auto add = [&](store::PartKind k, double v, units::Tolerance tol, std::optional<double> power,
                 std::optional<double> volts, const char* diel, std::string bin) {
    store::Part p;
    p.id = id++;
    p.kind = k;
    p.value = v;
    p.tol = tol;
    p.power_w = power;
    p.volts = volts;
    p.dielectric = diel;
    p.qty = qty(rng);
    p.bin = std::move(bin);
    inv.parts.push_back(p);
  };
  int bin = 0;
  for (double dec = 10; dec <= 1e5 * 1.01; dec *= 10) {
    for (double m : units::eseries(96)) add(store::PartKind::resistor, m * dec, {0.01, 0.01}, 0.25, {}, "", "MF" + std::to_string(bin++ / 20));
    for (double m : units::eseries(24)) add(store::PartKind::resistor, m * dec, {0.05, 0.05}, 0.25, {}, "", "CF" + std::to_string(bin++ / 20));
  }
  // Second bins for the common E12 values (the same value in two places).
  for (double dec = 100; dec <= 1e5 * 1.01; dec *= 10)
    for (double m : units::eseries(12)) add(store::PartKind::resistor, m * dec, {0.05, 0.05}, 0.5, {}, "", "X" + std::to_string(bin++ / 10));
  for (double dec = 10e-12; dec <= 1e-7 * 1.01; dec *= 10)
    for (double m : units::eseries(12)) add(store::PartKind::capacitor, m * dec, {0.05, 0.05}, {}, 63, dec < 1e-9 ? "C0G" : "film", "K" + std::to_string(bin++ / 12));
  for (double m : units::eseries(6)) add(store::PartKind::capacitor, m * 1e-7, {0.10, 0.10}, {}, 63, "film", "K" + std::to_string(bin++ / 12));
  for (double dec = 1e-6; dec <= 1e-4 * 1.01; dec *= 10)
    for (double m : units::eseries(6))
      for (double v : {6.3, 16.0, 35.0}) add(store::PartKind::capacitor, m * dec, {0.20, 0.20}, {}, v, "electrolytic", "E" + std::to_string(bin++ / 12));
  // Fill up to 1,000 lines with duplicate E24 lines in further bins.
  while (inv.parts.size() < 1000) {
    const auto& e = units::eseries(24);
    add(store::PartKind::resistor, e[inv.parts.size() % e.size()] * std::pow(10.0, 1 + static_cast<double>(inv.parts.size() % 5)),
        {0.05, 0.05}, 0.25, {}, "", "Z" + std::to_string(bin++ / 25));
  }
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
  auto bjt = [&](const char* name, devices::DeviceKind k, double h0, double h1) {
    devices::DeviceRecord d;
    d.name = name;
    d.kind = k;
    d.bjt.hfe = {h0, h1, {}};
    d.bjt.is_a = 1e-14;
    d.bjt.vaf_v = 80;
    d.bjt.cje_f = 6e-12;
    d.bjt.cjc_f = 3e-12;
    inv.devices.push_back(d);
  };
  jfet("BJ-1", devices::DeviceKind::njfet, 1e-3, 5e-3, -3, -0.5);
  jfet("BJ-2", devices::DeviceKind::njfet, 2e-3, 20e-3, -6, -1);
  jfet("BJ-3", devices::DeviceKind::pjfet, 2e-3, 15e-3, 1, 5);
  bjt("BQ-1", devices::DeviceKind::npn, 110, 450);
  bjt("BQ-2", devices::DeviceKind::npn, 420, 800);
  bjt("BQ-3", devices::DeviceKind::pnp, 110, 450);
  for (const auto& d : inv.devices) {
    store::Part p;
    p.id = id++;
    p.kind = d.kind == devices::DeviceKind::njfet ? store::PartKind::njfet
             : d.kind == devices::DeviceKind::pjfet ? store::PartKind::pjfet
             : d.kind == devices::DeviceKind::npn   ? store::PartKind::npn
                                                    : store::PartKind::pnp;
    p.device = d.name;
    p.qty = 25;
    p.bin = "T1";
    inv.parts.push_back(p);
  }
  return inv;
}

}  // namespace

// Usage: bench_design [RUNS] [chain]. With "chain", a request no single stage meets on this
// stock (gain 100 into 10k from a 1 MOhm input), so the search plans chains.
int main(int argc, char** argv) {
  int runs = 7;
  bool chain = false;
  for (int i = 1; i < argc; ++i) {
    if (std::string(argv[i]) == "chain")
      chain = true;
    else
      runs = std::max(1, std::atoi(argv[i]));
  }
  const synth::Inventory inv = generated_stock();
  std::printf("stock: %zu lines, %zu device types\n", inv.parts.size(), inv.devices.size());
  synth::Spec spec;
  spec.gain = 10;
  spec.load_ohm = 10e3;
  spec.supply_lo_v = spec.supply_hi_v = 12;
  spec.zin_min_ohm = 100e3;
  spec.source_ohm = 1e3;
  spec.band_hz = std::make_pair(20.0, 20e3);
  spec.swing_vpp = 2;
  spec.top = 5;
  if (chain) {
    spec.gain = 100;
    spec.zin_min_ohm = 1e6;
    spec.source_ohm = 10e3;
  }
  std::vector<double> times;
  synth::DesignResult r;
  for (int i = 0; i < runs; ++i) {
    const auto t0 = std::chrono::steady_clock::now();
    r = synth::design(spec, inv);
    times.push_back(std::chrono::duration<double>(std::chrono::steady_clock::now() - t0).count());
  }
  std::sort(times.begin(), times.end());
  rusage ru{};
  getrusage(RUSAGE_SELF, &ru);
  std::printf("design%s (5 topologies, spread ranking, top %d with %d-sample Monte Carlo):\n",
              chain ? " of a request that needs a chain" : "", spec.top, spec.mc_samples);
  std::printf("  median %.3f s, best %.3f s, worst %.3f s over %d runs\n", times[times.size() / 2], times.front(),
              times.back(), runs);
  std::printf("  %ld proposals, %ld evaluations, %zu candidates\n", r.proposals, r.evaluations, r.candidates.size());
  std::printf("  peak memory (max RSS) %.1f MB\n", static_cast<double>(ru.ru_maxrss) / 1024.0);
  if (!r.candidates.empty())
    std::printf("  #1 %s %s gain %.3f score %.2f\n", r.candidates[0].topology_name().c_str(),
                r.candidates[0].device.name.c_str(), r.candidates[0].nominal.gain, r.candidates[0].score);
  return 0;
}
