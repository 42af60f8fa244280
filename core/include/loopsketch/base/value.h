#pragma once

// Parsing and formatting of component values: the one place where text becomes a number
// and back. Engineering notation with SI prefixes (f p n u µ m k M G T), optional unit
// symbols, percentages, decibels for gains, and IEC 60062 RKM code (4k7, R47, 2M2, 4n7).

#include "loopsketch/base/result.h"

#include <string>
#include <string_view>

namespace loopsketch {

/// A number with the text it was written as. `text` empty means it was written as a plain
/// JSON number; saving writes back whichever form was read, so files round-trip unchanged.
struct Value
{
    double si = 0.0; ///< SI base units (ohm, farad, henry, hertz, V/V, fraction)
    std::string text;

    bool operator==(const Value &) const = default;
};

/// What a value means; decides which unit symbols are accepted and how it is formatted.
enum class ValueKind {
    Resistance, ///< ohm; "Ω", "ohm", "R" accepted
    Capacitance, ///< farad; "F"
    Inductance, ///< henry; "H"
    Frequency, ///< hertz; "Hz"
    Gain, ///< dimensionless V/V (or V/A, A/A ...); "V/V" or a "dB" suffix (20 log10)
    Tolerance, ///< fraction; "1%" -> 0.01, a bare number is a fraction
    Plain, ///< dimensionless number with optional SI prefix
    Current, ///< ampere; "A"
};

/// Which values make sense for a field.
enum class ValueRange {
    Positive, ///< > 0 (component values, frequencies)
    NonNegative, ///< >= 0 (optional parasitics such as a load capacitance of "0")
    Any, ///< any finite value, sign allowed (gains)
};

/// Parses text such as "4k7", "2.2p", "10 kΩ", "1.5 MHz", "100dB", "-230k", "1%".
/// Returns the value in SI base units (ohm, farad, henry, hertz, V/V, fraction). A failure
/// carries one diagnostic whose message quotes the text, e.g. `"12kk" is not a value: ...`.
/// The diagnostic's file/part/field are left empty for the caller to fill.
Result<double> parseValue(std::string_view text, ValueKind kind,
                          ValueRange range = ValueRange::Positive);

/// The unit symbol used when formatting a kind ("Ω", "F", "H", "Hz", "V/V", "%", "").
std::string unitSymbol(ValueKind kind);

/// Engineering notation: the SI prefix is chosen so that 1 to 3 digits stand before the
/// point ("4.7 kΩ", "220 kΩ", "1.5 pF", "30 MHz"), with `significantDigits` digits,
/// trailing zeros dropped. `unit` empty gives the bare number with prefix ("4.7k").
/// Zero prints as "0", NaN (a quantity that does not exist) as "—", infinity (an open input,
/// an ideal source) as "∞" or "-∞" with the unit; never "nan" or "inf".
std::string formatEngineering(double value, int significantDigits = 3, std::string_view unit = {});

/// A plain number with `precision` significant digits, no prefix (percentages, decibels,
/// degrees): "—" for NaN, "∞" / "-∞" for infinities, never "nan" or "inf".
std::string formatPlain(double value, int precision = 5);

/// Fixed-point text with `decimals` digits after the point ("12.300"; never a minus sign on
/// a value that rounds to zero); "—", "∞" or "-∞" for non-finite values.
std::string formatFixed(double value, int decimals);

/// The text of a non-finite value: "—" for NaN, "∞" or "-∞"; empty for a finite value.
std::string nonFiniteText(double value);

/// Formats a value of `kind` with its unit symbol (Tolerance as percent, Gain as V/V).
std::string formatValue(double value, ValueKind kind, int significantDigits = 3);

/// IEC 60062 RKM code for a resistance or capacitance: 4700 -> "4k7", 0.47 -> "R47",
/// 2.2e6 -> "2M2", 1 -> "1R0", 4.7e-9 F -> "4n7", 2.2e-12 F -> "2p2". Uses up to
/// `significantDigits` digits. Letters: resistors R k M G T (lower-case k as commonly
/// written), capacitors p n u m (µ written as u).
std::string formatRkm(double value, ValueKind kind, int significantDigits = 3);

/// Gain in decibels from a linear magnitude (20 log10 |g|); non-positive gives -inf.
double toDecibels(double linearMagnitude);

} // namespace loopsketch
