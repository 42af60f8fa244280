#pragma once

// What real parts offer: values outside these limits (a 1e-15 Ω resistor, a 1 aF
// capacitor, a 300 dB gain) still analyse, but the numbers they give describe no circuit
// that can be built and may lose accuracy, so the analysis warns about each of them.

#include "loopsketch/base/result.h"
#include "loopsketch/design/design.h"

namespace loopsketch {

/// Limits of real parts, SI units. A value of exactly 0 where the field allows it means
/// "absent" (no parasitic capacitance, an ideal output) and is never out of range.
struct PartLimits
{
    double minResistance = 1e-3; ///< Ω (1 mΩ: the smallest shunts sold)
    double maxResistance = 10e12; ///< Ω (10 TΩ: the largest high-megohm resistors sold)
    double minCapacitance = 10e-15; ///< F (10 fF)
    double minInductance = 100e-12; ///< H (100 pH)
    double maxGain = 1e12; ///< V/V, magnitude (240 dB)
};

/// One warning per field of `design` outside `limits`, naming the part and the field.
Diagnostics partLimitWarnings(const Design &design, const PartLimits &limits = {});

} // namespace loopsketch
