#include "loopsketch/base/eseries.h"

#include <gtest/gtest.h>

#include <cmath>
#include <set>
#include <string>
#include <vector>

using namespace loopsketch;

namespace {

// IEC 60063, table values as listed in /work/shared/reference-values.md §1.1
// (rob-smallshire/eseries, zh-Wikipedia). Typed separately from core/src/base/eseries.cpp.
const std::vector<double> kE3Standard{1.0, 2.2, 4.7};
const std::vector<double> kE6Standard{1.0, 1.5, 2.2, 3.3, 4.7, 6.8};
const std::vector<double> kE12Standard{1.0, 1.2, 1.5, 1.8, 2.2, 2.7, 3.3, 3.9, 4.7, 5.6, 6.8, 8.2};
const std::vector<double> kE24Standard{1.0, 1.1, 1.2, 1.3, 1.5, 1.6, 1.8, 2.0, 2.2, 2.4, 2.7, 3.0,
                                       3.3, 3.6, 3.9, 4.3, 4.7, 5.1, 5.6, 6.2, 6.8, 7.5, 8.2, 9.1};
const std::vector<double> kE48Standard{
    1.00, 1.05, 1.10, 1.15, 1.21, 1.27, 1.33, 1.40, 1.47, 1.54, 1.62, 1.69, 1.78, 1.87, 1.96, 2.05,
    2.15, 2.26, 2.37, 2.49, 2.61, 2.74, 2.87, 3.01, 3.16, 3.32, 3.48, 3.65, 3.83, 4.02, 4.22, 4.42,
    4.64, 4.87, 5.11, 5.36, 5.62, 5.90, 6.19, 6.49, 6.81, 7.15, 7.50, 7.87, 8.25, 8.66, 9.09, 9.53};
const std::vector<double> kE96Standard{
    1.00, 1.02, 1.05, 1.07, 1.10, 1.13, 1.15, 1.18, 1.21, 1.24, 1.27, 1.30, 1.33, 1.37, 1.40, 1.43,
    1.47, 1.50, 1.54, 1.58, 1.62, 1.65, 1.69, 1.74, 1.78, 1.82, 1.87, 1.91, 1.96, 2.00, 2.05, 2.10,
    2.15, 2.21, 2.26, 2.32, 2.37, 2.43, 2.49, 2.55, 2.61, 2.67, 2.74, 2.80, 2.87, 2.94, 3.01, 3.09,
    3.16, 3.24, 3.32, 3.40, 3.48, 3.57, 3.65, 3.74, 3.83, 3.92, 4.02, 4.12, 4.22, 4.32, 4.42, 4.53,
    4.64, 4.75, 4.87, 4.99, 5.11, 5.23, 5.36, 5.49, 5.62, 5.76, 5.90, 6.04, 6.19, 6.34, 6.49, 6.65,
    6.81, 6.98, 7.15, 7.32, 7.50, 7.68, 7.87, 8.06, 8.25, 8.45, 8.66, 8.87, 9.09, 9.31, 9.53, 9.76};
const std::vector<double> kE192Standard{
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

const std::vector<double> &standardTable(ESeries series)
{
    switch (series) {
    case ESeries::E3:
        return kE3Standard;
    case ESeries::E6:
        return kE6Standard;
    case ESeries::E12:
        return kE12Standard;
    case ESeries::E24:
        return kE24Standard;
    case ESeries::E48:
        return kE48Standard;
    case ESeries::E96:
        return kE96Standard;
    case ESeries::E192:
        return kE192Standard;
    }
    return kE3Standard;
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
    EXPECT_EQ(valuesAt(kE24Standard, deviationsFromGeometric(kE24Standard, 2)), documented);
}

// reference-values.md §1.1: the coarser series inherit the E24 deviations.
TEST(ESeries, CoarserSeriesInheritTheE24Deviations)
{
    EXPECT_EQ(valuesAt(kE12Standard, deviationsFromGeometric(kE12Standard, 2)),
              (std::set<double>{2.7, 3.3, 3.9, 4.7, 8.2}));
    EXPECT_EQ(valuesAt(kE6Standard, deviationsFromGeometric(kE6Standard, 2)),
              (std::set<double>{3.3, 4.7}));
    EXPECT_EQ(valuesAt(kE3Standard, deviationsFromGeometric(kE3Standard, 2)),
              (std::set<double>{4.7}));
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
    EXPECT_EQ(deviationsFromGeometric(kE192Standard, 3), (std::set<int>{185}));
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

// rob-smallshire/eseries README (reference-values.md §1.3): find_nearest(E24, 319) = 330.
TEST(ESeries, NearestFromEseriesReadme)
{
    expectRelativeNear(nearestValue(ESeries::E24, 319.0), 330.0, kTight);
}

// rob-smallshire/eseries README: find_greater_than_or_equal(E96, 184) = 187.
TEST(ESeries, SmallestE96AtLeast184Is187)
{
    expectRelativeNear(nextValue(ESeries::E96, 184.0), 187.0, kTight);
    const std::vector<double> values = valuesInRange(ESeries::E96, 184.0, 200.0);
    ASSERT_FALSE(values.empty());
    expectRelativeNear(values.front(), 187.0, kTight);
}

// rob-smallshire/eseries README: find_nearest_few(E24, 5000) = (4700, 5100, 5600).
TEST(ESeries, NeighboursOf5000InE24)
{
    expectRelativeNear(previousValue(ESeries::E24, 5000.0), 4700.0, kTight);
    expectRelativeNear(nextValue(ESeries::E24, 5000.0), 5100.0, kTight);
    expectRelativeNear(nextValue(ESeries::E24, 5100.0), 5600.0, kTight);
    expectRelativeNear(nearestValue(ESeries::E24, 5000.0), 5100.0, kTight);
}

// Our documented rule (logarithmic distance); common practice has no standard definition
// (reference-values.md §1.3: linear distance would give 1.0 k for E12, 1097).
TEST(ESeries, NearestUsesLogarithmicDistance)
{
    expectRelativeNear(nearestValue(ESeries::E12, 1097.0), 1200.0, kTight);
    expectRelativeNear(nearestValue(ESeries::E12, 1094.0), 1000.0, kTight);
}

// Our documented rule: at the geometric mean of two neighbours the larger one wins.
TEST(ESeries, NearestTieGoesToLarger)
{
    const double mean = std::sqrt(1000.0 * 1200.0);
    expectRelativeNear(nearestValue(ESeries::E12, mean), 1200.0, kTight);
    expectRelativeNear(nearestValue(ESeries::E12, mean * (1.0 - 1e-9)), 1000.0, kTight);
}

// IEC 60063 tables repeat every decade: E12 8.2 is followed by 10, 1.0 preceded by 0.82.
TEST(ESeries, NextAndPreviousCrossDecades)
{
    expectRelativeNear(nextValue(ESeries::E12, 8200.0), 10000.0, kTight);
    expectRelativeNear(previousValue(ESeries::E12, 1000.0), 820.0, kTight);
    expectRelativeNear(nextValue(ESeries::E24, 9.1e-12), 10e-12, kTight);
    expectRelativeNear(previousValue(ESeries::E192, 1e6), 988e3, kTight);
    expectRelativeNear(nearestValue(ESeries::E12, 9.5), 10.0, kTight);
    expectRelativeNear(nearestValue(ESeries::E12, 0.00088), 0.00082, kTight);
}

TEST(ESeries, ValueBetweenEntriesStepsToNeighbours)
{
    expectRelativeNear(nextValue(ESeries::E12, 4800.0), 5600.0, kTight);
    expectRelativeNear(previousValue(ESeries::E12, 4800.0), 4700.0, kTight);
    // Just above a member: next is the following member, previous the member itself.
    expectRelativeNear(nextValue(ESeries::E12, 4700.001), 5600.0, kTight);
    expectRelativeNear(previousValue(ESeries::E12, 4700.001), 4700.0, kTight);
}

TEST(ESeries, StepSnapsFirstThenSteps)
{
    expectRelativeNear(stepValue(ESeries::E24, 4650.0, 1), 5100.0, kTight); // snaps to 4.7 k
    expectRelativeNear(stepValue(ESeries::E24, 4650.0, -1), 4300.0, kTight);
    expectRelativeNear(stepValue(ESeries::E24, 4650.0, 0), 4700.0, kTight);
    expectRelativeNear(stepValue(ESeries::E12, 1000.0, 12), 10000.0, kTight);
    expectRelativeNear(stepValue(ESeries::E12, 1000.0, -13), 82.0, kTight);
    expectRelativeNear(stepValue(ESeries::E3, 2.2e-12, 3), 22e-12, kTight);
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
