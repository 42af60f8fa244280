#pragma once

// Numeric comparisons the tests share: relative errors of real and complex values, and the
// constant and complex type the numeric tests write with.

#include <algorithm>
#include <cmath>
#include <complex>
#include <numbers>

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

} // namespace loopsketch::test
