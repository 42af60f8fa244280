#pragma once

// Numeric comparisons the tests share: relative errors of real and complex values, the
// constant and complex type the numeric tests write with, and log-spaced sweep points.

#include <algorithm>
#include <cmath>
#include <complex>
#include <numbers>
#include <vector>

namespace loopsketch::test {

inline constexpr double kPi = std::numbers::pi;
using cd = std::complex<double>;

/// |value - expected| / |expected|; an exact zero expected is compared against 1e-300, so a
/// zero found for a zero expected is no error and anything else a huge one.
inline double relErr(double value, double expected)
{
    return std::abs(value - expected) / std::max(std::abs(expected), 1e-300);
}

inline double relErr(std::complex<double> value, std::complex<double> expected)
{
    return std::abs(value - expected) / std::max(std::abs(expected), 1e-300);
}

/// `count` points j 2 pi f (rad/s), f log-spaced from `startHz` to `stopHz` inclusive.
inline std::vector<cd> logPoints(double startHz, double stopHz, int count)
{
    std::vector<cd> s;
    for (int i = 0; i < count; ++i)
        s.push_back({0.0,
                     2.0 * kPi * startHz
                         * std::pow(stopHz / startHz, static_cast<double>(i) / (count - 1))});
    return s;
}

} // namespace loopsketch::test
