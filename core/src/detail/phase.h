#pragma once

// Frequency and phase conversions shared by the metrics and the reports: one rule each.

#include <cmath>
#include <complex>
#include <numbers>

namespace loopsketch::detail {

/// The complex frequency j 2 pi f (rad/s) of a frequency in Hz.
inline std::complex<double> jw(double hz)
{
    return {0.0, 2.0 * std::numbers::pi * hz};
}

/// Radians to degrees.
inline double degrees(double radians)
{
    return radians * 180.0 / std::numbers::pi;
}

/// arg(v) (rad) moved by whole turns to lie within half a turn of `reference` (rad): the
/// unwrapped phase of a curve sampled finely enough.
inline double phaseNear(std::complex<double> v, double reference)
{
    const double p = std::arg(v);
    const double turn = 2.0 * std::numbers::pi;
    return p + turn * std::round((reference - p) / turn);
}

} // namespace loopsketch::detail
