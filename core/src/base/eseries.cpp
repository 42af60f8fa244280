#include "loopsketch/base/eseries.h"

#include "loopsketch/base/lookup.h"

#include <array>
#include <cmath>
#include <cstdint>
#include <limits>

namespace loopsketch {
namespace {

// IEC 60063 tables, one decade each, exactly as printed (E24 and below with two counting
// digits, E48 and above with three). Not the rounded geometric series: E24 keeps 2.7, 3.0,
// 3.3, 3.6, 3.9, 4.3, 4.7 and 8.2, and E192 has 9.20 where 10^(185/192) rounds to 9.19.
// Each smaller series is every other value of the next larger one in its group (E12 of
// E24, ..., E96 of E192), so only E24 and E192 are written out.
constexpr std::array<double, 24> kE24{1.0, 1.1, 1.2, 1.3, 1.5, 1.6, 1.8, 2.0, 2.2, 2.4, 2.7, 3.0,
                                      3.3, 3.6, 3.9, 4.3, 4.7, 5.1, 5.6, 6.2, 6.8, 7.5, 8.2, 9.1};

/// Every other value of `table`, from the first: the next smaller series of its group.
template<std::size_t N>
constexpr std::array<double, N / 2> everyOther(const std::array<double, N> &table)
{
    std::array<double, N / 2> half{};
    for (std::size_t i = 0; i < N / 2; ++i)
        half[i] = table[2 * i];
    return half;
}

constexpr std::array<double, 192> kE192{
    1.00, 1.01, 1.02, 1.04, 1.05, 1.06, 1.07, 1.09, 1.10, 1.11, 1.13, 1.14, 1.15, 1.17, 1.18, 1.20,
    1.21, 1.23, 1.24, 1.26, 1.27, 1.29, 1.30, 1.32, 1.33, 1.35, 1.37, 1.38, 1.40, 1.42, 1.43, 1.45,
    1.47, 1.49, 1.50, 1.52, 1.54, 1.56, 1.58, 1.60, 1.62, 1.64, 1.65, 1.67, 1.69, 1.72, 1.74, 1.76,
    1.78, 1.80, 1.82, 1.84, 1.87, 1.89, 1.91, 1.93, 1.96, 1.98, 2.00, 2.03, 2.05, 2.08, 2.10, 2.13,
    2.15, 2.18, 2.21, 2.23, 2.26, 2.29, 2.32, 2.34, 2.37, 2.40, 2.43, 2.46, 2.49, 2.52, 2.55, 2.58,
    2.61, 2.64, 2.67, 2.71, 2.74, 2.77, 2.80, 2.84, 2.87, 2.91, 2.94, 2.98, 3.01, 3.05, 3.09, 3.12,
    3.16, 3.20, 3.24, 3.28, 3.32, 3.36, 3.40, 3.44, 3.48, 3.52, 3.57, 3.61, 3.65, 3.70, 3.74, 3.79,
    3.83, 3.88, 3.92, 3.97, 4.02, 4.07, 4.12, 4.17, 4.22, 4.27, 4.32, 4.37, 4.42, 4.48, 4.53, 4.59,
    4.64, 4.70, 4.75, 4.81, 4.87, 4.93, 4.99, 5.05, 5.11, 5.17, 5.23, 5.30, 5.36, 5.42, 5.49, 5.56,
    5.62, 5.69, 5.76, 5.83, 5.90, 5.97, 6.04, 6.12, 6.19, 6.26, 6.34, 6.42, 6.49, 6.57, 6.65, 6.73,
    6.81, 6.90, 6.98, 7.06, 7.15, 7.23, 7.32, 7.41, 7.50, 7.59, 7.68, 7.77, 7.87, 7.96, 8.06, 8.16,
    8.25, 8.35, 8.45, 8.56, 8.66, 8.76, 8.87, 8.98, 9.09, 9.20, 9.31, 9.42, 9.53, 9.65, 9.76, 9.88};
constexpr std::array<double, 96> kE96 = everyOther(kE192);
constexpr std::array<double, 48> kE48 = everyOther(kE96);
constexpr std::array<double, 12> kE12 = everyOther(kE24);
constexpr std::array<double, 6> kE6 = everyOther(kE12);
constexpr std::array<double, 3> kE3 = everyOther(kE6);

constexpr std::array<ESeries, 7> kAllSeries{ESeries::E3,  ESeries::E6,  ESeries::E12, ESeries::E24,
                                            ESeries::E48, ESeries::E96, ESeries::E192};

/// What each series is: its table and the tolerance its parts conventionally have.
struct SeriesFacts
{
    ESeries series;
    std::span<const double> mantissas;
    double tolerance; ///< fraction
};

// E3: 40 % as in the eseries library; zh-Wikipedia only says "more than 20 %".
constexpr std::array<SeriesFacts, 7> kFacts{{{ESeries::E3, kE3, 0.40},
                                             {ESeries::E6, kE6, 0.20},
                                             {ESeries::E12, kE12, 0.10},
                                             {ESeries::E24, kE24, 0.05},
                                             {ESeries::E48, kE48, 0.02},
                                             {ESeries::E96, kE96, 0.01},
                                             {ESeries::E192, kE192, 0.005}}};

/// The facts of `series`; none (an empty table, tolerance 0) for a value outside the enum.
const SeriesFacts &facts(ESeries series)
{
    static constexpr SeriesFacts kNone{ESeries::E3, {}, 0.0};
    const SeriesFacts *found = findRow(kFacts, &SeriesFacts::series, series);
    return found ? *found : kNone;
}

// Membership and range ends: a value within this relative distance of a series value is
// that value (4.7 * 1000 is 4700.000000000001).
constexpr double kRelativeTolerance = 1e-9;

/// Counting digits after the first one: 1 for E3..E24 (1.0 ... 9.1), 2 for E48..E192.
int fractionDigits(ESeries series)
{
    return valuesPerDecade(series) <= 24 ? 1 : 2;
}

/// 10^n exactly for 0 <= n <= 22 (all such powers are representable in a double).
double exactPowerOfTen(int n)
{
    double power = 1.0;
    for (int i = 0; i < n; ++i)
        power *= 10.0;
    return power;
}

/// Integer `counting` times 10^`exponent`, rounded once: with both factors exact, the single
/// multiplication or division gives the double nearest to the decimal value (4700, 4.7e-9).
double scaledDecimal(std::int64_t counting, int exponent)
{
    const auto c = static_cast<double>(counting);
    if (exponent >= 0 && exponent <= 22)
        return c * exactPowerOfTen(exponent);
    if (exponent < 0 && exponent >= -22)
        return c / exactPowerOfTen(-exponent);
    return c * std::pow(10.0, exponent);
}

/// Series values are numbered across decades: index decade * n + i is mantissa i times
/// 10^decade, so index 0 is 1.0 and index n is 10.
std::int64_t floorDiv(std::int64_t a, std::int64_t b)
{
    const std::int64_t q = a / b;
    return (a % b != 0 && (a < 0) != (b < 0)) ? q - 1 : q;
}

double valueAt(ESeries series, std::int64_t index)
{
    const std::span<const double> table = mantissas(series);
    const auto n = static_cast<std::int64_t>(table.size());
    const std::int64_t decade = floorDiv(index, n);
    const double mantissa = table[static_cast<std::size_t>(index - decade * n)];
    const int digits = fractionDigits(series);
    const auto counting
        = static_cast<std::int64_t>(std::llround(mantissa * exactPowerOfTen(digits)));
    return scaledDecimal(counting, static_cast<int>(decade) - digits);
}

/// Largest index whose value is <= x (x finite and > 0).
std::int64_t floorIndex(ESeries series, double x)
{
    const std::int64_t n = valuesPerDecade(series);
    std::int64_t decade = static_cast<std::int64_t>(std::floor(std::log10(x)));
    // log10 can be off by one next to a power of ten; settle the decade on exact values.
    while (valueAt(series, decade * n) > x)
        --decade;
    while (valueAt(series, (decade + 1) * n) <= x)
        ++decade;
    std::int64_t index = decade * n;
    while (valueAt(series, index + 1) <= x)
        ++index;
    return index;
}

// A value that is not finite and > 0 has no place in a series: the functions below give NaN,
// false or an empty list for it rather than asserting, so bad user data cannot crash a caller.
bool usable(double value)
{
    return std::isfinite(value) && value > 0.0;
}

std::int64_t nearestIndex(ESeries series, double value)
{
    const std::int64_t below = floorIndex(series, value);
    const double lower = valueAt(series, below);
    const double upper = valueAt(series, below + 1);
    const double distanceDown = std::log(value / lower);
    const double distanceUp = std::log(upper / value);
    // Distance by ratio, |ln(value / candidate)|, because tolerances and the series itself are
    // relative; linear distance would favour the lower neighbour. Ties (the geometric mean of
    // two neighbours) go to the larger value.
    return distanceUp <= distanceDown + 1e-12 ? below + 1 : below;
}

} // namespace

std::span<const ESeries> allESeries()
{
    return kAllSeries;
}

std::string toString(ESeries series)
{
    return "E" + std::to_string(valuesPerDecade(series));
}

std::optional<ESeries> parseESeries(std::string_view text)
{
    for (ESeries series : kAllSeries) {
        const std::string name = toString(series);
        if (text.size() != name.size())
            continue;
        if ((text[0] == 'E' || text[0] == 'e')
            && text.substr(1) == std::string_view(name).substr(1))
            return series;
    }
    return std::nullopt;
}

int valuesPerDecade(ESeries series)
{
    return static_cast<int>(facts(series).mantissas.size());
}

std::span<const double> mantissas(ESeries series)
{
    return facts(series).mantissas;
}

double conventionalTolerance(ESeries series)
{
    return facts(series).tolerance;
}

double nearestValue(ESeries series, double value)
{
    if (!usable(value))
        return std::numeric_limits<double>::quiet_NaN();
    return valueAt(series, nearestIndex(series, value));
}

bool isSeriesValue(ESeries series, double value)
{
    if (!usable(value))
        return false;
    const double candidate
        = valueAt(series, floorIndex(series, value * (1.0 + kRelativeTolerance)));
    return std::fabs(candidate - value) <= kRelativeTolerance * value;
}

double nextValue(ESeries series, double value)
{
    if (!usable(value))
        return std::numeric_limits<double>::quiet_NaN();
    return valueAt(series, floorIndex(series, value * (1.0 + kRelativeTolerance)) + 1);
}

double previousValue(ESeries series, double value)
{
    if (!usable(value))
        return std::numeric_limits<double>::quiet_NaN();
    return valueAt(series, floorIndex(series, value * (1.0 - kRelativeTolerance)));
}

double stepValue(ESeries series, double value, int steps)
{
    if (!usable(value))
        return std::numeric_limits<double>::quiet_NaN();
    return valueAt(series, nearestIndex(series, value) + steps);
}

std::vector<double> valuesInRange(ESeries series, double lo, double hi)
{
    std::vector<double> values;
    if (!usable(lo) || !usable(hi) || lo > hi)
        return values;
    const std::int64_t first = floorIndex(series, lo * (1.0 - kRelativeTolerance)) + 1;
    const std::int64_t last = floorIndex(series, hi * (1.0 + kRelativeTolerance));
    for (std::int64_t index = first; index <= last; ++index)
        values.push_back(valueAt(series, index));
    return values;
}

} // namespace loopsketch
