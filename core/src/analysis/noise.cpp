#include "loopsketch/analysis/noise.h"

#include "analysis/noisefigures.h"
#include "analysis/noisemodel.h"
#include "analysis/noisesweep.h"
#include "detail/bandintegral.h"

#include "loopsketch/circuit/reducedsystem.h"

#include "loopsketch/base/value.h"
#include "loopsketch/circuit/circuit.h"
#include "loopsketch/circuit/loopcircuit.h"

#include <Eigen/LU>

#include <algorithm>
#include <cmath>
#include <limits>
#include <map>
#include <numbers>

namespace loopsketch {

using detail::BandIntegral;
using detail::ConvergedBand;
using detail::DensityColumns;
using detail::integrateBand;
using detail::integrateUntilConverged;
using detail::NoiseSamples;

double thermalNoiseVoltage(double ohms, double kelvin)
{
    return std::sqrt(4.0 * kBoltzmann * kelvin * ohms);
}

double thermalNoiseCurrent(double ohms, double kelvin)
{
    return std::sqrt(4.0 * kBoltzmann * kelvin / ohms);
}

double shotNoiseCurrent(double amps)
{
    return std::sqrt(2.0 * kElementaryCharge * std::abs(amps));
}

double flickerDensity(double white, double cornerHz, double hz)
{
    if (cornerHz == 0.0) // white noise (every resistor): skip the root of exactly 1
        return white;
    return white * std::sqrt(1.0 + cornerHz / hz);
}

namespace {

/// ln(hz[i + 1] / hz[i]) for each interval: the same for every density integrated over one
/// sweep, so the noise analysis takes them once for all its sources.
std::vector<double> logSpans(const std::vector<double> &hz)
{
    std::vector<double> spans(hz.size() > 1 ? hz.size() - 1 : 0);
    for (std::size_t i = 0; i < spans.size(); ++i)
        spans[i] = std::log(hz[i + 1] / hz[i]);
    return spans;
}

/// integratePsd() with the intervals' logarithms given.
double integrateWithSpans(const std::vector<double> &hz, const std::vector<double> &spans,
                          const std::vector<double> &psd, double low, double high)
{
    if (hz.size() < 2 || psd.size() != hz.size())
        return 0.0;
    low = std::max(low, hz.front());
    high = std::min(high, hz.back());
    if (!(high > low))
        return 0.0;
    double sum = 0.0;
    for (std::size_t i = 0; i + 1 < hz.size(); ++i) {
        const double f1 = hz[i], f2 = hz[i + 1];
        const double a = std::max(f1, low), b = std::min(f2, high);
        if (!(b > a))
            continue;
        const double span = spans[i];
        if (a == f1 && b == f2) { // a whole interval: no interpolation, one logarithm
            sum += 0.5 * (psd[i] * f1 + psd[i + 1] * f2) * span;
            continue;
        }
        const auto at = [&](double f) {
            const double t = span > 0 ? std::log(f / f1) / span : 0.0;
            return (psd[i] + t * (psd[i + 1] - psd[i])) * f;
        };
        sum += 0.5 * (at(a) + at(b)) * std::log(b / a);
    }
    return sum;
}

} // namespace

double integratePsd(const std::vector<double> &hz, const std::vector<double> &psd, double low,
                    double high)
{
    if (hz.size() < 2 || psd.size() != hz.size())
        return 0.0;
    return integrateWithSpans(hz, logSpans(hz), psd, low, high);
}

namespace {

// First frequency where |H| falls below |H(f0)| / sqrt(2), interpolated in log f.
std::optional<double> bandwidthFromGain(const std::vector<double> &f,
                                        const std::vector<std::complex<double>> &h)
{
    if (h.empty() || !(std::abs(h.front()) > 0))
        return std::nullopt;
    const double level = std::abs(h.front()) / std::numbers::sqrt2;
    for (std::size_t i = 1; i < h.size(); ++i) {
        const double m0 = std::abs(h[i - 1]), m1 = std::abs(h[i]);
        if (m1 < level && m0 >= level) {
            const double t = (std::log(m0) - std::log(level)) / (std::log(m0) - std::log(m1));
            return std::exp(std::log(f[i - 1]) + t * std::log(f[i] / f[i - 1]));
        }
    }
    return std::nullopt;
}

// The default band's march stops here unconverged: far above any loop this tool is for, and
// fixed so that the figure does not follow the sweep stop.
constexpr double kConvergenceCapHz = 1e12;
// Share of the total power that may lie above the default band's end.
constexpr double kRemainingShare = 1e-3;
// Relative accuracy of the band integrals.
constexpr double kIntegralTolerance = 1e-6;

std::string frequencyText(double hz)
{
    return formatEngineering(hz, 4, "Hz");
}

Diagnostic noSolution(const detail::NoiseModel &model, double hz)
{
    const std::string why = model.describeFailure({0.0, 2.0 * std::numbers::pi * hz});
    return Diagnostic{{},
                      {},
                      {},
                      "noise: the circuit has no solution at " + frequencyText(hz)
                          + (why.empty() ? std::string() : " (" + why + ")")};
}

} // namespace

namespace {

/// Each source's output density from `grid`, the gain and noise gain, and the total output
/// and input-referred densities, into `result`. Returns whether the closed-loop gain is
/// exactly zero somewhere on the sweep (then nothing is referred to the input).
bool storeDensities(const detail::NoiseModel &model, NoiseSamples &grid, NoiseAnalysis &result)
{
    const std::size_t count = result.frequenciesHz.size();
    const std::size_t sources = model.sources().size();
    for (std::size_t k = 0; k < sources; ++k) {
        NoiseContribution c = model.sources()[k];
        c.outputPsd.assign(grid.psd.begin() + static_cast<std::ptrdiff_t>(k * count),
                           grid.psd.begin() + static_cast<std::ptrdiff_t>((k + 1) * count));
        result.contributions.push_back(std::move(c));
    }
    result.gain = std::move(grid.gain);
    result.noiseGain = std::move(grid.noiseGain);
    // A rational gain that is not zero vanishes on the jw axis only at its own zeros, which
    // a sweep grid does not hit exactly; an exact 0 at a sweep frequency means the signal
    // never reaches the output (no path, or one that cancels to nothing), and the values
    // beside it are round-off of that zero, not a gain to refer the noise through.
    const bool gainIsZero = std::any_of(result.gain.begin(), result.gain.end(),
                                        [](std::complex<double> g) { return g == 0.0; });
    if (gainIsZero)
        result.inputProblem = "the closed-loop gain is zero (the signal source does not reach "
                              "the output), so there is no input-referred noise";
    result.outputDensity.resize(count);
    result.inputDensity.resize(count);
    for (std::size_t i = 0; i < count; ++i) {
        double total = 0.0;
        for (std::size_t k = 0; k < sources; ++k)
            total += grid.psd[k * count + i];
        result.outputDensity[i] = std::sqrt(total);
        const double g = std::sqrt(std::norm(result.gain[i]));
        result.inputDensity[i]
            = gainIsZero ? std::numeric_limits<double>::quiet_NaN() : result.outputDensity[i] / g;
    }
    return gainIsZero;
}

/// The band integral of every source over the band the options or the design give, into
/// `result`'s band fields; a diagnostic where the band is malformed.
Result<BandIntegral> integrateGivenBand(const DensityColumns &perSource, std::size_t sources,
                                        double low, double high, bool fromDesign,
                                        NoiseAnalysis &result)
{
    if (!(std::isfinite(low) && std::isfinite(high) && low > 0 && low < high)) {
        return Diagnostic{{},
                          {},
                          "noise_band",
                          "noise band must be two frequencies above zero with the low end "
                          "below the high end"};
    }
    result.bandKind = NoiseBandKind::Given;
    result.bandLowHz = low;
    result.bandHighHz = high;
    result.bandMethod = std::string("output density integrated over ")
        + (fromDesign ? "the design's noise_band" : "the given band");
    return integrateBand(perSource, sources, low, high, kIntegralTolerance, 2.0 /*per decade*/);
}

/// The default band: marched up from the sweep start until the power left above is under
/// kRemainingShare, or, where it does not converge, up to the sweep stop.
Result<BandIntegral> integrateDefaultBand(const detail::NoiseModel &model,
                                          const DensityColumns &perSource,
                                          const std::vector<double> &hz,
                                          const std::vector<std::complex<double>> &poles,
                                          NoiseAnalysis &result)
{
    const std::size_t sources = model.sources().size();
    result.bandLowHz = hz.front();
    // Not before the circuit's last natural frequency below the cap: above it every
    // density is a plain power law, so the estimate of the power left above is sound.
    double lastPoleHz = 0;
    for (const std::complex<double> &p : poles) {
        const double f = std::abs(p) / (2.0 * std::numbers::pi);
        if (std::isfinite(f) && f < kConvergenceCapHz)
            lastPoleHz = std::max(lastPoleHz, f);
    }
    const double cap = std::max(kConvergenceCapHz, 10.0 * hz.back());
    ConvergedBand march = integrateUntilConverged(
        perSource, sources, hz.front(), cap, 2.0 * lastPoleHz, kRemainingShare, kIntegralTolerance);
    if (!march.ok)
        return noSolution(model, march.failedAtHz);
    if (march.converged) {
        result.bandKind = NoiseBandKind::Converged;
        result.bandHighHz = march.highHz;
        result.bandMethod
            = "output density integrated on the circuit model from the sweep start until "
              "the power left above is under 0.1 % of the total"
            + std::string(march.highHz > hz.back() ? " (beyond the sweep stop)" : "");
        return std::move(march.integral);
    }
    result.bandKind = NoiseBandKind::SweepStop;
    result.bandHighHz = hz.back();
    result.bandMethod
        = "output density integrated from the sweep start to the sweep stop: above the "
          "sweep the density does not fall fast enough for the integral to converge "
          "(flat noise at high frequency, e.g. feedthrough), so the figure depends on "
          "the sweep stop";
    return integrateBand(perSource, sources, hz.front(), hz.back(), kIntegralTolerance, 2.0);
}

/// The input-referred rms: the output figure over the gain at the band's low end.
std::optional<Diagnostic> referToInput(const detail::NoiseModel &model, bool gainIsZero,
                                       NoiseAnalysis &result)
{
    result.inputGainHz = result.bandLowHz;
    const double f[] = {result.inputGainHz};
    NoiseSamples at = model.evaluate(f);
    if (!at.ok)
        return noSolution(model, at.failedAtHz);
    const double g = std::abs(at.gain.front());
    if (g > 0 && !gainIsZero)
        result.inputRms = *result.outputRms / g;
    else if (result.inputProblem.empty())
        result.inputProblem = "the closed-loop gain is zero at " + frequencyText(result.inputGainHz)
            + ", so there is no input-referred noise";
    if (result.inputProblem.empty())
        result.bandMethod
            += "; input-referred rms = output rms / |gain| at " + frequencyText(result.inputGainHz);
    return std::nullopt;
}

/// The brick-wall equivalent, for comparison with the older figure: the input-referred
/// density integrated up to pi/2 times the closed-loop bandwidth (Hz).
std::optional<BrickWallNoise> brickWallEquivalent(const detail::NoiseModel &model,
                                                  std::optional<double> bw,
                                                  const std::vector<double> &hz,
                                                  const NoiseAnalysis &result)
{
    const std::size_t sources = model.sources().size();
    if (!bw)
        bw = bandwidthFromGain(hz, result.gain);
    const double gain0 = std::abs(result.gain.front());
    if (!(bw && *bw > 0 && gain0 > 0))
        return std::nullopt;
    BrickWallNoise brick;
    brick.highHz = std::numbers::pi / 2.0 * *bw;
    const DensityColumns inputReferred
        = [&](std::span<const double> f, std::vector<double> &values) {
              NoiseSamples s = model.evaluate(f);
              if (!s.ok)
                  return false;
              values.assign(f.size(), 0.0);
              for (std::size_t i = 0; i < f.size(); ++i) {
                  double total = 0;
                  for (std::size_t k = 0; k < sources; ++k)
                      total += s.psd[k * f.size() + i];
                  values[i] = total / std::norm(s.gain[i]);
              }
              return true;
          };
    if (brick.highHz > hz.front()) {
        BandIntegral b
            = integrateBand(inputReferred, 1, hz.front(), brick.highHz, kIntegralTolerance, 2.0);
        if (b.ok && std::isfinite(b.total)) {
            brick.inputRms = std::sqrt(std::max(b.total, 0.0));
            brick.outputRms = *brick.inputRms * gain0;
        }
    }
    return brick;
}

} // namespace

Result<NoiseAnalysis> analyzeNoise(const Design &design, const NoiseOptions &options)
{
    const std::vector<double> hz = design.sweep.frequencies();
    std::vector<std::complex<double>> points(hz.size());
    for (std::size_t i = 0; i < hz.size(); ++i)
        points[i] = {0.0, 2.0 * std::numbers::pi * hz[i]};
    auto model = detail::NoiseModel::build(design);
    if (!model)
        return model.diagnostics();
    auto noise = detail::analyzeNoiseOver(*model, design, options, hz, points);
    if (!noise)
        return noise;
    NoiseAnalysis result = std::move(noise).value();
    detail::addNoiseFigures(*model, design, result);
    return result;
}

Result<NoiseAnalysis>
detail::analyzeNoiseOver(const NoiseModel &model, const Design &design, const NoiseOptions &options,
                         const std::vector<double> &frequenciesHz,
                         std::span<const std::complex<double>> points,
                         const std::vector<std::complex<double>> *naturalFrequencies)
{
    const std::vector<double> &hz = frequenciesHz;
    if (hz.size() < 2)
        return Diagnostic{{}, {}, "sweep", "noise: the sweep needs at least two frequencies"};

    NoiseAnalysis result;
    result.temperatureK = design.temperatureK();
    result.frequenciesHz = frequenciesHz;
    NoiseSamples grid = model.evaluate(hz, points);
    if (!grid.ok)
        return noSolution(model, grid.failedAtHz);
    const bool gainIsZero = storeDensities(model, grid, result);

    // The densities of every source on the model, for the band integrals.
    const std::size_t sources = model.sources().size();
    const DensityColumns perSource = model.densityColumns();
    Result<BandIntegral> band = [&]() -> Result<BandIntegral> {
        if (options.bandLowHz || options.bandHighHz)
            return integrateGivenBand(perSource, sources, options.bandLowHz.value_or(hz.front()),
                                      options.bandHighHz.value_or(hz.back()), false, result);
        if (design.noiseBand)
            return integrateGivenBand(perSource, sources, design.noiseBand->low.si,
                                      design.noiseBand->high.si, true, result);
        return integrateDefaultBand(
            model, perSource, hz,
            naturalFrequencies ? *naturalFrequencies : model.naturalFrequencies(), result);
    }();
    if (!band)
        return band.diagnostics();
    const BandIntegral &integral = *band;
    if (!integral.ok)
        return noSolution(model, integral.failedAtHz);
    for (std::size_t k = 0; k < sources; ++k)
        result.contributions[k].rms = std::sqrt(std::max(integral.columns[k], 0.0));
    result.outputRms = std::sqrt(std::max(integral.total, 0.0));

    if (auto failed = referToInput(model, gainIsZero, result))
        return *failed;
    if (!gainIsZero && !options.rmsOnly)
        result.brickWall = brickWallEquivalent(model, options.closedLoopBandwidthHz, hz, result);
    return result;
}

} // namespace loopsketch
