// Tests of src/stages/bjt_follower.cpp: the BJT emitter follower, fast evaluator and evaluate_exact,
// against ngspice (operating point, gain, corners, noise, HD2, clipping).
#include <doctest/doctest.h>

#include "stage_bench.hpp"

using namespace shelfstage;
using namespace shelfstage::test;

TEST_CASE("bjt-follower against ngspice: hFE 100 to 400, NPN and PNP, 5 V to 24 V") {
  const stages::Topology& t = *stages::find_topology("bjt-follower");
  ErrorLog log;
  const auto cases = standard_cases(t);
  REQUIRE(cases.size() >= 12);  // every case below is checked against ngspice in check_case()
  for (const StageCase& sc : cases) check_case(log, sc);
  log.report(fmt::format("bjt-follower: {} cases, worst relative error against ngspice", cases.size()));
}
