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

/// The phase margin (degrees) of a crossing of |T| = 1 at unwrapped phase `phaseDeg`
/// (degrees, unwrapped from DC, where a negative-feedback loop starts at 0): the angle left
/// to the nearer of -180 (a lagging loop, 180 + phase as usual) and +180 (a loop that leads
/// at its crossing, as an AC-coupled loop's low crossover with zeros below it: 180 - phase,
/// not 180 + phase beyond 180); negative once the phase has passed it.
inline double phaseMarginDeg(double phaseDeg)
{
    return 180.0 - std::abs(phaseDeg);
}

} // namespace loopsketch::detail
