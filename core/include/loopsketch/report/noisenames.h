#pragma once

// How noise sources and densities are named wherever they are shown: the analysis text and
// JSON, the Noise panel's legend, the review sheet.

#include "loopsketch/analysis/noise.h"

#include <string>
#include <string_view>

namespace loopsketch {

/// "RF thermal", "PD1 r_parallel thermal", "PD1 shot", "U1 e_n", "U1 i_n at in_n".
std::string noiseSourceLabel(const NoiseContribution &contribution);

/// Units of the noise densities' numerators: the output's and the signal source's.
struct NoiseUnits
{
    std::string output; ///< "V" or "A"
    std::string input; ///< "V" or "A"
};

/// From the gain unit: "V/A" gives output V and input A; a unit without "/" gives V, V.
NoiseUnits noiseUnits(std::string_view gainUnit);

} // namespace loopsketch
