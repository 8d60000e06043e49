// Tests of `shelfstage report`, run as the real program on a database of the demo shelf: the
// file it writes (rendered in headless Chromium), --json, stdout, and the errors a tired person
// meets (unknown id, no -o, a folder, a missing folder), which must leave nothing written.
#include <doctest/doctest.h>

#include <sys/wait.h>

#include <algorithm>
#include <cstdlib>
#include <filesystem>
#include <fstream>
#include <sstream>

#include <nlohmann/json.hpp>

#include "support/browser.hpp"
#include "temp_dir.hpp"

namespace {

struct Run {
  int status = -1;
  std::string out, err;
};

std::string slurp(const std::filesystem::path& p) {
  std::ifstream in(p, std::ios::binary);
  std::ostringstream ss;
  ss << in.rdbuf();
  return ss.str();
}

std::string quote(const std::string& s) {
  std::string q = "'";
  for (char c : s) q += c == '\'' ? std::string("'\\''") : std::string(1, c);
  return q + "'";
}

/// Runs the built program with --db on the fixture's database.
Run run_program(const shelfstage::test::TempDir& dir, const std::string& args) {
  const auto out = dir / "stdout.txt", err = dir / "stderr.txt";
  const std::string cmd = quote(SHELFSTAGE_BINARY) + " --db " + quote((dir / "stock.db").string()) + " " + args + " >" +
                          quote(out.string()) + " 2>" + quote(err.string()) + " </dev/null";
  const int status = std::system(cmd.c_str());
  Run r;
  r.status = WIFEXITED(status) ? WEXITSTATUS(status) : -1;
  r.out = slurp(out);
  r.err = slurp(err);
  return r;
}

/// A database with the demo shelf and one kept design; returns its id.
std::string kept_design(const shelfstage::test::TempDir& dir) {
  const std::string src = SHELFSTAGE_SOURCE_DIR;
  REQUIRE(run_program(dir, "init").status == 0);
  REQUIRE(run_program(dir, "devices import " + quote(src + "/data-demo/devices.csv")).status == 0);
  REQUIRE(run_program(dir, "stock import " + quote(src + "/data-demo/stock.csv")).status == 0);
  const Run d = run_program(
      dir,
      "design --gain 5 --load 10k --supply 12 --zin 47k --source-z 1k --band 20..20k --swing 0.5 --max-distortion 5% "
      "--topology jfet-cs-self --device SJ-101 --top 1 --json");
  REQUIRE(d.status == 0);
  const auto doc = nlohmann::json::parse(d.out);
  return doc.at("candidates").at(0).at("id").get<std::string>();
}

}  // namespace

TEST_CASE("report ID -o FILE.html writes one self-contained file that Chromium renders") {
  shelfstage::test::TempDir dir;
  const std::string id = kept_design(dir);
  const auto file = dir / "stage report.html";  // a space in the name, as people name files
  const Run r = run_program(dir, "report " + id + " -o " + quote(file.string()));
  CHECK(r.status == 0);
  CHECK(r.err.empty());
  CHECK(r.out.find(file.string()) != std::string::npos);
  const std::string html = slurp(file);
  CHECK(html.starts_with("<!DOCTYPE html>"));
  CHECK(html.find(id) != std::string::npos);
  CHECK(html.find("<script") == std::string::npos);
  // No temporary file left beside it.
  int files = 0;
  for (const auto& e : std::filesystem::directory_iterator(dir.path()))
    if (e.path().extension() == ".tmp") ++files;
  CHECK(files == 0);

  const auto run = shelfstage::test::render(file.string(), 1200, 2400);
  CHECK_MESSAGE(run.console.empty(), run.log);
  const auto img = shelfstage::test::decode_png(run.screenshot);
  CHECK(shelfstage::test::distinct_colours(img) > 200);

  // --json: one document naming the file and its size; -o -: the HTML on stdout.
  const auto file2 = dir / "b.html";
  const Run j = run_program(dir, "--json report " + id.substr(0, 5) + " -o " + quote(file2.string()));
  REQUIRE(j.status == 0);
  const auto doc = nlohmann::json::parse(j.out);
  CHECK(doc.at("schema") == 1);
  CHECK(doc.at("id") == id);
  CHECK(doc.at("bytes").get<std::size_t>() == std::filesystem::file_size(file2));
  const Run s = run_program(dir, "report " + id + " -o - --samples 20");
  CHECK(s.status == 0);
  CHECK(s.out.starts_with("<!DOCTYPE html>"));
  CHECK(s.out.find("20 Monte Carlo builds") != std::string::npos);
}

TEST_CASE("report: bad input is exit 1 with one error line, and nothing is written") {
  shelfstage::test::TempDir dir;
  const std::string id = kept_design(dir);
  auto one_error = [](const Run& r) {
    CHECK(r.status == 1);
    CHECK(r.out.empty());
    CHECK(r.err.starts_with("error: "));
    CHECK(std::count(r.err.begin(), r.err.end(), '\n') == 1);
  };
  const auto file = dir / "r.html";
  Run r = run_program(dir, "report nosuchid -o " + quote(file.string()));
  one_error(r);
  CHECK(r.err.find("nosuchid") != std::string::npos);
  CHECK(!std::filesystem::exists(file));

  r = run_program(dir, "report " + id);  // no -o
  CHECK(r.status == 1);
  CHECK(r.err.find("-o") != std::string::npos);

  r = run_program(dir, "report " + id + " -o " + quote(dir.path().string()));  // a folder
  one_error(r);
  CHECK(r.err.find("folder") != std::string::npos);

  const auto missing = dir / "no such folder" / "r.html";
  r = run_program(dir, "report " + id + " -o " + quote(missing.string()));
  one_error(r);
  CHECK(r.err.find("-o '" + missing.string() + "'") != std::string::npos);
  CHECK(!std::filesystem::exists(missing));

  r = run_program(dir, "report " + id + " -o " + quote(file.string()) + " --samples -5");
  CHECK(r.status == 1);
  CHECK(!std::filesystem::exists(file));

  // An old report is replaced whole.
  std::ofstream(file) << "old";
  r = run_program(dir, "report " + id + " -o " + quote(file.string()));
  CHECK(r.status == 0);
  CHECK(slurp(file).starts_with("<!DOCTYPE html>"));
}
