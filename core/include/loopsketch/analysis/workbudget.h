#pragma once

// Bounded work, said up front: the size of a run (unknowns, reduced order, sweep points,
// trials, combinations) is estimated before any matrix is built, and a run over the budgets
// of limits.h is refused with a message saying what to reduce. The estimates count
// multiply-adds of the dense factorisations that dominate (an LU of n unknowns is n^3/3).

#include "loopsketch/base/limits.h"
#include "loopsketch/base/result.h"
#include "loopsketch/design/design.h"

#include <cstddef>
#include <string>
#include <string_view>

namespace loopsketch {

/// The size of one design's circuit, counted from its netlist (no matrix is built).
struct CircuitSize
{
    std::size_t unknowns = 0; ///< node voltages, branch currents and gain-block states
    std::size_t reducedOrder = 0; ///< upper bound on the dynamic states left after reduction
    std::size_t sweepPoints = 0; ///< frequency points of the design's sweep
    std::size_t sensitivities = 0; ///< parts whose sensitivity analyze() computes
    std::size_t parts = 0; ///< parts of the design (each evaluation assembles them afresh)
};

/// Counts the circuit of a valid design. Linear in the number of parts.
CircuitSize circuitSize(const Design &design);

/// Estimated multiply-adds of one analyze() run (with or without sensitivities).
double analysisOperations(const CircuitSize &size, bool sensitivity);

/// Estimated multiply-adds of one lean trial (evaluateTrial) on `gridPoints` frequencies.
double trialOperations(const CircuitSize &size, std::size_t gridPoints);

/// Estimated multiply-adds of one DC gain evaluation (evaluateDcGain).
double dcGainOperations(const CircuitSize &size);

/// Refuses a circuit of more than kMaxUnknowns unknowns. Empty when within budget.
Diagnostics checkUnknownsBudget(const Design &design, std::string_view file);

/// Refuses an analysis over kMaxUnknowns or kMaxWorkOperations; the message names the
/// dominant cost and what to reduce. Empty when the run is within budget.
Diagnostics checkAnalysisBudget(const Design &design, std::string_view file, bool sensitivity);

/// Refuses `evaluations` runs of `operationsEach` multiply-adds when their total exceeds
/// kMaxWorkOperations. `what` names the run ("the Monte Carlo run", "the worst case") and
/// `reduce` what the user can reduce; the message gives the largest count within budget, as
/// "to at most N" when the evaluations are what `reduce` counts (trials, combinations), else
/// as "at most N evaluations fit".
Diagnostics checkRepeatedBudget(const Design &design, std::string_view file,
                                std::size_t evaluations, double operationsEach,
                                std::string_view what, std::string_view reduce,
                                std::string_view field, bool reduceCountsEvaluations = true);

/// "2.3e10": the short form of an operation count used in the budget messages.
std::string operationsText(double operations);

} // namespace loopsketch
