#pragma once

// The one result object of a recomputation: what the Readout, every panel, the review
// sheet and `loopsketch analyze --json` show. Numbers in SI base units; std::nullopt (JSON
// null) where a quantity does not exist; NaN inside curves marks a frequency where it does
// not exist.

#include "loopsketch/analysis/noise.h"
#include "loopsketch/analysis/nyquist.h"
#include "loopsketch/base/result.h"
#include "loopsketch/design/design.h"
#include "loopsketch/feedback/exactsolution.h"
#include "loopsketch/feedback/loopmodel.h"
#include "loopsketch/feedback/topology.h"

#include <complex>
#include <map>
#include <optional>
#include <string>
#include <vector>

namespace loopsketch {

inline constexpr std::string_view kAnalysisSchema = "loopsketch.analysis/1";

using OptionalNumber = std::optional<double>;
using Curve = std::vector<std::complex<double>>;

struct TwoPortSummary
{
    OptionalNumber a, beta, loopGain, closedLoop; ///< in the topology's gain unit
    OptionalNumber gain, zIn, zOut; ///< comparable with the exact solution
    OptionalNumber gainErrorPct, zInErrorPct, zOutErrorPct; ///< (estimate - exact)/exact
    OptionalNumber inputLoading, outputLoading; ///< factors (1 = no loading)
    OptionalNumber inputLoadingDb, outputLoadingDb;
};

struct ReturnRatioSummary
{
    OptionalNumber loopGain, gainInf, feedthrough, gain, zIn, zOut;
};

/// One phase crossing of the loop gain (unwrapped phase at an odd multiple of -180 deg).
struct GainMargin
{
    double db = 0; ///< -20 log10 |T|: positive, the gain may rise by this much; negative, fall
    double frequencyHz = 0;
};

/// The loop gain T at one frequency, as a reviewer recomputes the margins from it.
struct LoopGainSample
{
    double frequencyHz = 0;
    double magnitude = 0; ///< |T|, a pure ratio
    double phaseDeg = 0; ///< unwrapped as the phase margin reads it: 180 - |phaseDeg| at |T| = 1
};

struct Margins
{
    OptionalNumber crossoverHz; ///< |T| = 1 (the one with the worst phase margin)
    /// 180 - |unwrapped phase of T| at the crossover (the angle to the nearer of -180 and
    /// +180), the worst of all crossovers
    OptionalNumber phaseMarginDeg;
    OptionalNumber crossoverPhaseDeg; ///< the unwrapped phase of T at crossoverHz
    OptionalNumber gainMarginDb; ///< of gainMargins, the one nearest 0 dB (least margin)
    OptionalNumber phaseCrossoverHz; ///< its frequency
    std::vector<GainMargin> gainMargins; ///< every phase crossing, ascending in frequency
    /// Rate of closure at the crossover (where |A_ol| meets the closure curve |inv_beta|,
    /// i.e. |T| = 1): the slope of |inv_beta| minus the slope of |A_ol| there, dB/decade,
    /// found on the model (minus the slope of |T|). The trade's 20 or 40.
    OptionalNumber rateOfClosureDbPerDecade;
    /// Where they meet: 20 log10 |A_ol| (= 20 log10 |inv_beta|) at the crossover, dB.
    OptionalNumber closureLevelDb;
    /// True when the rate of closure is the trade's 40 dB/decade or more (a local rate of
    /// kSteepClosureDbPerDecade or more: nearer 40 than 20).
    bool steepClosure = false;
    /// T on the model at 1/4, 1/2, 1, 2 and 4 times the crossover, then at each phase
    /// crossing, ascending in frequency: the table from which a reviewer recomputes the
    /// phase margin (180 - |phase| at |T| = 1) and the gain margins (-20 log10 |T| at -180).
    std::vector<LoopGainSample> nearCrossover;
};

/// From this rate of closure (dB/decade) on, a closure counts as the trade's 40 dB/decade
/// one: the local slope difference is nearer 40 than 20 (a second pole at the crossover
/// already gives 30).
inline constexpr double kSteepClosureDbPerDecade = 30.0;

struct ClosedLoopPole
{
    std::complex<double> s; ///< rad/s
    double naturalHz = 0; ///< |s| / 2 pi
    double damping = 0; ///< -Re(s) / |s|
    double q = 0; ///< |s| / (-2 Re s)
};

struct StepResult
{
    OptionalNumber riseTimeS; ///< 10 % to 90 % of the final value
    OptionalNumber overshootPct; ///< (peak - final) / final
    OptionalNumber settlingTimeS; ///< last time outside +-settlingBand of the final value
    double settlingBand = kDefaultSettlingBand; ///< fraction of the final value
    std::vector<double> timeS;
    std::vector<double> response; ///< output per unit source step
    double finalValue = 0;
    /// Why there is no step response although the loop is stable (a higher-index mode, a
    /// response that cannot be computed to the accuracy the metrics need); empty otherwise.
    std::string problem;
};

/// One spec's verdict as the analysis JSON (`specs`), the Readout and the review sheet show
/// it; `pass` is checkSpecs()'s verdict for that spec.
struct SpecVerdict
{
    std::string name; ///< design-file key: "gain", "bandwidth_min", "phase_margin_min_deg"
    std::string label; ///< what a reviewer reads: "gain", "bandwidth", "phase margin"
    std::string unit; ///< of the limits and the value: the gain unit, "Hz" or "°"
    OptionalNumber
        low; ///< lower limit (gain minimum, bandwidth_min, phase_margin_min_deg, snr_min_db)
    OptionalNumber high; ///< upper limit (gain maximum, output_noise_max)
    bool isWindow = false; ///< the limit is a [low, high] window (gain)
    OptionalNumber value; ///< the design's value; nullopt where it does not exist
    bool pass = true;
    /// Why it fails ("below the minimum", "no loop crossover" ...); on a pass, empty unless
    /// the value is missing ("no -3 dB point inside the sweep, which ends above the minimum").
    std::string reason;
};

struct Analysis
{
    std::string title;
    std::string gainUnit; ///< of `gain` everywhere: "V/V", "V/A" ...
    std::vector<double> frequenciesHz;
    std::optional<Topology> topology;
    std::string topologyReason; ///< why there is no two-port form (topology empty)
    std::string twoPortProblem; ///< why the estimate is missing despite a topology
    ExactSolution exact; ///< DC values (the curves: curves.gainExact, zInExact, zOutExact)
    std::optional<TwoPortSummary> twoPort;
    ReturnRatioSummary returnRatio;
    Margins margins;
    NyquistCount nyquist; ///< encirclements of -1 by T, consistent with `rhpPoles`
    /// False when a closed-loop pole lies in the right half-plane or on the imaginary
    /// axis; bandwidth, peaking, step metrics and noise rms are then absent.
    bool stable = true;
    /// False when the closed-loop poles could not all be located (a gain near the largest
    /// double, rounding the pole search cannot get past) and none of those found is
    /// unstable: `stable` is then false as well, so nothing that needs a stable loop is
    /// computed or passes, but the outputs say the stability is unknown (JSON `stable`:
    /// null), and `closedLoopReason` says why.
    bool stabilityKnown = true;
    int rhpPoles = 0; ///< closed-loop poles with Re s > 0
    std::string closedLoopReason; ///< why the closed-loop quantities are absent
    OptionalNumber bandwidthHz; ///< closed-loop (exact) -3 dB
    OptionalNumber peakingDb; ///< peak of |G| above |G(0)| within the passband, >= 0
    OptionalNumber peakingHz; ///< its frequency; absent when there is no peak
    /// A rise of |G| above the passband from feedthrough: its level relative to |G(0)|
    /// (dB) and, when it peaks inside the examined range, its frequency.
    OptionalNumber feedthroughDb, feedthroughHz;
    std::vector<ClosedLoopPole> poles;
    StepResult step;
    OptionalNumber desensitivityDb; ///< 20 log10 |1 + T| at DC
    std::map<std::string, double> sensitivity; ///< part id -> %/% of the DC gain
    LoopCurves curves; ///< every quantity over `frequenciesHz`
    std::optional<NoiseAnalysis> noise; ///< absent when noiseProblem says why
    std::string noiseProblem;
    std::vector<SpecVerdict> specs; ///< one per spec of the design (specVerdicts())
    /// Where the numbers cannot be trusted to full accuracy, each naming the user's part and
    /// field: a solve whose own check failed, or a value outside what real parts offer.
    /// Empty for ordinary designs. `file` is left empty (the caller knows it).
    Diagnostics warnings;
};

struct AnalysisOptions
{
    SolverPath solver = SolverPath::Reduced;
    bool sensitivity = true; ///< the per-part sensitivities (adjoint: one extra DC solve)
    bool noise = true; ///< the noise analysis (one reduced solve per frequency)
    /// Every curve over the sweep; false: only those the metrics read (LoopModel::sweepLoop),
    /// the same metrics at less cost, for scans. Impedance and two-port curves stay empty.
    bool allCurves = true;
    /// Only what a scan row reads (scanMetricsOf(): DC gain and exact impedances, margins,
    /// bandwidth, peaking, poles and stability, step metrics, noise rms and the spec check),
    /// each the same number as a full analysis gives: the loop model without topology,
    /// two-port estimate and Blackman impedances (LoopModelScope::Metrics), no Nyquist count
    /// or rate of closure, noise without the brick-wall, spot and low-frequency figures; of
    /// the curves only the exact gain and the loop gain.
    bool metricsOnly = false;
    /// Under metricsOnly, which of the metrics the caller reads (a map that shows one metric
    /// and the spec check); the work of one not read is skipped and the metric left absent.
    /// Each one computed is still the number a full analysis gives. The noise follows
    /// `noise`; the DC gain, impedances, poles and stability are always computed.
    struct Reads
    {
        bool margins = true; ///< crossover and phase margin (the loop gain over the sweep)
        bool gainMargins = true; ///< the gain margins (with `margins`)
        bool bandwidth = true; ///< also computed where `step` is read (its time span)
        bool peaking = true;
        bool step = true; ///< rise, overshoot and settling
        /// z_in and z_out at DC: without them the model leaves out their systems
        /// (LoopModelScope::GainAndLoop)
        bool impedances = true;
    } reads;
    NoiseOptions noiseOptions; ///< band; the closed-loop bandwidth is filled in by analyze()
};

/// Runs every analysis of the design over its sweep. Fails with diagnostics when the
/// design is invalid or the circuit has no solution.
Result<Analysis> analyze(const Design &design, std::string_view file = {},
                         const AnalysisOptions &options = {});

/// Adds the noise analysis to `a`, a result of analyze() for `design` made with `options`
/// but `options.noise` false: afterwards `a.noise` (or `a.noiseProblem`) and `a.specs` are what
/// analyze() with `options.noise` true gives, from the same sweep, closed-loop poles and -3 dB
/// bandwidth (Hz) that `a` holds. For the window, which shows the main curves first and the
/// noise a moment later when no view on screen needs its curves (ui/README.md §3).
void addNoiseAnalysis(const Design &design, Analysis &a, const AnalysisOptions &options = {});

/// What analyze() does once the model is built: `model` is LoopModel::build() of `design`
/// (valid, within the work budget) with `options.solver` and, under `options.metricsOnly`,
/// LoopModelScope::Metrics, or LoopModel::rebuilt() of it; the result is then analyze()'s.
/// For runs over many values of a few parts (scans), which re-stamp one model.
Analysis analyzeModel(const LoopModel &model, const Design &design,
                      const AnalysisOptions &options = {});

/// The `loopsketch.analysis/1` JSON text (two-space indent, trailing newline).
std::string analysisToJson(const Analysis &analysis);

/// A readable text summary for the terminal. With `design`, it starts with the Parts table
/// (every field of every part, partFieldTexts()).
std::string analysisToText(const Analysis &analysis, const Design *design = nullptr);

/// The Parts table as text: every part with its nodes and every field of partFieldTexts().
std::string partsToText(const Design &design);

/// The unit of every numeric key path of analysisToJson()'s output, as its top-level
/// `units` object holds it: "dc.two_port.beta" -> "S", "closed_loop.poles[].re" -> "rad/s"
/// ("[]" stands for every element of a list, "*" for every key of a map; "[0]" for one list
/// element whose unit differs from its siblings', as in `specs`). "1" marks a pure ratio
/// (a loop gain, a damping ratio).
std::vector<std::pair<std::string, std::string>> analysisUnits(const Analysis &analysis);

/// Sweep table as CSV: f_hz, then magnitude (dB) and phase (deg) columns per curve.
std::string sweepToCsv(const Analysis &analysis);

} // namespace loopsketch
