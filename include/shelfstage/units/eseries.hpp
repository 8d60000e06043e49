// IEC 60063 preferred-number series E3 ... E192.
#pragma once
#include <span>

namespace shelfstage::units {

/// The mantissas (in [1, 10)) of series E3, E6, E12, E24, E48, E96 or E192, as IEC 60063
/// tabulates them: E24 and below keep their historic values (2.7, 3.3, 4.7 ... which differ
/// from the rounded geometric series), E48 and above have three significant figures.
/// Throws InputError for any other n.
std::span<const double> eseries(int n);

/// The member of series En nearest to value (on a log scale), any decade. value > 0.
double nearest_in_series(double value, int n);

/// True when value (any decade) is a member of series En, within 1e-6 relative.
bool in_series(double value, int n);

}  // namespace shelfstage::units
