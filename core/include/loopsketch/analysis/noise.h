#pragma once

// Noise of the closed loop: thermal noise of every resistor, the source, the load, shot noise
// of a current source's DC current, the gain block's input voltage and current noise,
// referred to the output and to the input, per source and in total, and integrated over a
// band.
//
// Method: one injection column per noise source into the loop's descriptor system (a unit
// current across a resistor, a current source or at an input pin, a unit voltage on en's
// branch row), reduced once, solved at any frequency with one small LU; every source's
// transfer to the output is read off the same solve. The gain block's en is a zero-valued
// voltage source in series with in_p, between the in_p pin and the controlled source only,
// so r_in, c_in and c_cm on the pins count in its noise gain. r_in and r_out are noiseless.
//
// The rms figures integrate the real output density on the circuit model (not on the sweep
// grid): over the design's noise_band when it has one, else from the sweep start until the
// power left above is under 0.1 % of the total, beyond the sweep stop where needed.

#include "loopsketch/base/result.h"
#include "loopsketch/design/design.h"

#include <complex>
#include <optional>
#include <string>
#include <vector>

namespace loopsketch {

/// Boltzmann constant in J/K, exact by the 2019 SI definition (defined here rather than
/// taken from Boost.Units, whose constant is the older CODATA 2014 value).
inline constexpr double kBoltzmann = 1.380649e-23;

/// One-sided thermal noise voltage density of a resistance, sqrt(4 k T R), V/sqrt(Hz).
double thermalNoiseVoltage(double ohms, double kelvin);

/// One-sided thermal noise current density of a resistance, sqrt(4 k T / R), A/sqrt(Hz).
double thermalNoiseCurrent(double ohms, double kelvin);

/// Elementary charge in C, exact by the 2019 SI definition (CODATA 2018).
inline constexpr double kElementaryCharge = 1.602176634e-19;

/// One-sided shot noise current density of a DC current, sqrt(2 q |I|), A/sqrt(Hz).
double shotNoiseCurrent(double amps);

/// Density of a noise with white level `white` and 1/f corner `cornerHz` at `hz`:
/// white * sqrt(1 + corner / f). A corner of 0 gives the white level.
double flickerDensity(double white, double cornerHz, double hz);

enum class NoiseSourceKind {
    Resistor, ///< thermal noise, 4kT/R current across the resistor
    VoltageNoise, ///< gain block en, in series with in_p
    CurrentNoise, ///< gain block in, from one input pin to ground
    Shot, ///< 2q|i_dc| of a current source's DC current, across the source
};

struct NoiseContribution
{
    std::string name; ///< "RF", "Vs:r_series", "RL", "PD1:shot", "U1:en", "U1:in(in_n)"
    std::string partId; ///< the design part it belongs to
    NoiseSourceKind kind = NoiseSourceKind::Resistor;
    /// Per sweep frequency: power density at the output, V^2/Hz (A^2/Hz for a current
    /// output).
    std::vector<double> outputPsd;
    /// Output RMS of this source over the band, V (A for a current output); empty where a
    /// noise power does not exist (an unstable loop).
    std::optional<double> rms;
    /// Where in its part the noise arises: the field of a resistance inside a part
    /// ("r_series", "r_parallel"), "en" for the gain block's voltage noise; empty where the
    /// source is the whole part (a resistor, the load) or its shot noise.
    std::string field;
    /// The gain-block pin a current noise flows at ("in_p", "in_n"); empty otherwise.
    std::string pin;
};

/// How the band of the rms figures was set.
enum class NoiseBandKind {
    Given, ///< the design's noise_band (or NoiseOptions' band)
    Converged, ///< sweep start to where the power left above is under 0.1 % of the total
    SweepStop, ///< sweep start to sweep stop: the integral does not converge above the sweep
};

/// The older figure kept for comparison: the input-referred density integrated from the
/// sweep start to pi/2 times the closed-loop -3 dB bandwidth (the equivalent noise
/// bandwidth of a single-pole roll-off), times the gain at the sweep start.
struct BrickWallNoise
{
    double highHz = 0; ///< pi/2 f_-3dB, Hz
    std::optional<double> outputRms; ///< V (A for a current output)
    std::optional<double> inputRms; ///< V or A, as the input-referred density
};

/// Spot noise: the densities at one frequency (the design's noise_spot_hz).
struct SpotNoise
{
    double atHz = kDefaultNoiseSpotHz; ///< Hz
    /// Total output density at atHz, V/sqrt(Hz) (A/sqrt(Hz) for a current output); NaN where
    /// the circuit has no solution there.
    double outputDensity = 0;
    /// Output density over |gain| at atHz, V/sqrt(Hz) or A/sqrt(Hz) as the source; absent
    /// where the gain is zero.
    std::optional<double> inputDensity;
    /// Spot noise figure at atHz (IEEE, T0 = 290 K), dB: voltage source with r_series only.
    std::optional<double> noiseFigureDb;
};

/// The 0.1 Hz to 10 Hz noise of precision stages: the rms over that band and the
/// peak-to-peak figure 6.6 x rms (the value exceeded 0.1 % of the time by Gaussian noise,
/// common practice).
struct LowFrequencyNoise
{
    double lowHz = 0.1; ///< Hz
    double highHz = 10; ///< Hz
    double outputRms = 0; ///< V (A for a current output)
    double outputPeakToPeak = 0; ///< 6.6 x outputRms
    std::optional<double> inputPeakToPeak; ///< outputPeakToPeak / |gain| at lowHz
};

/// Peak-to-peak over rms of Gaussian noise for the 0.1-10 Hz figure (common practice).
inline constexpr double kPeakToPeakPerRms = 6.6;

/// Absolute temperature of the noise figure's source, K (IEEE definition).
inline constexpr double kNoiseFigureT0 = 290.0;

/// Noise factor as a figure in dB (IEEE: total output noise power with the source at T0 over
/// the part due to the source): 10 log10(1 + (total - source) / (source T0 / T)). `total`
/// and `source` are powers (or power densities) at the design temperature `kelvin`.
double noiseFigureDb(double total, double source, double kelvin);

/// Signal-to-noise ratio of a full-scale sine of peak `signalPeak` against an input-referred
/// rms noise `inputRms` (same unit), dB: 20 log10((peak / sqrt 2) / rms).
double signalToNoiseDb(double signalPeak, double inputRms);

struct NoiseOptions
{
    /// A band, Hz, in place of the design's noise_band; a missing end is the sweep's.
    std::optional<double> bandLowHz;
    std::optional<double> bandHighHz;
    /// Closed-loop -3 dB bandwidth, Hz, for the brick-wall equivalent; found from the gain
    /// over the sweep when absent.
    std::optional<double> closedLoopBandwidthHz;
    /// The band rms figures alone (output and input-referred), without the brick-wall
    /// equivalent: what a scan row reads.
    bool rmsOnly = false;
};

struct NoiseAnalysis
{
    double temperatureK = kDefaultTemperatureK;
    std::vector<double> frequenciesHz; ///< the design's sweep
    std::vector<NoiseContribution> contributions; ///< sources that can reach the output
    /// Total output density per frequency, V/sqrt(Hz) (A/sqrt(Hz) for a current output).
    std::vector<double> outputDensity;
    /// Output density over |gain|: V/sqrt(Hz) for a voltage source, A/sqrt(Hz) for a current
    /// source. NaN at every frequency when the gain is zero (inputProblem says so).
    std::vector<double> inputDensity;
    /// Why there are no input-referred figures (inputDensity, inputRms); empty when there
    /// are.
    std::string inputProblem;
    /// |output per unit en| of the gain block, V/V (A/V for a current output).
    std::vector<double> noiseGain;
    /// The closed-loop gain from the same solves (output per unit source value).
    std::vector<std::complex<double>> gain;

    double bandLowHz = 0; ///< Hz, the band integrated
    double bandHighHz = 0; ///< Hz; may lie beyond the sweep stop
    NoiseBandKind bandKind = NoiseBandKind::Converged;
    std::string bandMethod; ///< the band and the rms method in words, for reports
    /// Integral of the output density over the band, rooted: V (A for a current output).
    std::optional<double> outputRms;
    /// outputRms / |gain| at inputGainHz: V or A, as inputDensity. Absent where the gain is 0.
    std::optional<double> inputRms;
    double inputGainHz = 0; ///< Hz, the band's low end
    std::optional<BrickWallNoise> brickWall; ///< absent without a closed-loop bandwidth

    /// Output rms from the first sweep frequency up to each sweep frequency (trapezoidal in
    /// ln f on the sampled density): V (A for a current output). Empty for an unstable loop.
    std::vector<double> cumulativeRms;
    SpotNoise spot; ///< at the design's noise_spot_hz
    std::optional<LowFrequencyNoise> lowFrequency; ///< absent for an unstable loop
    /// Peak of the full-scale sine at the source (the design's signal_level): V or A.
    std::optional<double> signalLevel;
    /// signalLevel x |gain| at inputGainHz, V (A for a current output).
    std::optional<double> outputPeak;
    /// 2 pi bandHighHz outputPeak: the slew rate a full-scale sine at the band's upper edge
    /// needs, V/s (A/s for a current output).
    std::optional<double> slewRate;
    /// signalToNoiseDb(signalLevel, inputRms), dB.
    std::optional<double> snrDb;
    /// noiseFigureDb() over the band, from the source's r_series contribution, dB: voltage
    /// source with r_series only.
    std::optional<double> noiseFigureDb;
};

/// Noise of the design: densities over its sweep, rms over the band (see NoiseBandKind). The
/// design must be valid. Fails with a diagnostic when the circuit has no solution at a
/// frequency or the band is not a positive [low, high] pair.
Result<NoiseAnalysis> analyzeNoise(const Design &design, const NoiseOptions &options = {});

/// The source's own thermal noise contribution: the signal source's r_series (a voltage
/// source) or r_parallel (a current source); nullptr when it has none.
const NoiseContribution *sourceContribution(const NoiseAnalysis &noise, const Design &design);

/// Integral of a power density sampled at ascending frequencies `hz` over [low, high]:
/// trapezoidal rule in ln f on psd * f, which is linear in the density (contributions add
/// exactly) and exact on a 1/f segment. Units: psd units times Hz. The band is clipped to
/// the samples; the ends are interpolated linearly in ln f.
double integratePsd(const std::vector<double> &hz, const std::vector<double> &psd, double low,
                    double high);

} // namespace loopsketch
