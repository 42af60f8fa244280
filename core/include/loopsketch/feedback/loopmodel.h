#pragma once

// LoopModel: every reduced system one design needs (exact solution, return ratio, two-port
// estimate), built once per recomputation and evaluated at any complex frequency. The
// analyses sample it over the sweep and refine crossings on it by root finding.

#include "loopsketch/base/result.h"
#include "loopsketch/circuit/reducedsystem.h"
#include "loopsketch/circuit/restamp.h"
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

/// Every quantity of the three methods, with one name each: `Quantity` is a Complex for one
/// frequency (LoopPoint) or a vector of them over a list of frequencies (LoopCurves, index i
/// for the i-th frequency; the Analysis keeps these curves). NaN marks a quantity that does
/// not exist at a frequency. Impedances in ohm, gains in the design's gain unit.
template<class Quantity, class NetworkMatrix> struct LoopQuantities
{
    // Exact solution.
    Quantity gainExact, zInExact, zOutExact;
    // Return ratio of the gain block's controlled source.
    Quantity loopGain; ///< T_rr
    Quantity gainInf; ///< G_inf of the asymptotic gain model
    Quantity feedthrough; ///< G_0
    Quantity gainReturnRatio; ///< G_inf T/(1+T) + G_0/(1+T)
    Quantity zInReturnRatio, zOutReturnRatio; ///< Blackman
    /// Z_D: the impedances with the gain block's gain at 0 ("without feedback").
    Quantity zInOpenLoop, zOutOpenLoop;
    Quantity desensitivity; ///< 1 + T_rr
    /// The gain block's own open-loop gain A_ol(s) = gain * prod(1 + s/2 pi z) / prod(1 + s/2 pi
    /// p), V/V, as the design gives it (no loading).
    Quantity openLoopGain;
    /// The closure curve 1/beta, defined as A_ol / T_rr for any topology, loading included:
    /// |A_ol| / |invBeta| is exactly |T| (core/README.md §4, "Closure").
    Quantity invBeta;
    // Two-port estimate (NaN without a topology).
    Quantity a, beta, loopGainTwoPort, closedLoop, gainTwoPort, zInTwoPort, zOutTwoPort;
    Quantity inputLoading, outputLoading; ///< factors, 1 = no loading
    NetworkMatrix network; ///< the network's parameters of the topology's set

    /// Calls `fn(x.q, y.q)` for every quantity q of two LoopQuantities, `network` last: the
    /// one list of the quantities for code that treats them all alike.
    template<class X, class Y, class Fn> static void forEachPair(X &x, Y &y, Fn &&fn)
    {
        fn(x.gainExact, y.gainExact);
        fn(x.zInExact, y.zInExact);
        fn(x.zOutExact, y.zOutExact);
        fn(x.loopGain, y.loopGain);
        fn(x.gainInf, y.gainInf);
        fn(x.feedthrough, y.feedthrough);
        fn(x.gainReturnRatio, y.gainReturnRatio);
        fn(x.zInReturnRatio, y.zInReturnRatio);
        fn(x.zOutReturnRatio, y.zOutReturnRatio);
        fn(x.zInOpenLoop, y.zInOpenLoop);
        fn(x.zOutOpenLoop, y.zOutOpenLoop);
        fn(x.desensitivity, y.desensitivity);
        fn(x.openLoopGain, y.openLoopGain);
        fn(x.invBeta, y.invBeta);
        fn(x.a, y.a);
        fn(x.beta, y.beta);
        fn(x.loopGainTwoPort, y.loopGainTwoPort);
        fn(x.closedLoop, y.closedLoop);
        fn(x.gainTwoPort, y.gainTwoPort);
        fn(x.zInTwoPort, y.zInTwoPort);
        fn(x.zOutTwoPort, y.zOutTwoPort);
        fn(x.inputLoading, y.inputLoading);
        fn(x.outputLoading, y.outputLoading);
        fn(x.network, y.network);
    }
};

/// Every quantity at one complex frequency.
using LoopPoint = LoopQuantities<Complex, TwoPortMatrix>;
/// Every quantity over a list of frequencies: the curves every panel, the review sheet and
/// the sweep CSV draw (Analysis::curves).
using LoopCurves = LoopQuantities<std::vector<Complex>, std::vector<TwoPortMatrix>>;

/// Which systems LoopModel::build() makes. Metrics: only the exact solution (gain, z_in,
/// z_out) and the return ratio's loop gain, what the margins, bandwidth, peaking, poles,
/// step and spec check read (a scan row): no topology, no two-port estimate and no
/// Blackman impedances (their curves are NaN). GainAndLoop: Metrics without the exact
/// impedances either (a scan row that reads neither z_in nor z_out). The systems a scope does
/// make are built and checked exactly as under Full, so their numbers are the same.
enum class LoopModelScope { Full, Metrics, GainAndLoop };

class LoopModel
{
public:
    /// Builds every system of a valid design. Fails when the circuit has no solution.
    static Result<LoopModel> build(const Design &design, SolverPath path = SolverPath::Reduced,
                                   LoopModelScope scope = LoopModelScope::Full);

    /// The same as build(`design`, path and scope of this model), for a design that differs
    /// from the one this model was built from only in the values `changes` name (`from`: the
    /// value this model holds). Where every change is restampable() and the scope is
    /// Metrics or GainAndLoop, each system is re-stamped in place of building its netlist afresh
    /// (restamp.h), then reduced and checked as build() does, so the numbers are build()'s;
    /// otherwise it builds afresh.
    Result<LoopModel> rebuilt(const Design &design, std::span<const FieldChange> changes) const;
    /// True for a model rebuilt() made by re-stamping (false: built afresh).
    bool restamped() const { return m_restamped; }

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
    /// sweep()'s exact gain and return-ratio curves alone (gainExact, loopGain, feedthrough,
    /// gainInf, gainReturnRatio, desensitivity, openLoopGain, invBeta), the same values; the
    /// other curves are left empty. What the metrics read, for scans.
    LoopCurves sweepLoop(std::span<const Complex> s) const;

    /// T_rr alone and the exact gain alone at each complex frequency of `s` (rad/s): the
    /// loop and the closed loop beyond the sweep.
    std::vector<Complex> loopGainOver(std::span<const Complex> s) const;
    std::vector<Complex> gainOver(std::span<const Complex> s) const;

    /// Fast single quantities for root finding.
    Complex loopGainAt(Complex s) const;
    /// The gain block's open-loop gain A_ol at `s` (rad/s), V/V: a rational function of the
    /// gain block's fields alone.
    Complex openLoopGainAt(Complex s) const;
    Complex gainAt(Complex s) const;

    /// Closed-loop natural frequencies (rad/s) of the exact circuit.
    std::vector<Complex> closedLoopPoles() const;
    /// After closedLoopPoles(): a warning naming a part and field when some closed-loop
    /// poles were counted but could not be located (ReducedSystem::unconfirmedPoles()).
    std::optional<Diagnostic> closedLoopPolesWarning() const
    {
        return m_full->unconfirmedPolesWarning();
    }
    /// After closedLoopPoles(): how many closed-loop poles were counted but not located.
    int unlocatedClosedLoopPoles() const { return m_full->unconfirmedPoles(); }
    /// Where the solves' own checks (ReducedSystem::checkAccuracy, at DC and at the start,
    /// middle and end of the design's sweep) could not assure the accuracy of the exact
    /// solution and the return ratio, each naming a part and field. Empty for ordinary
    /// designs.
    const Diagnostics &warnings() const { return m_warnings; }
    /// Warnings of the sweeps since forgetUnassuredPoints(): a point of the exact gain, z_in,
    /// z_out or the loop gain that the per-point estimate sent to the full system and that
    /// even its careful solve could not assure to kAssuredRelativeError
    /// (ReducedSystem::unassuredPointWarning()). The analysis brackets the sweep of the
    /// points it shows with the two.
    Diagnostics unassuredPointWarnings() const;
    void forgetUnassuredPoints() const;
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
    /// Where checkAccuracy() probes: DC and the start, middle and top of the sweep (rad/s).
    static std::vector<Complex> accuracyProbes(const Design &design);
    /// The two-port estimate's systems, as checkEstimateAccuracy() reads them.
    struct EstimateSystems
    {
        TwoPortNetwork &network, &sourceSide;
        ReducedSystem &aFull;
        std::span<const TransferEntry> aEntries; ///< the A circuit's entries the estimate reads
        std::optional<ReducedSystem> &seriesInput, &seriesOutput;
    };
    /// checkAccuracy() for the estimate's systems: each switches to the careful solve where
    /// it departs from it by more than kAssuredRelativeError; none warns.
    void checkEstimateAccuracy(const Design &design, const EstimateSystems &systems);
    /// The two-port estimate's systems for the topology found; on failure it stays absent
    /// and m_twoPortProblem says why.
    void buildTwoPort(const Design &design, SolverPath path);
    /// The return ratio's curves and A_ol, 1/beta into `c`.
    void sweepReturnRatio(std::span<const Complex> s, LoopCurves &c) const;
    /// sweep()'s two-port estimate: fills `c`'s two-port curves, which arrive as NaN.
    void sweepTwoPort(std::span<const Complex> s, LoopCurves &c) const;

    /// The systems rebuilt() re-stamps: those of the Metrics scope.
    bool restampSystems(const Design &design, std::span<const FieldChange> changes);

    SolverPath m_path = SolverPath::Reduced;
    LoopModelScope m_scope = LoopModelScope::Full;
    bool m_restamped = false;
    std::optional<ReducedSystem> m_full, m_input, m_output; // exact
    std::optional<ReducedSystem> m_rrFull, m_rrInput, m_rrOutput; // return ratio
    std::shared_ptr<const TwoPortSystems> m_twoPort;
    TopologyResult m_topology;
    std::string m_twoPortProblem;
    double m_openLoopDcGain = 1; // the gain block's gain, V/V
    std::vector<double> m_openLoopPolesHz, m_openLoopZerosHz;
    Diagnostics m_warnings;
    double m_worstRelativeError = 0;
    int m_refinedSystems = 0;
};

} // namespace loopsketch
