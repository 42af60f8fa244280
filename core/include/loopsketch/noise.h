#pragma once

// Noise of the closed loop: thermal noise of every resistor, the gain block's input voltage
// and current noise, referred to the output and to the input, per source and in total, and
// integrated over a band.
//
// Method: for each frequency one solve of the transposed system (G + jwC)^T z = l, where l
// is the output row of L. z[k] is then the transfer from a unit current injected into node
// k (and, at a branch row, from a unit voltage of that source) to the output, so every noise
// source is read off the same vector. The gain block's en is a zero-valued voltage source
// inserted in series with in_p (between the in_p pin and the input resistance, capacitance
// and controlled source), so its transfer is z at that source's branch row: the noise gain.

#include "loopsketch/design.h"
#include "loopsketch/result.h"

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

/// Density of a noise with white level `white` and 1/f corner `cornerHz` at `hz`:
/// white * sqrt(1 + corner / f). A corner of 0 gives the white level.
double flickerDensity(double white, double cornerHz, double hz);

enum class NoiseSourceKind {
    Resistor, ///< thermal noise, 4kT/R current across the resistor
    VoltageNoise, ///< gain block en, in series with in_p
    CurrentNoise, ///< gain block in, from one input pin to ground
};

struct NoiseContribution
{
    std::string name; ///< "RF", "Vs:r_series", "RL", "U1:r_in", "U1:en", "U1:in(in_n)"
    std::string partId; ///< the design part it belongs to
    NoiseSourceKind kind = NoiseSourceKind::Resistor;
    /// Per sweep frequency: power density at the output, V^2/Hz (A^2/Hz for a current
    /// output).
    std::vector<double> outputPsd;
    double rms = 0; ///< output RMS of this source over the band, V (A for a current output)
};

struct NoiseOptions
{
    /// A band set by the user, Hz; both ends must lie within the sweep. Absent: the default
    /// band (sweep start to pi/2 times the closed-loop -3 dB bandwidth).
    std::optional<double> bandLowHz;
    std::optional<double> bandHighHz;
    /// Closed-loop -3 dB bandwidth, Hz, for the default band; found from the gain over the
    /// sweep when absent.
    std::optional<double> closedLoopBandwidthHz;
};

struct NoiseAnalysis
{
    double temperatureK = kDefaultTemperatureK;
    std::vector<double> frequenciesHz; ///< the design's sweep
    std::vector<NoiseContribution> contributions; ///< sources that can reach the output
    /// Total output density per frequency, V/sqrt(Hz) (A/sqrt(Hz) for a current output).
    std::vector<double> outputDensity;
    /// Output density over |gain|: V/sqrt(Hz) for a voltage source, A/sqrt(Hz) for a current
    /// source. NaN where the gain is zero.
    std::vector<double> inputDensity;
    /// |output per unit en| of the gain block, V/V (A/V for a current output).
    std::vector<double> noiseGain;
    /// The closed-loop gain from the same solves (output per unit source value).
    std::vector<std::complex<double>> gain;

    double bandLowHz = 0; ///< Hz, the band integrated
    double bandHighHz = 0; ///< Hz
    /// True for the default band: input-referred power integrated from the sweep start to
    /// pi/2 f_-3dB (equivalent noise bandwidth of a single-pole roll-off, brick-wall), output
    /// RMS = that times the gain at the sweep start. False: both integrated over the user's
    /// band as computed.
    bool brickWall = true;
    std::string bandMethod; ///< the band's definition in words, for reports
    std::optional<double> outputRms; ///< V (A for a current output)
    std::optional<double> inputRms; ///< V or A, as inputDensity
};

/// Noise of the design over its sweep. The design must be valid. Fails with a diagnostic
/// when the circuit has no solution at a frequency or the band lies outside the sweep.
Result<NoiseAnalysis> analyzeNoise(const Design &design, const NoiseOptions &options = {});

/// Integral of a power density sampled at ascending frequencies `hz` over [low, high]:
/// trapezoidal rule in ln f on psd * f, which is linear in the density (contributions add
/// exactly) and exact on a 1/f segment. Units: psd units times Hz. The band is clipped to
/// the samples; the ends are interpolated linearly in ln f.
double integratePsd(const std::vector<double> &hz, const std::vector<double> &psd, double low,
                    double high);

} // namespace loopsketch
