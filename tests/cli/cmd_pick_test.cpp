// Tests of `shelfstage pick`: the table, JSON per docs/interface.md, CSV, copies, and bad input.
#include <doctest/doctest.h>

#include "shelf_fixture.hpp"

using shelfstage::test::DemoShelf;

TEST_CASE("pick --json: the documented shape; every piece of one copy from the lines the design names") {
  DemoShelf shelf;
  const auto j = shelf.json({"pick", shelf.design});
  CHECK(j["schema"] == 1);
  REQUIRE(j["lines"].is_array());
  REQUIRE(j["short"].is_array());
  CHECK(j["short"].empty());
  int pieces = 0, transistors = 0;
  for (const auto& l : j["lines"]) {
    for (const char* key : {"bin", "kind", "value", "qty", "designators"}) CHECK(l.contains(key));
    CHECK(l["designators"].size() == l["qty"].get<std::size_t>());
    pieces += l["qty"].get<int>();
    if (l["kind"] == "R" || l["kind"] == "C") {
      CHECK(l["value"].is_number());
    } else {
      CHECK(l["value"].is_string());
      CHECK(l["designators"][0] == "Q1");
      ++transistors;
    }
  }
  CHECK(transistors == 1);
  // As many pieces as the kept design counts (its "pieces", transistor included).
  const auto kept =
      shelf.json({"design", "--gain", "10",      "--load",  "10k", "--supply", "12", "--zin",     "100k", "--source-z",
                  "1k",     "--band", "20..20k", "--swing", "2",   "--top",    "3",  "--samples", "50",   "--no-save"});
  CHECK(pieces == kept["candidates"][0]["pieces"].get<int>());
  // Bins in walking order (common practice: natural order, A2 before A10).
  for (std::size_t i = 1; i < j["lines"].size(); ++i) {
    const std::string a = j["lines"][i - 1]["bin"], b = j["lines"][i]["bin"];
    if (a == b) continue;
    const auto num = [](const std::string& s) { return std::stoi(s.substr(1)); };
    CHECK((a[0] < b[0] || (a[0] == b[0] && num(a) < num(b))));
  }
}

TEST_CASE("pick --copies: quantities scale, designators carry the copy, a shortfall is listed") {
  DemoShelf shelf;
  const auto one = shelf.json({"pick", shelf.design});
  const auto three = shelf.json({"pick", shelf.design, "--copies", "3"});
  CHECK(three["copies"] == 3);
  int p1 = 0, p3 = 0;
  for (const auto& l : one["lines"]) p1 += l["qty"].get<int>();
  for (const auto& l : three["lines"]) p3 += l["qty"].get<int>();
  for (const auto& s : three["short"]) p3 += s["qty"].get<int>();
  CHECK(p3 == 3 * p1);
  bool copy3 = false;
  for (const auto& l : three["lines"])
    for (const auto& d : l["designators"]) copy3 = copy3 || d.get<std::string>().ends_with(".3");
  CHECK(copy3);
  // The demo shelf holds at most 40 transistors of one type (data-demo/stock.csv): 60 copies
  // are short whatever stage was chosen.
  const auto many = shelf.json({"pick", shelf.design, "--copies", "60"});
  REQUIRE_FALSE(many["short"].empty());
  bool q_short = false;
  for (const auto& s : many["short"]) {
    CHECK(s["qty"].get<int>() > 0);
    CHECK(s["designators"].size() == s["qty"].get<std::size_t>());
    q_short = q_short || s["roles"][0] == "Q1";
  }
  CHECK(q_short);
}

TEST_CASE("pick: the table names bins, designators, and which way electrolytics go") {
  DemoShelf shelf;
  const auto r = shelf.run({"pick", shelf.design});
  REQUIRE(r.status == 0);
  CHECK(r.out.find("Pick list for " + shelf.design) == 0);
  CHECK(r.out.find("BIN") != std::string::npos);
  CHECK(r.out.find("Q1") != std::string::npos);
  CHECK(r.out.find("Nothing is short.") != std::string::npos);
  const auto j = shelf.json({"pick", shelf.design});
  for (const auto& pol : j["polarity"]) {
    CHECK(r.out.find(pol["text"].get<std::string>()) != std::string::npos);
    CHECK(pol["text"].get<std::string>().find("+ lead to") != std::string::npos);
  }
}

TEST_CASE("pick --csv: a header and one row per stock line") {
  DemoShelf shelf;
  const auto r = shelf.run({"pick", shelf.design, "--csv"});
  REQUIRE(r.status == 0);
  CHECK(r.out.rfind("status,bin,kind,value,qty,designators,tol,rating,dielectric,part_id\n", 0) == 0);
  const auto j = shelf.json({"pick", shelf.design});
  CHECK(static_cast<std::size_t>(std::count(r.out.begin(), r.out.end(), '\n')) == 1 + j["lines"].size());
}

TEST_CASE("pick: a prefix of the id works; unknown ids, zero copies and --csv with --json are refused") {
  DemoShelf shelf;
  CHECK(shelf.run({"pick", shelf.design.substr(0, 6)}).status == 0);
  auto r = shelf.run({"pick", "snothere"});
  CHECK(r.status == 1);
  CHECK(r.err == "error: design 'snothere' is not in this database (run `shelfstage design` first)\n");
  r = shelf.run({"pick", shelf.design, "--copies", "0"});
  CHECK(r.status == 1);
  CHECK(r.err.find("--copies") != std::string::npos);
  r = shelf.run({"pick", shelf.design, "--csv", "--json"});
  CHECK(r.status == 1);
  CHECK(r.err == "error: --csv and --json: choose one\n");
}
