#include "loopsketch/base/value.h"

#include "loopsketch/base/lookup.h"

#include <algorithm>
#include <array>
#include <charconv>
#include <cmath>
#include <cstddef>
#include <limits>
#include <optional>
#include <sstream>
#include <string>
#include <system_error>

// Number text is converted with std::from_chars / std::to_chars only: printf and strtod
// follow LC_NUMERIC, which the desktop application sets from the user's locale.

namespace loopsketch {
namespace {

constexpr std::string_view kMicroSign = "\u00B5"; // MICRO SIGN, what keyboards type
constexpr std::string_view kGreekMu = "\u03BC"; // GREEK SMALL LETTER MU
constexpr std::string_view kOmega = "\u03A9"; // GREEK CAPITAL LETTER OMEGA
constexpr std::string_view kOhmSign = "\u2126"; // OHM SIGN
constexpr std::string_view kNoValue = "\u2014"; // EM DASH, shown instead of nan or inf

struct Prefix
{
    std::string_view symbol;
    int exponent;
};

// Upper-case K is accepted because RKM code on resistors writes 4K7; 'M' is mega, 'm' milli.
constexpr std::array<Prefix, 12> kPrefixes{{
    {"f", -15},
    {"p", -12},
    {"n", -9},
    {"u", -6},
    {kMicroSign, -6},
    {kGreekMu, -6},
    {"m", -3},
    {"k", 3},
    {"K", 3},
    {"M", 6},
    {"G", 9},
    {"T", 12},
}};

bool isDigit(char c)
{
    return c >= '0' && c <= '9';
}

bool isSpace(char c)
{
    return c == ' ' || c == '\t' || c == '\n' || c == '\r' || c == '\f' || c == '\v';
}

std::string quoted(std::string_view text)
{
    return "\"" + std::string(text) + "\"";
}

std::string toLower(std::string_view text)
{
    std::string lower(text);
    for (char &c : lower) {
        if (c >= 'A' && c <= 'Z')
            c = static_cast<char>(c - 'A' + 'a');
    }
    return lower;
}

/// A prefix symbol at the start of `text`, or nullopt.
std::optional<Prefix> prefixAt(std::string_view text)
{
    for (const Prefix &prefix : kPrefixes) {
        if (text.substr(0, prefix.symbol.size()) == prefix.symbol)
            return prefix;
    }
    return std::nullopt;
}

enum class UnitMeaning { Plain, Decibel, Percent };

struct UnitMatch
{
    std::size_t length = 0;
    UnitMeaning meaning = UnitMeaning::Plain;
};

/// The unit symbol of `kind` at the start of `text`, longest spelling first.
std::optional<UnitMatch> unitAt(std::string_view text, ValueKind kind)
{
    auto startsWith = [text](std::string_view symbol) {
        return text.substr(0, symbol.size()) == symbol;
    };
    switch (kind) {
    case ValueKind::Resistance: {
        const std::string lower = toLower(text.substr(0, 4));
        if (lower == "ohms")
            return UnitMatch{4};
        if (lower.substr(0, 3) == "ohm")
            return UnitMatch{3};
        if (startsWith(kOmega))
            return UnitMatch{kOmega.size()};
        if (startsWith(kOhmSign))
            return UnitMatch{kOhmSign.size()};
        if (startsWith("R"))
            return UnitMatch{1};
        return std::nullopt;
    }
    case ValueKind::Capacitance:
        return startsWith("F") ? std::optional(UnitMatch{1}) : std::nullopt;
    case ValueKind::Inductance:
        return startsWith("H") ? std::optional(UnitMatch{1}) : std::nullopt;
    case ValueKind::Frequency:
        return startsWith("Hz") ? std::optional(UnitMatch{2}) : std::nullopt;
    case ValueKind::Gain:
        for (std::string_view symbol : {"V/V", "V/A", "A/V", "A/A"}) {
            if (startsWith(symbol))
                return UnitMatch{symbol.size()};
        }
        if (startsWith("dB"))
            return UnitMatch{2, UnitMeaning::Decibel};
        return std::nullopt;
    case ValueKind::Tolerance:
        return startsWith("%") ? std::optional(UnitMatch{1, UnitMeaning::Percent}) : std::nullopt;
    case ValueKind::Current:
        return startsWith("A") ? std::optional(UnitMatch{1}) : std::nullopt;
    case ValueKind::Plain:
        return std::nullopt;
    }
    return std::nullopt;
}

Diagnostic failure(std::string message)
{
    Diagnostic diagnostic;
    diagnostic.message = std::move(message);
    return diagnostic;
}

Diagnostic notAValue(std::string_view text, std::string_view reason)
{
    return failure(quoted(text) + " is not a value: " + std::string(reason));
}

/// Digits `digits` times 10^`exponent`, correctly rounded; nullopt when not representable.
/// `tooLarge` tells which way it failed.
std::optional<double> decimalToDouble(const std::string &digits, long exponent, bool &tooLarge)
{
    const std::string text = digits + "e" + std::to_string(exponent);
    double value = 0.0;
    const auto [ptr, ec] = std::from_chars(text.data(), text.data() + text.size(), value);
    if (ec == std::errc() && std::isfinite(value) && ptr == text.data() + text.size())
        return value;
    const std::size_t firstNonZero = digits.find_first_not_of('0');
    const long magnitude
        = static_cast<long>(digits.size() - std::min(firstNonZero, digits.size())) + exponent;
    tooLarge = magnitude > 0;
    return std::nullopt;
}

/// Number rounded to `significantDigits`: value = d1.d2d3... x 10^exponent.
struct Decimal
{
    std::string digits;
    int exponent = 0;
};

Decimal roundedDecimal(double magnitude, int significantDigits)
{
    std::array<char, 64> buffer{};
    const auto result = std::to_chars(buffer.data(), buffer.data() + buffer.size(), magnitude,
                                      std::chars_format::scientific, significantDigits - 1);
    const std::string_view text(buffer.data(),
                                static_cast<std::size_t>(result.ptr - buffer.data()));
    const std::size_t e = text.find('e');
    Decimal decimal;
    for (char c : text.substr(0, e)) {
        if (isDigit(c))
            decimal.digits += c;
    }
    std::string_view exponentText = text.substr(e + 1);
    const bool negativeExponent = !exponentText.empty() && exponentText.front() == '-';
    if (!exponentText.empty() && (exponentText.front() == '+' || exponentText.front() == '-'))
        exponentText.remove_prefix(1);
    std::from_chars(exponentText.data(), exponentText.data() + exponentText.size(),
                    decimal.exponent);
    if (negativeExponent)
        decimal.exponent = -decimal.exponent;
    return decimal;
}

/// Places the point after `integerDigits` digits (padding with zeros either side) and drops
/// trailing zeros of the fraction.
std::string placePoint(const std::string &digits, int integerDigits)
{
    std::string integerPart;
    std::string fraction;
    if (integerDigits <= 0) {
        integerPart = "0";
        fraction = std::string(static_cast<std::size_t>(-integerDigits), '0') + digits;
    } else if (static_cast<std::size_t>(integerDigits) >= digits.size()) {
        integerPart = digits + std::string(integerDigits - digits.size(), '0');
    } else {
        integerPart = digits.substr(0, static_cast<std::size_t>(integerDigits));
        fraction = digits.substr(static_cast<std::size_t>(integerDigits));
    }
    while (!fraction.empty() && fraction.back() == '0')
        fraction.pop_back();
    return fraction.empty() ? integerPart : integerPart + "." + fraction;
}

int floorDiv(int a, int b)
{
    return a / b - ((a % b != 0) && ((a < 0) != (b < 0)) ? 1 : 0);
}

std::string_view prefixSymbol(int exponent)
{
    switch (exponent) {
    case -15:
        return "f";
    case -12:
        return "p";
    case -9:
        return "n";
    case -6:
        return kMicroSign;
    case -3:
        return "m";
    case 3:
        return "k";
    case 6:
        return "M";
    case 9:
        return "G";
    case 12:
        return "T";
    default:
        return "";
    }
}

int clampDigits(int significantDigits)
{
    return std::clamp(significantDigits, 1, 17);
}

/// `text` without the spaces around it.
std::string_view trimmed(std::string_view text)
{
    while (!text.empty() && isSpace(text.front()))
        text.remove_prefix(1);
    while (!text.empty() && isSpace(text.back()))
        text.remove_suffix(1);
    return text;
}

/// An exponent ("e-12", "E+3") at s[pos]: its value, capped at 10^6 either way (any
/// exponent beyond overflows or underflows anyway), with `pos` moved past it; 0 with `pos`
/// unchanged when no exponent with digits stands there.
long readExponent(std::string_view s, std::size_t &pos)
{
    const auto at = [&s](std::size_t i) {
        return i < s.size() ? s[i] : '\0';
    };
    if (at(pos) != 'e' && at(pos) != 'E')
        return 0;
    std::size_t i = pos + 1;
    bool negative = false;
    if (at(i) == '+' || at(i) == '-') {
        negative = at(i) == '-';
        ++i;
    }
    if (!isDigit(at(i)))
        return 0;
    long exponent = 0;
    while (isDigit(at(i))) {
        exponent = std::min(exponent * 10 + (s[i] - '0'), 1000000L);
        ++i;
    }
    pos = i;
    return negative ? -exponent : exponent;
}

/// `value` when `range` allows it, else a diagnostic quoting `text`.
Result<double> inRange(double value, std::string_view text, ValueRange range)
{
    switch (range) {
    case ValueRange::Positive:
        if (!(value > 0.0))
            return failure(quoted(text)
                           + " is not allowed here: the value must be greater than zero");
        break;
    case ValueRange::NonNegative:
        if (value < 0.0)
            return failure(quoted(text) + " is not allowed here: the value must not be negative");
        break;
    case ValueRange::Any:
        break;
    }
    return value;
}

} // namespace

Result<double> parseValue(std::string_view text, ValueKind kind, ValueRange range)
{
    const std::string_view s = trimmed(text);
    if (s.empty())
        return notAValue(text, "the text is empty");

    std::size_t pos = 0;
    const auto at = [&s](std::size_t i) {
        return i < s.size() ? s[i] : '\0';
    };
    const auto skipSpaces = [&] {
        while (pos < s.size() && isSpace(s[pos]))
            ++pos;
    };

    bool negative = false;
    if (at(pos) == '+' || at(pos) == '-') {
        negative = at(pos) == '-';
        ++pos;
    }
    const std::string rest = toLower(s.substr(pos, 3));
    if (rest == "nan" || rest == "inf")
        return notAValue(text, "it must be a finite number");

    std::string integerDigits;
    std::string fractionDigits;
    while (isDigit(at(pos)))
        integerDigits += s[pos++];
    bool hasPoint = false;
    if (at(pos) == '.') {
        hasPoint = true;
        ++pos;
        while (isDigit(at(pos)))
            fractionDigits += s[pos++];
    }

    // RKM code: the prefix letter (or R for ohms) stands where the decimal point would be.
    const auto rkmLetterAt = [&](std::size_t i) -> std::optional<std::pair<int, std::size_t>> {
        if (kind == ValueKind::Resistance && at(i) == 'R')
            return std::pair{0, std::size_t{1}};
        if (const auto prefix = prefixAt(s.substr(std::min(i, s.size()))))
            return std::pair{prefix->exponent, prefix->symbol.size()};
        return std::nullopt;
    };

    bool hasPrefix = false;
    int prefixExponent = 0;
    bool isRkm = false;
    if (integerDigits.empty() && fractionDigits.empty()) {
        const auto letter = hasPoint ? std::nullopt : rkmLetterAt(pos);
        if (!letter || !isDigit(at(pos + letter->second)))
            return notAValue(text, "it does not start with a number");
        isRkm = true;
    } else if (!hasPoint) {
        const auto letter = rkmLetterAt(pos);
        isRkm = letter && isDigit(at(pos + letter->second));
    }
    if (isRkm) {
        const auto letter = rkmLetterAt(pos);
        hasPrefix = true;
        prefixExponent = letter->first;
        pos += letter->second;
        while (isDigit(at(pos)))
            fractionDigits += s[pos++];
    }

    const long exponent = isRkm ? 0 : readExponent(s, pos);

    skipSpaces();
    if (!isRkm) {
        if (const auto prefix = prefixAt(s.substr(pos))) {
            hasPrefix = true;
            prefixExponent = prefix->exponent;
            pos += prefix->symbol.size();
            skipSpaces();
        }
    }
    UnitMeaning meaning = UnitMeaning::Plain;
    if (const auto unit = unitAt(s.substr(pos), kind)) {
        meaning = unit->meaning;
        pos += unit->length;
        skipSpaces();
    }
    if (pos < s.size()) {
        std::string_view before = s.substr(0, pos);
        while (!before.empty() && isSpace(before.back()))
            before.remove_suffix(1);
        return notAValue(text,
                         "unexpected text " + quoted(s.substr(pos)) + " after " + quoted(before));
    }
    if (hasPrefix && meaning == UnitMeaning::Decibel)
        return notAValue(text, "an SI prefix cannot be combined with dB");
    if (hasPrefix && meaning == UnitMeaning::Percent)
        return notAValue(text, "an SI prefix cannot be combined with %");

    const std::string digits = integerDigits + fractionDigits;
    long decimalExponent = exponent - static_cast<long>(fractionDigits.size());
    if (meaning != UnitMeaning::Decibel)
        decimalExponent += prefixExponent;
    if (meaning == UnitMeaning::Percent)
        decimalExponent -= 2;
    bool tooLarge = false;
    const std::optional<double> magnitude = decimalToDouble(digits, decimalExponent, tooLarge);
    if (!magnitude) {
        return notAValue(text,
                         tooLarge ? "the number is too large (not finite)"
                                  : "the number is too small to represent");
    }

    double value = negative ? -*magnitude : *magnitude;
    if (meaning == UnitMeaning::Decibel) {
        value = std::pow(10.0, value / 20.0);
        if (!std::isfinite(value))
            return notAValue(text, "the gain is too large (not finite)");
    }
    if (value == 0.0)
        value = 0.0; // no "-0"

    return inRange(value, text, range);
}

std::string unitSymbol(ValueKind kind)
{
    static constexpr std::array<EnumName<ValueKind, std::string_view>, 8> kSymbols{
        {{ValueKind::Resistance, kOmega},
         {ValueKind::Capacitance, "F"},
         {ValueKind::Inductance, "H"},
         {ValueKind::Frequency, "Hz"},
         {ValueKind::Gain, "V/V"},
         {ValueKind::Tolerance, "%"},
         {ValueKind::Current, "A"},
         {ValueKind::Plain, ""}}};
    return std::string(nameOf(kSymbols, kind, std::string_view()));
}

std::string nonFiniteText(double value)
{
    if (std::isnan(value))
        return std::string(kNoValue);
    if (std::isinf(value))
        return value > 0 ? "\u221E" : "-\u221E";
    return {};
}

std::string formatPlain(double value, int precision)
{
    if (!std::isfinite(value))
        return nonFiniteText(value);
    std::ostringstream os;
    os.precision(precision);
    os << value;
    return os.str();
}

std::string formatFixed(double value, int decimals)
{
    if (!std::isfinite(value))
        return nonFiniteText(value);
    std::ostringstream os;
    os.setf(std::ios::fixed);
    os.precision(decimals);
    os << value;
    std::string text = os.str();
    // A value that rounds to zero is "0.00", not "-0.00" (|T| of 0.9999 is 0.00 dB).
    if (text.front() == '-' && text.find_first_not_of("-0.") == std::string::npos)
        text.erase(0, 1);
    return text;
}

std::string formatEngineering(double value, int significantDigits, std::string_view unit)
{
    if (std::isnan(value))
        return std::string(kNoValue);
    if (std::isinf(value))
        return nonFiniteText(value) + (unit.empty() ? "" : " " + std::string(unit));
    const std::string unitText(unit);
    if (value == 0.0)
        return unit.empty() ? "0" : "0 " + unitText;

    const Decimal decimal = roundedDecimal(std::fabs(value), clampDigits(significantDigits));
    const std::string sign = value < 0.0 ? "-" : "";
    const int engineeringExponent = floorDiv(decimal.exponent, 3) * 3;
    if (engineeringExponent < -15 || engineeringExponent > 12) {
        // Beyond femto and tera there is no prefix to use: plain scientific notation.
        const std::string number
            = placePoint(decimal.digits, 1) + "e" + std::to_string(decimal.exponent);
        return sign + number + (unit.empty() ? "" : " " + unitText);
    }
    const std::string number
        = placePoint(decimal.digits, decimal.exponent - engineeringExponent + 1);
    const std::string prefix(prefixSymbol(engineeringExponent));
    return sign + number + (unit.empty() ? prefix : " " + prefix + unitText);
}

std::string formatValue(double value, ValueKind kind, int significantDigits)
{
    if (std::isnan(value))
        return std::string(kNoValue);
    if (std::isinf(value))
        return formatEngineering(value, significantDigits, unitSymbol(kind));
    switch (kind) {
    case ValueKind::Tolerance: {
        // Percent without a space ("1%"), the way tolerances are printed on parts and in
        // design files; no SI prefix.
        const double percent = value * 100.0;
        if (percent == 0.0)
            return "0%";
        const Decimal decimal = roundedDecimal(std::fabs(percent), clampDigits(significantDigits));
        return (percent < 0.0 ? "-" : "") + placePoint(decimal.digits, decimal.exponent + 1) + "%";
    }
    case ValueKind::Gain:
        // The prefix belongs to the number, not to the unit: "-220k V/V".
        return formatEngineering(value, significantDigits) + " " + unitSymbol(kind);
    default:
        return formatEngineering(value, significantDigits, unitSymbol(kind));
    }
}

std::string formatRkm(double value, ValueKind kind, int significantDigits)
{
    if (!std::isfinite(value))
        return std::string(kNoValue);
    // RKM code is defined for resistors and capacitors; other kinds get the bare engineering
    // form ("4.7u"), which parseValue reads back as well.
    if (kind != ValueKind::Resistance && kind != ValueKind::Capacitance)
        return formatEngineering(value, significantDigits);
    if (value == 0.0)
        return kind == ValueKind::Resistance ? "0R" : "0";
    if (value < 0.0)
        return "-" + formatRkm(-value, kind, significantDigits);

    Decimal decimal = roundedDecimal(value, clampDigits(significantDigits));
    while (decimal.digits.size() > 1 && decimal.digits.back() == '0')
        decimal.digits.pop_back();

    // Capacitors stop at m so that every code reads back through parseValue (no "F" letter).
    const int lowest = kind == ValueKind::Resistance ? 0 : -12;
    const int highest = kind == ValueKind::Resistance ? 12 : -3;
    const int letterExponent = std::clamp(floorDiv(decimal.exponent, 3) * 3, lowest, highest);
    const std::string letter = letterExponent == 0 ? "R"
        : letterExponent == -6                     ? "u"
                                                   : std::string(prefixSymbol(letterExponent));

    const int integerDigits = decimal.exponent - letterExponent + 1;
    if (integerDigits <= 0)
        return letter + std::string(static_cast<std::size_t>(-integerDigits), '0') + decimal.digits;
    std::string digits = decimal.digits;
    if (digits.size() < static_cast<std::size_t>(integerDigits))
        digits.append(static_cast<std::size_t>(integerDigits) - digits.size(), '0');
    const std::string integerPart = digits.substr(0, static_cast<std::size_t>(integerDigits));
    const std::string fraction = digits.substr(static_cast<std::size_t>(integerDigits));
    if (!fraction.empty())
        return integerPart + letter + fraction;
    // One digit gets a trailing zero so the letter never ends a one-digit code: 1R0, 1u0, 4k0.
    return integerDigits == 1 ? integerPart + letter + "0" : integerPart + letter;
}

double toDecibels(double linearMagnitude)
{
    if (std::isnan(linearMagnitude))
        return linearMagnitude;
    if (!(linearMagnitude > 0.0))
        return -std::numeric_limits<double>::infinity();
    return 20.0 * std::log10(linearMagnitude);
}

} // namespace loopsketch
