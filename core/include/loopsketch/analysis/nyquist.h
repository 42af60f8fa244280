#pragma once

// The Nyquist criterion on the loop model: how often the return ratio T(jw) encircles -1,
// counted on the model (not the sweep grid) and consistent with the closed-loop poles.

#include "loopsketch/feedback/loopmodel.h"

#include <complex>
#include <optional>
#include <string>
#include <vector>

namespace loopsketch {

/// Encirclements of the point -1 by the return ratio T(jw), w from -infinity to +infinity
/// (Nyquist criterion: clockwise encirclements N = Z - P, Z the closed-loop poles and P the
/// poles of T in the right half-plane).
struct NyquistCount
{
    std::optional<int> encirclements; ///< N, clockwise positive; absent when `reason` says why
    int openLoopRhpPoles = 0; ///< P: poles of T with Re s > 0
    std::string reason; ///< why N was not counted (T passes through -1, poles of T on the axis)
};

/// Counts the encirclements of -1 by T(jw) on the model: the phase of 1 + T followed from
/// DC to far above the fastest of `loopGainPoles` and `closedLoopPoles` (rad/s), refined by
/// bisection where it moves fast, doubled by the symmetry T(-jw) = conj T(jw).
NyquistCount countEncirclements(const LoopModel &model,
                                const std::vector<std::complex<double>> &loopGainPoles,
                                const std::vector<std::complex<double>> &closedLoopPoles);

} // namespace loopsketch
