#include "loopsketch/base/eseries.h"

#include <gtest/gtest.h>

#include <cmath>
#include <fstream>
#include <map>
#include <ostream>
#include <set>
#include <sstream>
#include <string>
#include <vector>

using namespace loopsketch;

namespace {

/// The IEC 60063 table of `series` (one decade, as printed), read from
/// tests/data/standards/iec60063.txt (sources named there).
const std::vector<double> &standardTable(ESeries series)
{
    static const std::map<std::string, std::vector<double>> tables = [] {
        std::map<std::string, std::vector<double>> read;
        std::ifstream in(std::string(LOOPSKETCH_TEST_DATA_DIR) + "/standards/iec60063.txt");
        std::string line;
        while (std::getline(in, line)) {
            if (line.empty() || line[0] == '#')
                continue;
            std::istringstream fields(line);
            std::string name;
            fields >> name;
            for (double v; fields >> v;)
                read[name].push_back(v);
        }
        return read;
    }();
    static const std::vector<double> none;
    const auto found = tables.find(toString(series));
    return found == tables.end() ? none : found->second;
}

// Relative tolerance for values that should be the same double up to rounding.
constexpr double kTight = 1e-12;

void expectRelativeNear(double actual, double expected, double relative)
{
    EXPECT_NEAR(actual, expected, relative * std::fabs(expected))
        << "actual " << actual << ", expected " << expected;
}

/// 10^(i/n) rounded half-up to `digits` significant digits, for i in [0, n).
double roundedGeometric(int i, int n, int digits)
{
    const double x = std::pow(10.0, static_cast<double>(i) / n);
    const double scale = std::pow(10.0, digits - 1);
    return std::floor(x * scale + 0.5) / scale;
}

/// The table entries that differ from the rounded geometric series.
std::set<int> deviationsFromGeometric(const std::vector<double> &table, int digits)
{
    std::set<int> indices;
    const int n = static_cast<int>(table.size());
    for (int i = 0; i < n; ++i) {
        if (std::fabs(table[i] - roundedGeometric(i, n, digits)) > 1e-9)
            indices.insert(i);
    }
    return indices;
}

std::set<double> valuesAt(const std::vector<double> &table, const std::set<int> &indices)
{
    std::set<double> values;
    for (int i : indices)
        values.insert(table[i]);
    return values;
}

/// The entries of the standard's two-digit table of `series` that differ from the rounded
/// geometric series.
std::set<double> standardDeviatingValues(ESeries series)
{
    return valuesAt(standardTable(series), deviationsFromGeometric(standardTable(series), 2));
}

} // namespace

class ESeriesTable : public testing::TestWithParam<ESeries>
{
};

// IEC 60063 (reference-values.md §1.1): every entry of the library's table.
TEST_P(ESeriesTable, MatchesStandardEntryByEntry)
{
    const ESeries series = GetParam();
    const std::vector<double> &expected = standardTable(series);
    const std::span<const double> actual = mantissas(series);
    ASSERT_EQ(actual.size(), expected.size()) << toString(series);
    for (std::size_t i = 0; i < expected.size(); ++i)
        EXPECT_NEAR(actual[i], expected[i], 1e-12) << toString(series) << " entry " << i;
}

// The count is what the series is named after; reference-values.md §1.1 records a hobby
// script with 193 E192 entries, so the count is checked, not only membership.
TEST_P(ESeriesTable, HasNameCountOfEntries)
{
    const ESeries series = GetParam();
    const int count = std::stoi(toString(series).substr(1));
    EXPECT_EQ(valuesPerDecade(series), count);
    EXPECT_EQ(static_cast<int>(mantissas(series).size()), count);
    EXPECT_EQ(static_cast<int>(standardTable(series).size()), count);
}

TEST_P(ESeriesTable, EntriesAscendWithinOneDecade)
{
    const std::span<const double> table = mantissas(GetParam());
    EXPECT_NEAR(table.front(), 1.0, 1e-12);
    EXPECT_LT(table.back(), 10.0);
    for (std::size_t i = 1; i < table.size(); ++i)
        EXPECT_GT(table[i], table[i - 1]);
}

// Every table value, over decades from 1 p to 100 G: a member, its own nearest value, and
// next/previous walk to the neighbouring table entry (IEC 60063 tables repeat per decade).
TEST_P(ESeriesTable, EveryEntryIsMemberAndNeighbourAcrossDecades)
{
    const ESeries series = GetParam();
    const std::vector<double> &table = standardTable(series);
    const int n = static_cast<int>(table.size());
    for (int decade = -12; decade <= 11; ++decade) {
        for (int i = 0; i < n; ++i) {
            const double value = table[i] * std::pow(10.0, decade);
            const double next
                = i + 1 < n ? table[i + 1] * std::pow(10.0, decade) : std::pow(10.0, decade + 1);
            const double previous = i > 0 ? table[i - 1] * std::pow(10.0, decade)
                                          : table[n - 1] * std::pow(10.0, decade - 1);
            SCOPED_TRACE(toString(series) + " value " + std::to_string(value));
            EXPECT_TRUE(isSeriesValue(series, value));
            expectRelativeNear(nearestValue(series, value), value, kTight);
            expectRelativeNear(nextValue(series, value), next, kTight);
            expectRelativeNear(previousValue(series, value), previous, kTight);
        }
    }
}

TEST_P(ESeriesTable, OneDecadeInRangeHoldsTheWholeTable)
{
    const ESeries series = GetParam();
    const std::vector<double> &table = standardTable(series);
    const std::vector<double> values = valuesInRange(series, 100.0, 999.999);
    ASSERT_EQ(values.size(), table.size());
    for (std::size_t i = 0; i < table.size(); ++i)
        expectRelativeNear(values[i], table[i] * 100.0, kTight);
}

INSTANTIATE_TEST_SUITE_P(AllSeries, ESeriesTable,
                         testing::Values(ESeries::E3, ESeries::E6, ESeries::E12, ESeries::E24,
                                         ESeries::E48, ESeries::E96, ESeries::E192),
                         [](const testing::TestParamInfo<ESeries> &paramInfo) {
                             return toString(paramInfo.param);
                         });

// Nesting (reference-values.md §1.1 verification): each series is every second entry of
// the next denser one, in the standard's copy and in the library.
TEST(ESeries, EachSeriesIsEverySecondEntryOfTheDenserOne)
{
    const std::vector<ESeries> order{ESeries::E3,  ESeries::E6,  ESeries::E12, ESeries::E24,
                                     ESeries::E48, ESeries::E96, ESeries::E192};
    for (std::size_t s = 0; s + 1 < order.size(); ++s) {
        if (order[s] == ESeries::E24)
            continue; // E48 is not E24 refined: two and three counting digits differ.
        const std::span<const double> coarse = mantissas(order[s]);
        const std::span<const double> fine = mantissas(order[s + 1]);
        ASSERT_EQ(fine.size(), 2 * coarse.size());
        for (std::size_t i = 0; i < coarse.size(); ++i) {
            EXPECT_NEAR(coarse[i], fine[2 * i], 1e-12)
                << toString(order[s]) << " entry " << i << " vs " << toString(order[s + 1]);
            EXPECT_NEAR(standardTable(order[s])[i], standardTable(order[s + 1])[2 * i], 1e-12);
        }
    }
}

TEST(ESeries, E24IsNotASubsetOfE48)
{
    // IEC 60063 tables (reference-values.md §1.1): E48 has three counting digits, so E24's
    // 1.2, 1.3, 1.6 and 1.8 are not in it (E48 has 1.21, 1.33, 1.62, 1.78).
    for (double value : {1.2, 1.3, 1.6, 1.8, 1.2 * 1000})
        EXPECT_FALSE(isSeriesValue(ESeries::E48, value)) << value;
    EXPECT_TRUE(isSeriesValue(ESeries::E48, 1.21));
}

// reference-values.md §1.1 (zh-Wikipedia: the E3-E24 values from 2.7 to 4.7 and 8.2 do not
// follow rounding): exactly these E24 entries differ from 10^(i/24) rounded to 2 digits.
TEST(ESeries, E24DeviatesFromRoundedGeometricSeriesExactlyAtDocumentedEntries)
{
    const std::vector<double> table(mantissas(ESeries::E24).begin(), mantissas(ESeries::E24).end());
    const std::set<double> deviating = valuesAt(table, deviationsFromGeometric(table, 2));
    const std::set<double> documented{2.7, 3.0, 3.3, 3.6, 3.9, 4.3, 4.7, 8.2};
    EXPECT_EQ(deviating, documented);
    EXPECT_EQ(standardDeviatingValues(ESeries::E24), documented);
}

// reference-values.md §1.1: the coarser series inherit the E24 deviations.
TEST(ESeries, CoarserSeriesInheritTheE24Deviations)
{
    EXPECT_EQ(standardDeviatingValues(ESeries::E12), (std::set<double>{2.7, 3.3, 3.9, 4.7, 8.2}));
    EXPECT_EQ(standardDeviatingValues(ESeries::E6), (std::set<double>{3.3, 4.7}));
    EXPECT_EQ(standardDeviatingValues(ESeries::E3), (std::set<double>{4.7}));
}

// reference-values.md §1.1: E48 and E96 are the rounded geometric series; E192 differs only
// at index 185 (table 9.20, 10^(185/192) = 9.1948 rounds to 9.19).
TEST(ESeries, ThreeDigitSeriesDeviateOnlyAtE192Index185)
{
    const auto library = [](ESeries series) {
        return std::vector<double>(mantissas(series).begin(), mantissas(series).end());
    };
    EXPECT_TRUE(deviationsFromGeometric(library(ESeries::E48), 3).empty());
    EXPECT_TRUE(deviationsFromGeometric(library(ESeries::E96), 3).empty());
    EXPECT_EQ(deviationsFromGeometric(library(ESeries::E192), 3), (std::set<int>{185}));
    EXPECT_EQ(deviationsFromGeometric(standardTable(ESeries::E192), 3), (std::set<int>{185}));
    EXPECT_NEAR(mantissas(ESeries::E192)[185], 9.20, 1e-12);
    EXPECT_NEAR(roundedGeometric(185, 192, 3), 9.19, 1e-12);
}

// reference-values.md §1.2: E3 40 % (eseries lib; zh-Wikipedia "> 20 %"), E6 20 %, E12 10 %,
// E24 5 %, E48 2 %, E96 1 %, E192 0.5 % (eseries lib, zh-Wikipedia). Convention, not standard.
TEST(ESeries, ConventionalTolerances)
{
    EXPECT_NEAR(conventionalTolerance(ESeries::E3), 0.40, 1e-12);
    EXPECT_GT(conventionalTolerance(ESeries::E3), 0.20);
    EXPECT_NEAR(conventionalTolerance(ESeries::E6), 0.20, 1e-12);
    EXPECT_NEAR(conventionalTolerance(ESeries::E12), 0.10, 1e-12);
    EXPECT_NEAR(conventionalTolerance(ESeries::E24), 0.05, 1e-12);
    EXPECT_NEAR(conventionalTolerance(ESeries::E48), 0.02, 1e-12);
    EXPECT_NEAR(conventionalTolerance(ESeries::E96), 0.01, 1e-12);
    EXPECT_NEAR(conventionalTolerance(ESeries::E192), 0.005, 1e-12);
}

TEST(ESeries, NamesRoundTrip)
{
    EXPECT_EQ(allESeries().size(), 7u);
    for (ESeries series : allESeries()) {
        const std::optional<ESeries> parsed = parseESeries(toString(series));
        ASSERT_TRUE(parsed.has_value()) << toString(series);
        EXPECT_EQ(*parsed, series);
    }
    EXPECT_EQ(toString(ESeries::E24), "E24");
    EXPECT_EQ(parseESeries("e96"), ESeries::E96);
    EXPECT_EQ(parseESeries("E192"), ESeries::E192);
    EXPECT_FALSE(parseESeries("E25").has_value());
    EXPECT_FALSE(parseESeries("E").has_value());
    EXPECT_FALSE(parseESeries("").has_value());
    EXPECT_FALSE(parseESeries("24").has_value());
    EXPECT_FALSE(parseESeries("E24x").has_value());
    EXPECT_FALSE(parseESeries("F24").has_value());
}

// Single look-ups: the series, the value looked up, the steps for stepValue, and the value
// each must give, with where that value comes from.
struct Lookup
{
    enum class Rule { Nearest, Next, Previous, Step };
    const char *source;
    Rule rule;
    ESeries series;
    double x;
    double expected;
    int steps = 0;
};

using Rule = Lookup::Rule;

void PrintTo(const Lookup &l, std::ostream *os)
{
    *os << l.source << " (" << toString(l.series) << ", " << l.x << ")";
}

// Sources: the rob-smallshire/eseries README (reference-values.md §1.3: find_nearest,
// find_greater_than_or_equal, find_nearest_few); IEC 60063 (the tables repeat every decade);
// our documented rules (nearest by logarithmic distance, since common practice has no
// standard definition and linear distance would give 1.0 k for E12 1097; a tie at the
// geometric mean goes to the larger; a value between entries steps to its neighbours; a step
// snaps to the nearest value first).
const Lookup kLookups[] = {
    {"eseries README: find_nearest(E24, 319) = 330", Rule::Nearest, ESeries::E24, 319.0, 330.0},
    {"eseries README: find_greater_than_or_equal(E96, 184) = 187", Rule::Next, ESeries::E96, 184.0,
     187.0},
    {"eseries README: find_nearest_few(E24, 5000), below", Rule::Previous, ESeries::E24, 5000.0,
     4700.0},
    {"eseries README: find_nearest_few(E24, 5000), above", Rule::Next, ESeries::E24, 5000.0,
     5100.0},
    {"eseries README: find_nearest_few(E24, 5000), the one after", Rule::Next, ESeries::E24, 5100.0,
     5600.0},
    {"eseries README: find_nearest_few(E24, 5000), nearest", Rule::Nearest, ESeries::E24, 5000.0,
     5100.0},
    {"rule: logarithmic distance, above", Rule::Nearest, ESeries::E12, 1097.0, 1200.0},
    {"rule: logarithmic distance, below", Rule::Nearest, ESeries::E12, 1094.0, 1000.0},
    {"rule: a tie goes to the larger", Rule::Nearest, ESeries::E12, std::sqrt(1000.0 * 1200.0),
     1200.0},
    {"rule: just under the tie", Rule::Nearest, ESeries::E12,
     std::sqrt(1000.0 * 1200.0) * (1.0 - 1e-9), 1000.0},
    {"IEC 60063: E12 8.2 is followed by 10", Rule::Next, ESeries::E12, 8200.0, 10000.0},
    {"IEC 60063: E12 1.0 is preceded by 0.82", Rule::Previous, ESeries::E12, 1000.0, 820.0},
    {"IEC 60063: E24 9.1 is followed by 10", Rule::Next, ESeries::E24, 9.1e-12, 10e-12},
    {"IEC 60063: E192 1.00 is preceded by 9.88", Rule::Previous, ESeries::E192, 1e6, 988e3},
    {"IEC 60063: E12 nearest across a decade, up", Rule::Nearest, ESeries::E12, 9.5, 10.0},
    {"IEC 60063: E12 nearest across a decade, down", Rule::Nearest, ESeries::E12, 0.00088, 0.00082},
    {"rule: between entries, next", Rule::Next, ESeries::E12, 4800.0, 5600.0},
    {"rule: between entries, previous", Rule::Previous, ESeries::E12, 4800.0, 4700.0},
    {"rule: just above a member, next is the following one", Rule::Next, ESeries::E12, 4700.001,
     5600.0},
    {"rule: just above a member, previous is the member", Rule::Previous, ESeries::E12, 4700.001,
     4700.0},
    {"rule: a step snaps to 4.7 k first, up", Rule::Step, ESeries::E24, 4650.0, 5100.0, 1},
    {"rule: a step snaps to 4.7 k first, down", Rule::Step, ESeries::E24, 4650.0, 4300.0, -1},
    {"rule: no step only snaps", Rule::Step, ESeries::E24, 4650.0, 4700.0, 0},
    {"rule: twelve E12 steps are a decade", Rule::Step, ESeries::E12, 1000.0, 10000.0, 12},
    {"rule: thirteen E12 steps down cross a decade", Rule::Step, ESeries::E12, 1000.0, 82.0, -13},
    {"rule: three E3 steps are a decade", Rule::Step, ESeries::E3, 2.2e-12, 22e-12, 3},
};

class ESeriesLookup : public testing::TestWithParam<Lookup>
{
};

TEST_P(ESeriesLookup, GivesTheExpectedValue)
{
    const Lookup &l = GetParam();
    double found = 0;
    switch (l.rule) {
    case Rule::Nearest:
        found = nearestValue(l.series, l.x);
        break;
    case Rule::Next:
        found = nextValue(l.series, l.x);
        break;
    case Rule::Previous:
        found = previousValue(l.series, l.x);
        break;
    case Rule::Step:
        found = stepValue(l.series, l.x, l.steps);
        break;
    }
    SCOPED_TRACE(l.source);
    expectRelativeNear(found, l.expected, kTight);
}

INSTANTIATE_TEST_SUITE_P(Rules, ESeriesLookup, testing::ValuesIn(kLookups));

// rob-smallshire/eseries README: find_greater_than_or_equal(E96, 184) = 187, as the first
// value of a range too.
TEST(ESeries, RangeFrom184InE96StartsAt187)
{
    const std::vector<double> values = valuesInRange(ESeries::E96, 184.0, 200.0);
    ASSERT_FALSE(values.empty());
    expectRelativeNear(values.front(), 187.0, kTight);
}

TEST(ESeries, ValuesInRangeIsInclusiveWithRelativeTolerance)
{
    const std::vector<double> decade = valuesInRange(ESeries::E12, 1000.0, 10000.0);
    ASSERT_EQ(decade.size(), 13u);
    expectRelativeNear(decade.front(), 1000.0, kTight);
    expectRelativeNear(decade.back(), 10000.0, kTight);
    // Ends a hair inside still include them (1e-9 relative).
    EXPECT_EQ(valuesInRange(ESeries::E12, 1000.0 * (1 + 1e-12), 10000.0 * (1 - 1e-12)).size(), 13u);
    // ... but a clear miss does not.
    EXPECT_EQ(valuesInRange(ESeries::E12, 1000.0 * (1 + 1e-6), 10000.0 * (1 - 1e-6)).size(), 11u);
    EXPECT_EQ(valuesInRange(ESeries::E12, 4.7 * 1000, 4.7 * 1000).size(), 1u);
    EXPECT_TRUE(valuesInRange(ESeries::E12, 4800.0, 5500.0).empty());
    EXPECT_TRUE(valuesInRange(ESeries::E12, 10000.0, 1000.0).empty());
    EXPECT_EQ(valuesInRange(ESeries::E24, 1.0, 1e6).size(), 6u * 24u + 1u);
}

// Floating point: 4.7 * 1000 is 4700.000000000001, still the E12 value 4.7 k; results
// come back as the double nearest to the decimal value.
TEST(ESeries, ComputedProductsCountAsMembers)
{
    EXPECT_TRUE(isSeriesValue(ESeries::E12, 4.7 * 1000));
    EXPECT_TRUE(isSeriesValue(ESeries::E12, 4.7 * 1e-9));
    EXPECT_TRUE(isSeriesValue(ESeries::E24, 0.1 * 3 * 10)); // 3.0000000000000004
    EXPECT_TRUE(isSeriesValue(ESeries::E192, 4.7 * 1000));
    EXPECT_FALSE(isSeriesValue(ESeries::E96, 4.7 * 1000)); // E96 has 4.75, not 4.70
    EXPECT_FALSE(isSeriesValue(ESeries::E12, 4800.0));
    EXPECT_FALSE(isSeriesValue(ESeries::E12, 4700.0 * (1 + 1e-6)));
    EXPECT_DOUBLE_EQ(nearestValue(ESeries::E12, 4.7 * 1000), 4700.0);
    EXPECT_DOUBLE_EQ(nearestValue(ESeries::E12, 4690.0), 4700.0);
    EXPECT_DOUBLE_EQ(nearestValue(ESeries::E24, 4.7e-9 * 1.01), 4.7e-9);
    EXPECT_DOUBLE_EQ(nextValue(ESeries::E12, 3900.0), 4700.0);
}

TEST(ESeries, UnusableInputGivesNaNOrNothing)
{
    const double nan = std::nan("");
    const double inf = HUGE_VAL;
    for (double bad : {0.0, -4700.0, nan, inf}) {
        EXPECT_TRUE(std::isnan(nearestValue(ESeries::E24, bad))) << bad;
        EXPECT_TRUE(std::isnan(nextValue(ESeries::E24, bad))) << bad;
        EXPECT_TRUE(std::isnan(previousValue(ESeries::E24, bad))) << bad;
        EXPECT_TRUE(std::isnan(stepValue(ESeries::E24, bad, 1))) << bad;
        EXPECT_FALSE(isSeriesValue(ESeries::E24, bad)) << bad;
        EXPECT_TRUE(valuesInRange(ESeries::E24, bad, 1000.0).empty()) << bad;
    }
    EXPECT_TRUE(valuesInRange(ESeries::E24, 1.0, inf).empty());
}
