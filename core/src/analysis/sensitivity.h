#pragma once

// The sensitivity of the DC closed-loop gain to each part (%/%, core/README.md §4): by the
// adjoint method on the reduced path, by finite differences on the dense-LU reference path.

#include "loopsketch/analysis/analysis.h"
#include "loopsketch/circuit/circuit.h"

#include <cmath>
#include <map>
#include <optional>
#include <string>
#include <vector>

namespace loopsketch::detail {

/// The field whose sensitivity is reported for a part: its value, the gain block's gain,
/// the source's own resistance. Empty when the part has none that acts at DC.
std::string sensitivityField(const Part &part);

/// One origin's relative sensitivity and how far its terms cancelled.
struct OriginSensitivity
{
    double value = 0; ///< (p/y) dy/dp, a plain ratio (%/%); 0 for an origin without entries in G
    /// The sum of the magnitudes of its terms, |power * entry * lambda(row) * x(col) / y|:
    /// where value is below about 1e-8 of it the terms cancelled to rounding (an element
    /// that carries no current at DC beside a large adjoint) and value is not to be trusted.
    double terms = 0;
    bool cancelled() const { return std::abs(value) < kCancellation * terms; }
    static constexpr double kCancellation = 1e-8;
};

/// Relative sensitivities (p/y) dy/dp of the DC transfer y = L(output, :) G^-1 B(:, input)
/// to every origin of `system` (indexed as system.origins). Adjoint method: with G x = b and
/// G^T lambda = l, dy/dp = -lambda^T (dG/dp) x, and p dG/dp is the origin's entries times
/// their StampEntry::power; so one LU of G and one transposed solve give every part's
/// sensitivity. nullopt when G is singular (no DC solution) or y is zero or not finite.
std::optional<std::vector<OriginSensitivity>> dcSensitivities(const DescriptorSystem &system,
                                                              int output, int input);

/// The sensitivity of the design's DC gain to each part with a sensitivityField(), by part
/// id (%/% as a plain ratio: 1 means 1 % per %). SolverPath::Reduced: the adjoint method on
/// the loop's descriptor system, with a central difference for the few parts whose adjoint
/// terms cancelled to rounding; SolverPath::DenseLu: the reference, a central difference of
/// 1e-6 on every field, each gain from its own dense LU. `gain` is the design's DC gain
/// (output / source value); empty map when it is zero or the circuit has no DC solution.
std::map<std::string, double> gainSensitivity(const Design &design, double gain, SolverPath path);

} // namespace loopsketch::detail
