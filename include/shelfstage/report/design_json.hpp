// Designs as JSON: the request and the candidates with the keys docs/interface.md lists
// (only ever added to); and back again, so a kept design can be shown, picked and built.
#pragma once
#include <nlohmann/json_fwd.hpp>
#include <optional>
#include <string>
#include <vector>

#include "shelfstage/stages/loop.hpp"
#include "shelfstage/synth/design.hpp"

namespace shelfstage::report {

using Json = nlohmann::ordered_json;

/// A text as JSON, null when it is empty (a field not known or not given).
Json text_or_null(const std::string& s);
/// A number as JSON, null when it is not given.
Json number_or_null(const std::optional<double>& v);

/// A loop gain at one build: {"gain" (|T| at mid-band), "phase" (degrees there), "f_cross",
/// "phase_margin"} (the last two null when |T| never reaches one).
Json loop_gain_json(const stages::LoopGain& g);
/// An op-amp piece's figures (docs/interface.md): gbw, aol, pole2, slew, vos, ib_plus,
/// ib_minus, iq (plain SI; pole2 and iq null when the record states none).
Json opamp_piece_json(const devices::OpampInstance& q);

/// The request in SI: gain, load, load_cap, supply (number or [low, high]), rail, spread,
/// zin, source_z, band, swing, max_distortion, prefer, max_current, copies, temp,
/// topologies, devices, piece, gain_tol, top, combine, seed, samples, stages.
Json spec_json(const synth::Spec& spec);
/// The request back from spec_json's output (InputError on a malformed document).
synth::Spec spec_from_json(const nlohmann::json& j);

/// One candidate: rank, id, topology, score, device {name, kind, model}, piece, spread,
/// parts [{role, designator, value, tol, recipe {join, values}, ...}], nominal {...}, worst
/// {[min, max] ...}, yield, pieces, error_nominal, error_worst, cautions; a chain adds
/// stages and chain. Every key: docs/interface.md.
Json candidate_json(const synth::Candidate& c);

/// Rebuilds a candidate from candidate_json's output with the current device records and
/// pieces (InputError when its topology, device or piece is gone). Its figures are not
/// read back: call synth::evaluate_candidate to compute them afresh.
synth::Candidate candidate_from_json(const nlohmann::json& j, const std::vector<devices::DeviceRecord>& devices,
                                     const std::vector<devices::MeasuredPiece>& pieces);

/// The names of the device types a candidate document (candidate_json's output) uses: its
/// device, and each stage's in a chain; nothing for a document without them.
std::vector<std::string> candidate_devices(const nlohmann::json& j);

/// The whole `design --json` document: {"schema":1,"spec":{...},"candidates":[...]} and,
/// when nothing fits, "diagnosis".
Json design_json(const synth::DesignResult& r);

}  // namespace shelfstage::report
