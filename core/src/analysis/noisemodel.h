#pragma once

// The circuit the noise analysis solves: the loop netlist with the gain block's en in series
// with in_p, one injection per noise source, the closed-loop gain and en's noise gain, all
// reduced once and evaluated at any frequencies (the sweep's, and those the band integral
// asks for beyond it).

#include "detail/bandintegral.h"
#include "loopsketch/analysis/noise.h"
#include "loopsketch/circuit/circuit.h"
#include "loopsketch/circuit/reducedsystem.h"
#include "loopsketch/circuit/restamp.h"

#include <complex>
#include <span>
#include <vector>

namespace loopsketch::detail {

/// Densities at a set of frequencies.
struct NoiseSamples
{
    /// Output power density of each source, source-major: psd[k * n + i], V^2/Hz (A^2/Hz for
    /// a current output).
    std::vector<double> psd;
    std::vector<std::complex<double>> gain; ///< closed-loop gain per frequency
    std::vector<double> noiseGain; ///< |output per unit en| per frequency
    /// First frequency where the circuit had no solution (Hz), NaN when none.
    double failedAtHz = 0;
    bool ok = true;
};

class NoiseModel
{
public:
    /// Builds the noise circuit of a valid design.
    static Result<NoiseModel> build(const Design &design);

    /// build(`design`) for a design that differs from this model's only in the values
    /// `changes` name (`from`: the value this model holds), as LoopModel::rebuilt(): where
    /// every change is restampable() and each changed resistance's noise is stamped from the
    /// field's own value, the system is re-stamped and reduced and the thermal densities
    /// taken anew by build()'s own expression, so the numbers are build()'s; otherwise it
    /// builds afresh. For scans, which keep one model per worker.
    Result<NoiseModel> rebuilt(const Design &design, std::span<const FieldChange> changes) const;

    /// The sources in the order of NoiseSamples::psd, with their names and kinds (no
    /// densities).
    const std::vector<NoiseContribution> &sources() const { return m_contributions; }

    /// Evaluates at `hz` (Hz) with `points` the matching s = j 2 pi f (rad/s).
    NoiseSamples evaluate(std::span<const double> hz,
                          std::span<const std::complex<double>> points) const;
    /// The same, computing the points.
    NoiseSamples evaluate(std::span<const double> hz) const;
    /// The output power density of every source as band-integral columns (source-major, as
    /// NoiseSamples::psd, V^2/Hz or A^2/Hz); false where the circuit has no solution. The
    /// model must outlive the function.
    DensityColumns densityColumns() const;

    /// The circuit's natural frequencies, rad/s (those of the loop: en is a zero source).
    std::vector<std::complex<double>> naturalFrequencies() const
    {
        return m_reduced->naturalFrequencies();
    }

    /// Why the circuit has no solution at s, for a diagnostic ("" when unknown).
    std::string describeFailure(std::complex<double> s) const;

private:
    struct Injection
    {
        int plus = -1; ///< unknown whose entry is +1 (-1: ground)
        int minus = -1;
        double white = 0; ///< A/sqrt(Hz) for currents, V/sqrt(Hz) for en
        double cornerHz = 0;
        /// A resistance's thermal noise: its part, field and ohms (white = sqrt(4 k T / ohms));
        /// empty part for the other sources.
        std::string part, field;
        double ohms = 0;
    };
    /// The injection columns, the gain's and en's, on the output row, reduced: build()'s
    /// last step, also rebuilt()'s.
    bool reduce(int enRow);
    std::vector<NoiseContribution> m_contributions;
    std::vector<Injection> m_injections;
    DescriptorSystem m_system;
    std::optional<ReducedSystem> m_reduced;
    std::size_t m_gainColumn = 0;
    std::size_t m_enColumn = 0; ///< the column of en's transfer (noise gain)
    std::size_t m_columns = 0;
    int m_enRow = -1;
    double m_fourKT = 0; ///< 4 k T of the design's temperature
    std::string m_problem; ///< why reduce() failed
};

} // namespace loopsketch::detail
