#include "analysis/noisefigures.h"

#include "analysis/noisemodel.h"
#include "detail/bandintegral.h"

#include <cmath>
#include <numbers>

namespace loopsketch {

double noiseFigureDb(double total, double source, double kelvin)
{
    const double atT0 = source * kNoiseFigureT0 / kelvin;
    return 10.0 * std::log10(1.0 + (total - source) / atT0);
}

double signalToNoiseDb(double signalPeak, double inputRms)
{
    return 20.0 * std::log10(signalPeak / std::numbers::sqrt2 / inputRms);
}

const NoiseContribution *sourceContribution(const NoiseAnalysis &noise, const Design &design)
{
    for (const NoiseContribution &c : noise.contributions)
        if (c.partId == design.input && c.kind == NoiseSourceKind::Resistor)
            return &c;
    return nullptr;
}

namespace detail {

namespace {

bool isVoltageSourceWithResistance(const Design &design)
{
    const Part *source = design.signalSource();
    return source && source->type == PartType::VSource && source->number("r_series") > 0;
}

std::vector<double> cumulative(const std::vector<double> &hz, const std::vector<double> &density)
{
    std::vector<double> out(hz.size(), 0.0);
    double power = 0;
    for (std::size_t i = 1; i < hz.size(); ++i) {
        const double a = density[i - 1] * density[i - 1] * hz[i - 1];
        const double b = density[i] * density[i] * hz[i];
        if (std::isfinite(a) && std::isfinite(b))
            power += 0.5 * (a + b) * std::log(hz[i] / hz[i - 1]);
        out[i] = std::sqrt(power);
    }
    return out;
}

} // namespace

void addSignalFigures(const Design &design, NoiseAnalysis &n)
{
    n.signalLevel.reset();
    n.snrDb.reset();
    if (!design.signalLevel)
        return;
    n.signalLevel = design.signalLevel->si;
    if (n.inputRms && *n.inputRms > 0)
        n.snrDb = signalToNoiseDb(*n.signalLevel, *n.inputRms);
}

void addNoiseFigures(const NoiseModel &model, const Design &design, NoiseAnalysis &n, bool stable)
{
    const std::size_t sources = model.sources().size();
    const auto total = [&](const NoiseSamples &s, std::size_t i, std::size_t count) {
        double sum = 0;
        for (std::size_t k = 0; k < sources; ++k)
            sum += s.psd[k * count + i];
        return sum;
    };

    // Spot noise.
    n.spot = SpotNoise{};
    n.spot.atHz = design.noiseSpotFrequencyHz();
    {
        const double f[] = {n.spot.atHz};
        const NoiseSamples s = model.evaluate(f);
        if (!s.ok) {
            n.spot.outputDensity = std::nan("");
        } else {
            const double power = total(s, 0, 1);
            n.spot.outputDensity = std::sqrt(power);
            const double g = std::abs(s.gain.front());
            if (g > 0 && n.inputProblem.empty())
                n.spot.inputDensity = n.spot.outputDensity / g;
            if (isVoltageSourceWithResistance(design)) {
                for (std::size_t k = 0; k < sources; ++k) {
                    const NoiseContribution &c = model.sources()[k];
                    if (c.partId == design.input && c.kind == NoiseSourceKind::Resistor
                        && s.psd[k] > 0)
                        n.spot.noiseFigureDb = noiseFigureDb(power, s.psd[k], n.temperatureK);
                }
            }
        }
    }
    n.cumulativeRms.clear();
    n.lowFrequency.reset();
    n.outputPeak.reset();
    n.slewRate.reset();
    n.noiseFigureDb.reset();
    addSignalFigures(design, n);
    if (!stable)
        return;

    n.cumulativeRms = cumulative(n.frequenciesHz, n.outputDensity);

    // 0.1 Hz to 10 Hz.
    const DensityColumns perSource = model.densityColumns();
    LowFrequencyNoise low;
    const BandIntegral lf = integrateBand(perSource, sources, low.lowHz, low.highHz, 1e-6, 2.0);
    if (lf.ok && std::isfinite(lf.total)) {
        low.outputRms = std::sqrt(std::max(lf.total, 0.0));
        low.outputPeakToPeak = kPeakToPeakPerRms * low.outputRms;
        const double f[] = {low.lowHz};
        const NoiseSamples s = model.evaluate(f);
        if (s.ok && std::abs(s.gain.front()) > 0 && n.inputProblem.empty())
            low.inputPeakToPeak = low.outputPeakToPeak / std::abs(s.gain.front());
        n.lowFrequency = low;
    }

    // The full-scale signal: output peak and slew rate, from |gain| at the input-referred
    // figures' frequency.
    if (n.signalLevel) {
        const double f[] = {n.inputGainHz};
        const NoiseSamples s = model.evaluate(f);
        if (s.ok) {
            n.outputPeak = *n.signalLevel * std::abs(s.gain.front());
            n.slewRate = 2.0 * std::numbers::pi * n.bandHighHz * *n.outputPeak;
        }
    }

    // Noise figure over the band.
    if (isVoltageSourceWithResistance(design) && n.outputRms) {
        if (const NoiseContribution *src = sourceContribution(n, design); src && src->rms) {
            const double source = *src->rms * *src->rms;
            if (source > 0)
                n.noiseFigureDb
                    = noiseFigureDb(*n.outputRms * *n.outputRms, source, n.temperatureK);
        }
    }
}

} // namespace detail

} // namespace loopsketch
