#pragma once

// LoopModel: every reduced system one design needs (exact solution, return ratio, two-port
// estimate), built once per recomputation and evaluated at any complex frequency. The
// analyses sample it over the sweep and refine crossings on it by root finding.

#include "loopsketch/base/result.h"
#include "loopsketch/circuit/reducedsystem.h"
#include "loopsketch/circuit/stepmodel.h"
#include "loopsketch/design/design.h"
#include "loopsketch/feedback/topology.h"
#include "loopsketch/feedback/twoport.h"

#include <complex>
#include <memory>
#include <optional>
#include <span>
#include <string>
#include <vector>

namespace loopsketch {

using Complex = std::complex<double>;

/// Every quantity of one frequency. NaN marks a quantity that does not exist there.
struct LoopPoint
{
    // Exact solution.
    Complex gain, zIn, zOut;
    // Return ratio of the gain block's controlled source.
    Complex loopGain; ///< T_rr
    Complex gainInf; ///< G_inf of the asymptotic gain model
    Complex feedthrough; ///< G_0
    Complex rrGain; ///< G_inf T/(1+T) + G_0/(1+T)
    Complex rrZIn, rrZOut; ///< Blackman
    Complex zInOpenLoop, zOutOpenLoop; ///< Z_D: the impedances with the gain block's gain at 0
    // Two-port estimate (NaN without a topology).
    Complex a, beta, tpLoopGain, closedLoop, tpGain, tpZIn, tpZOut;
    Complex inputLoading, outputLoading; ///< factors, 1 = no loading
    TwoPortMatrix network; ///< the network's parameters of the topology's set
};

/// LoopPoint's quantities over a list of frequencies, one vector per quantity (same
/// meanings and NaN rule), index i for the i-th frequency.
struct LoopCurves
{
    std::vector<Complex> gain, zIn, zOut;
    std::vector<Complex> loopGain, gainInf, feedthrough, rrGain, rrZIn, rrZOut;
    std::vector<Complex> zInOpenLoop, zOutOpenLoop;
    std::vector<Complex> a, beta, tpLoopGain, closedLoop, tpGain, tpZIn, tpZOut;
    std::vector<Complex> inputLoading, outputLoading;
    std::vector<TwoPortMatrix> network;
};

class LoopModel
{
public:
    /// Builds every system of a valid design. Fails when the circuit has no solution.
    static Result<LoopModel> build(const Design &design, SolverPath path = SolverPath::Reduced);

    const TopologyResult &topology() const { return m_topology; }
    /// Why the two-port estimate is missing although a topology was found (e.g. the
    /// network's parameter set does not exist); empty otherwise.
    const std::string &twoPortProblem() const { return m_twoPortProblem; }
    bool hasTwoPort() const { return m_twoPort != nullptr; }

    LoopPoint at(Complex s) const;

    /// Every quantity at each complex frequency of `s` (rad/s): the sweeps of the analysis.
    /// Each system is solved over the whole list in one pass (see
    /// ReducedSystem::sweepEntries), so this is much faster than at() per frequency.
    LoopCurves sweep(std::span<const Complex> s) const;

    /// T_rr alone and the exact gain alone at each complex frequency of `s` (rad/s): the
    /// loop and the closed loop beyond the sweep.
    std::vector<Complex> loopGainOver(std::span<const Complex> s) const;
    std::vector<Complex> gainOver(std::span<const Complex> s) const;

    /// Fast single quantities for root finding.
    Complex loopGainAt(Complex s) const;
    Complex gainAt(Complex s) const;

    /// Closed-loop natural frequencies (rad/s) of the exact circuit.
    std::vector<Complex> closedLoopPoles() const;
    /// Where the solves' own checks (ReducedSystem::checkAccuracy, at DC and at the start,
    /// middle and end of the design's sweep) could not assure the accuracy of the exact
    /// solution and the return ratio, each naming a part and field. Empty for ordinary
    /// designs.
    const Diagnostics &warnings() const { return m_warnings; }
    /// The largest relative error bound those checks found (a measure for tests).
    double worstRelativeError() const { return m_worstRelativeError; }
    /// How many of the checked systems missed the careful solve and now use it throughout.
    int refinedSystems() const { return m_refinedSystems; }

    /// Natural frequencies (rad/s) of the loop with the gain block's controlled source
    /// test-driven: the poles of the loop gain T_rr.
    std::vector<Complex> loopGainPoles() const;
    /// Unit-step response of the exact output at `times` (s).
    Result<std::vector<double>> stepResponse(const std::vector<double> &times) const;
    /// The exact output's step response as a state space, exact at any time.
    Result<StepModel> stepModel() const;

    /// The relative error the accuracy checks accept before they warn.
    static constexpr double kAssuredRelativeError = 1e-8;

private:
    struct TwoPortSystems;

    void checkAccuracy(const Design &design);

    std::optional<ReducedSystem> m_full, m_input, m_output; // exact
    std::optional<ReducedSystem> m_rrFull, m_rrInput, m_rrOutput; // return ratio
    std::shared_ptr<const TwoPortSystems> m_twoPort;
    TopologyResult m_topology;
    std::string m_twoPortProblem;
    Diagnostics m_warnings;
    double m_worstRelativeError = 0;
    int m_refinedSystems = 0;
};

} // namespace loopsketch
