#pragma once

// IEC 60063 preferred-number series E3 ... E192.

#include <optional>
#include <span>
#include <string>
#include <string_view>
#include <vector>

namespace loopsketch {

enum class ESeries { E3, E6, E12, E24, E48, E96, E192 };

/// All series in increasing density.
std::span<const ESeries> allESeries();

/// "E24" for ESeries::E24.
std::string toString(ESeries series);

/// Parses "E24" (case-insensitive); nullopt for anything else.
std::optional<ESeries> parseESeries(std::string_view text);

/// Number of values per decade (3, 6, 12, 24, 48, 96, 192).
int valuesPerDecade(ESeries series);

/// The table of one decade as printed in IEC 60063, mantissas in [1, 10): E24 gives
/// 1.0, 1.1, 1.2, 1.3, 1.5, ... 9.1.
std::span<const double> mantissas(ESeries series);

/// Tolerance conventionally tied to the series, as a fraction (E24 -> 0.05, E96 -> 0.01).
/// Convention, not a requirement of the standard: E24 is also sold at 1 % and 2 %.
double conventionalTolerance(ESeries series);

/// The series value nearest to `value` (> 0) by ratio (logarithmic distance), across
/// decades: E12, 1097 -> 1200 (1097/1000 > 1200/1097). Ties go to the larger value.
double nearestValue(ESeries series, double value);

/// True when `value` is a member of the series (within 1e-9 relative).
bool isSeriesValue(ESeries series, double value);

/// Next larger / smaller series value than `value`, crossing decades (E12: 8.2k -> 10k,
/// 1.0k -> 820). A value between table entries steps to the neighbouring entry.
double nextValue(ESeries series, double value);
double previousValue(ESeries series, double value);

/// Steps `value` (snapped first) by `steps` positions (negative steps go down).
double stepValue(ESeries series, double value, int steps);

/// All series values in [lo, hi], ascending.
std::vector<double> valuesInRange(ESeries series, double lo, double hi);

} // namespace loopsketch
