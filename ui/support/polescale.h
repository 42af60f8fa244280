#pragma once

// The Poles plot's log-magnitude radial scale, shared by the Poles panel and the review
// sheet so both draw the same picture: each pole keeps its angle (damping reads as usual) and
// sits at radius kInnerRadius + log10(|s| / r0), r0 the decade at or below the smallest |s|,
// so poles decades apart are all readable; one circle per decade.

#include "loopsketch/analysis/analysis.h"

#include <QPointF>

#include <complex>
#include <vector>

namespace loopsketch::ui {

struct PoleScale
{
    static constexpr double kInnerRadius = 2.0; ///< the radius of r0
    double r0 = 1.0; ///< rad/s at kInnerRadius
    double outer = kInnerRadius; ///< the radius of the outermost pole
    double rightMost = 0; ///< the largest plotted x (right half-plane poles)
    int rings = 0; ///< decade circles from r0 out to the last inside the outermost pole

    /// The scale for these poles (non-finite ones are left out).
    static PoleScale fit(const std::vector<ClosedLoopPole> &poles);
    /// Where s (rad/s) is drawn; the origin for s = 0.
    QPointF map(std::complex<double> s) const;
    /// The radius of circle `k` (k = 0 is r0) and its value in rad/s.
    static double ringRadius(int k) { return kInnerRadius + double(k); }
    double ringValue(int k) const;
};

} // namespace loopsketch::ui
