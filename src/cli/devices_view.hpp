// How the transistor and op-amp types and the measured pieces look to a person (tables) and to
// a script (JSON).
#pragma once
#include <nlohmann/json.hpp>

#include <string>
#include <vector>

#include "shelfstage/devices/fit.hpp"
#include "shelfstage/devices/record.hpp"
#include "shelfstage/units/notation.hpp"

namespace shelfstage::cli {

/// A figure in notation with its unit ("2.5mA", "4.5pF"); volts as datasheets write gate
/// voltages, plain decimals ("-0.5V", not "-500mV").
std::string quantity_text(double value, units::Unit unit);

/// A datasheet range in notation with its unit: "1mA..5mA", "-3V..-0.5V"; one value when
/// both ends agree.
std::string range_text(const devices::Range& range, units::Unit unit);

/// The tables `devices list` prints: JFET types, BJT types, op-amp types, then the measured
/// pieces.
std::string devices_table(const std::vector<devices::DeviceRecord>& records,
                          const std::vector<devices::MeasuredPiece>& pieces);

/// One device type with the device CSV's column names as keys (store::device_columns()) and
/// plain SI numbers: name, kind, then for a JFET idss_min, idss_max, idss_typ, vp_min, vp_max,
/// vp_typ, lambda, cgs, cgd, tc_idss (fraction per kelvin), tc_vp (volts per kelvin); for a
/// BJT hfe_min, hfe_max, hfe_typ, is, vaf, cje, cjc, vce_sat; then note and the maximum
/// ratings v_max, v_rev_max, p_max, p_derate. A missing typical value or rating is null. An
/// op-amp has name, kind, note, the ratings, and "opamp": its CSV columns (channels ... iq,
/// null when not stated), then gbw_low, slew_low, aol_low (the stated minimum, or the share of
/// the typical devices::OpampParams takes) and inputs_reach_hi, inputs_reach_lo,
/// output_reaches_hi, output_reaches_lo (booleans).
nlohmann::ordered_json device_json(const devices::DeviceRecord& record);

/// A measured piece: label, device, idss, vp, hfe (null when not measured), uncertainty
/// (a fraction), note.
nlohmann::ordered_json piece_json(const devices::MeasuredPiece& piece);

/// {"schema":1,"devices":[...],"pieces":[...]}.
nlohmann::ordered_json devices_json(const std::vector<devices::DeviceRecord>& records,
                                    const std::vector<devices::MeasuredPiece>& pieces);

/// What `devices fit` prints: IDSS, VP and gm0 with their expanded uncertainties, the
/// readings with the fitted source voltage and the residual, and how the uncertainty was made.
std::string fit_text(const devices::SelfBiasFit& fit, const devices::ReadingAccuracy& accuracy,
                     const devices::BenchConditions& bench);

/// {"schema":1,"kind","idss","vp","idss_uncertainty","vp_uncertainty","gm0","gm0_uncertainty",
/// "correlation","coverage_factor":2,"meter_accuracy","rs_tol","drain_supply" (null when not
/// given: IDSS is then the bench VDS's),"lambda","scatter" (null with two readings),
/// "readings":[{"rs","vs","id","fitted_vs","residual"}],"notes":[...]}: plain SI, vp and vs
/// signed as on a datasheet (negative for N-channel VP, negative P-channel VS).
nlohmann::ordered_json fit_json(const devices::SelfBiasFit& fit, const devices::ReadingAccuracy& accuracy,
                                const devices::BenchConditions& bench);

}  // namespace shelfstage::cli
