// Internal to the report layer: the pieces of the HTML report shared by the single-stage
// report (html_report.cpp) and the chain report (chain_report.cpp). Not installed.
#pragma once
#include <optional>
#include <string>
#include <string_view>
#include <utility>
#include <vector>

#include "shelfstage/report/analysis.hpp"
#include "shelfstage/report/curves.hpp"
#include "shelfstage/report/html_report.hpp"
#include "shelfstage/units/notation.hpp"

namespace shelfstage::report::html {

using units::format_value;
using units::Unit;

/// The page's stylesheet (no character needs escaping in XML).
extern const char* const kStyle;
/// The palette's colours as CSS variables ("--ink: #...;" in a :root rule) for kStyle.
std::string palette_css();

std::string esc(std::string_view s);
std::string volts(double v);
std::string amps(double v);
std::string ohms(double v);
std::string hertz(double v);
std::string watts(double v);
std::string signed3(double v);
std::string db(double v);
std::string kind_text(devices::DeviceKind k);
/// The stage of a chain a candidate is (from its parts), 0 for a single stage.
int chain_stage_of(const synth::Candidate& c);
/// Q1, or Q101, Q201 ... for a chain's stage.
std::string transistor_designator(const synth::Candidate& c);
/// A pair's second transistor: Q2, or Q102, Q202 ... for a chain's stage.
std::string second_transistor_designator(const synth::Candidate& c);

/// A table; a header starting with '#' is numeric (right-aligned).
std::string table(const std::vector<std::string>& head, const std::vector<std::vector<std::string>>& rows,
                  const std::vector<std::string>& row_class = {});
std::string figure(const std::string& svg, const std::string& caption);
std::string range_text(const synth::Range& r, std::string (*f)(double));
bool is_hazard(const std::string& s);
std::string hazard_box(const std::vector<std::string>& cautions);
/// The document up to the opening <main> (title, generator, the stylesheet, a policy that
/// forbids fetching anything), and from the footer to the end.
std::string page_start(const ReportInput& in, const std::string& title);
std::string page_end(const ReportInput& in);
/// The cautions section: warnings first, the hazard boxed.
std::string cautions_block(const std::vector<std::string>& warnings, const std::vector<std::string>& cautions);
/// The header's eight figure cards of a performance: gain, `second`, band, swing, Zin,
/// Zout, supply current, yield.
std::vector<std::pair<std::string, std::string>> figure_cards(const stages::Performance& p,
                                                              const std::optional<double>& yield,
                                                              const std::pair<std::string, std::string>& second);
/// The header's strip of figure cards: (value, what it is).
std::string card_strip(const std::vector<std::pair<std::string, std::string>>& cards);

std::string schematic_section(const ReportInput& in);
std::string response_section(const ReportInput& in, const Response& r);
std::string bias_section(const ReportInput& in, const BiasSpread& b);
/// In place of the bias pictures for an op-amp stage: why there are none (one line).
std::string opamp_bias_note(const ReportInput& in);
std::string parts_section(const ReportInput& in, const Analysis& a);
std::string pick_section(const ReportInput& in);

/// The report of a chain: the chain's figures and response, then each stage (schematic,
/// bias spread, parts), the pick list and the cautions.
std::string chain_html_report(const ReportInput& in);

}  // namespace shelfstage::report::html
