// The band integrals of detail/bandintegral.h on densities with closed-form integrals, and
// where a density has no value: the failure is placed where the density failed, whether the
// step end's density is evaluated beside the step's first panel or apart.

#include "detail/bandintegral.h"

#include <gtest/gtest.h>

#include <cmath>
#include <span>
#include <vector>

namespace {

using loopsketch::detail::DensityColumns;
using loopsketch::detail::integrateBand;
using loopsketch::detail::integrateUntilConverged;

/// psd = 1 / f^2 (one column) and psd = 1 / f^3 (the other): integrals 1/a - 1/b and
/// (1/a^2 - 1/b^2) / 2 over [a, b] (closed form, common practice). `failsNear` > 0: no value
/// within 1e-9 of that frequency.
DensityColumns powerLaws(double failsNear = 0, int *calls = nullptr)
{
    return [=](std::span<const double> hz, std::vector<double> &values) {
        if (calls)
            ++*calls;
        values.assign(2 * hz.size(), 0.0);
        for (std::size_t i = 0; i < hz.size(); ++i) {
            if (failsNear > 0 && std::abs(hz[i] - failsNear) <= 1e-9 * failsNear)
                return false;
            values[i] = 1.0 / (hz[i] * hz[i]);
            values[hz.size() + i] = 1.0 / (hz[i] * hz[i] * hz[i]);
        }
        return true;
    };
}

TEST(BandIntegral, PowerLawsOverABand)
{
    const auto b = integrateBand(powerLaws(), 2, 2.0, 500.0, 1e-9, 2.0);
    ASSERT_TRUE(b.ok);
    EXPECT_NEAR(b.columns[0], 1.0 / 2.0 - 1.0 / 500.0, 1e-9 * 0.5);
    EXPECT_NEAR(b.columns[1], 0.5 * (1.0 / 4.0 - 1.0 / 250000.0), 1e-9 * 0.125);
}

TEST(BandIntegral, MarchStopsWhereLittlePowerIsLeftAbove)
{
    int calls = 0;
    const auto m = integrateUntilConverged(powerLaws(0, &calls), 2, 1.0, 1e12, 0.0, 1e-3, 1e-9);
    ASSERT_TRUE(m.ok);
    ASSERT_TRUE(m.converged);
    // Each column over [1, highHz] in closed form; the tail above highHz of the f^-2 column
    // (1 / highHz) is under 0.1 % of the whole once the march stops.
    EXPECT_NEAR(m.integral.columns[0], 1.0 - 1.0 / m.highHz, 1e-8);
    EXPECT_NEAR(m.integral.columns[1], 0.5 * (1.0 - 1.0 / (m.highHz * m.highHz)), 1e-8);
    EXPECT_LE(1.0 / m.highHz, 1e-3 * 1.0);
    // One call per quarter decade (the step's first panel with the density at its end) and
    // one for the start, plus refinements: fewer calls than two per step.
    const double steps = std::round(4.0 * std::log10(m.highHz));
    EXPECT_LT(calls, 2 * static_cast<int>(steps) + 1);
}

TEST(BandIntegral, MarchDoesNotRefineRoundingFarBelowTheTotal)
{
    // 1 / f^2 up to 1 kHz, then a density 40 decades down that jumps at random from point to
    // point, as rounding does where a circuit's output noise has fallen away (fuzz seed 37's
    // noise above 11 kHz): no subdivision makes it smooth, and it adds nothing to the total.
    std::size_t evaluations = 0;
    const DensityColumns density = [&](std::span<const double> hz, std::vector<double> &values) {
        evaluations += hz.size();
        values.resize(hz.size());
        for (std::size_t i = 0; i < hz.size(); ++i) {
            const double bits = std::fmod(std::abs(std::sin(hz[i] * 12.9898)) * 43758.5453, 1.0);
            values[i] = hz[i] <= 1e3 ? 1.0 / (hz[i] * hz[i]) : 1e-40 * bits / (hz[i] * hz[i]);
        }
        return true;
    };
    const auto m = integrateUntilConverged(density, 1, 1.0, 1e12, 1e6, 1e-3, 1e-6);
    ASSERT_TRUE(m.ok);
    // The integral of 1 / f^2 from 1 Hz to 1 kHz (closed form); the rest is 1e-40 of it.
    EXPECT_NEAR(m.integral.total, 1.0 - 1e-3, 1e-6);
    EXPECT_LE(m.integral.errorEstimate, 1e-6 * m.integral.total);
    // Refined to the total's tolerance, the noisy steps take their first panels only (60,000
    // evaluations a step before): 15 per step from 1 Hz to at least 1 MHz, and a few splits.
    EXPECT_LT(evaluations, 2000u);
}

TEST(BandIntegral, FailureAtAStepEndIsPlacedThere)
{
    // The third step end from 1 Hz: 10^0.75 Hz. The step's panels have values; the density
    // at its end does not.
    const double end = std::pow(10.0, 0.75);
    const auto m = integrateUntilConverged(powerLaws(end), 2, 1.0, 1e12, 0.0, 1e-3, 1e-9);
    EXPECT_FALSE(m.ok);
    EXPECT_NEAR(m.failedAtHz, end, 1e-12 * end);
}

TEST(BandIntegral, FailureAtTheStartIsPlacedThere)
{
    const auto m = integrateUntilConverged(powerLaws(1.0), 2, 1.0, 1e12, 0.0, 1e-3, 1e-9);
    EXPECT_FALSE(m.ok);
    EXPECT_NEAR(m.failedAtHz, 1.0, 1e-12);
}

} // namespace
