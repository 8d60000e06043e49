// Tests of src/stages/jfet_cs_divider.cpp: the divider-biased JFET common source, fast evaluator and evaluate_exact,
// against ngspice (operating point, gain, corners, noise, HD2, clipping).
#include <doctest/doctest.h>

#include "stage_bench.hpp"

using namespace shelfstage;
using namespace shelfstage::test;

TEST_CASE("jfet-cs-divider against ngspice: corners of the spread, N and P channel, 5 V to 15 V") {
  const stages::Topology& t = *stages::find_topology("jfet-cs-divider");
  ErrorLog log;
  const auto cases = standard_cases(t);
  REQUIRE(cases.size() >= 12);  // every case below is checked against ngspice in check_case()
  for (const StageCase& sc : cases) check_case(log, sc);
  log.report(fmt::format("jfet-cs-divider: {} cases, worst relative error against ngspice", cases.size()));
}
