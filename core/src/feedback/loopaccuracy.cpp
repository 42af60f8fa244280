// The loop model's accuracy check: every system it solves is probed at DC and across the
// sweep against a careful solve; where the rounding cannot be bounded, a warning names the
// part and field that set it (core/README.md, section 5).
#include "loopsketch/feedback/loopmodel.h"

#include "loopsketch/circuit/loopcircuit.h"

#include <algorithm>
#include <cmath>
#include <limits>
#include <numbers>

namespace loopsketch {
namespace {

/// The smallest positive resistance any part gives, in ohms (a resistor, a load, a gain
/// block's input or output resistance, a source's series resistance, given or by default);
/// 0 when there is none (then nothing counts as zero but zero itself).
double smallestResistance(const Design &design)
{
    double smallest = std::numeric_limits<double>::infinity();
    for (const Part &part : design.parts)
        for (const FieldSpec &field : partSpec(part.type).fields)
            if (field.kind == ValueKind::Resistance) {
                const double r = part.number(field.name);
                if (r > 0 && std::isfinite(r))
                    smallest = std::min(smallest, r);
            }
    return std::isfinite(smallest) ? smallest : 0.0;
}

// The entries shown as they are, each with the quantity its warnings name.
CheckedEntry gainEntry()
{
    return {{loopio::kOutput, loopio::kSource}, "the gain"};
}
CheckedEntry zInEntry(double zeroLevel)
{
    return {{loopio::kInputVoltage, loopio::kInputPort}, "z_in", true, zeroLevel};
}
CheckedEntry zOutEntry(double zeroLevel)
{
    return {{loopio::kLoadVoltage, loopio::kLoadPort}, "z_out", true, zeroLevel};
}
CheckedEntry loopGainEntry()
{
    return {{loopio::kReturned, loopio::kTest}, "the loop gain"};
}

} // namespace

std::vector<Complex> LoopModel::accuracyProbes(const Design &design)
{
    std::vector<Complex> probes = {Complex(0.0)};
    const std::vector<double> hz = design.sweep.frequencies();
    if (!hz.empty()) {
        // DC, and the start, middle and top of the sweep: the start on its own, since DC
        // stands for nothing where the circuit is singular there (a capacitive port), and
        // the sweep's low end may then be as ill-conditioned as DC is singular.
        const double mid = std::sqrt(hz.front() * hz.back());
        for (double f : {hz.front(), mid, hz.back()})
            probes.push_back({0.0, 2.0 * std::numbers::pi * f});
    }
    return probes;
}

void LoopModel::checkAccuracy(const Design &design)
{
    const std::vector<Complex> probes = accuracyProbes(design);
    const auto run
        = [&](std::optional<ReducedSystem> &system, std::initializer_list<CheckedEntry> entries) {
              if (!system)
                  return;
              AccuracyCheck c = system->checkAccuracy(
                  probes, std::span<const CheckedEntry>(entries.begin(), entries.size()),
                  kAssuredRelativeError);
              m_worstRelativeError = std::max(m_worstRelativeError, c.worstRelativeError);
              m_refinedSystems += c.refined ? 1 : 0;
              // One warning per quantity, even where two name the same part and field: the
              // gain's warning says nothing of how far z_in may be off (fuzz seed 648: z_in
              // off by 17 % under a warning about the gain alone).
              for (Diagnostic &d : c.warnings)
                  m_warnings.push_back(std::move(d));
          };
    // The exact gain and impedances are shown as solved, and the return-ratio curves are
    // combined from their systems' entries: each point of all six checks itself as well
    // (the probes below cannot see between them; fuzz seed 880188's asymptotic gain was off
    // by 9e-5 between them through its feedthrough and cross terms).
    // An impedance below a millionth of the circuit's smallest resistance counts as zero: its
    // rounding is checked against that level, not against itself (common practice: no
    // designer reads an impedance six decades below every resistor in the loop).
    const double zeroLevel = 1e-6 * smallestResistance(design);
    if (m_full)
        m_full->checkEveryPoint();
    if (m_rrFull)
        m_rrFull->checkEveryPoint();
    for (std::optional<ReducedSystem> *impedance : {&m_input, &m_output, &m_rrInput, &m_rrOutput})
        if (*impedance)
            (*impedance)->checkEveryPoint(zeroLevel);
    using namespace loopio;
    run(m_full, {gainEntry()});
    run(m_input, {zInEntry(zeroLevel)});
    run(m_output, {zOutEntry(zeroLevel)});
    // The return ratio's gain and impedances are combined from several entries (sweep(),
    // blackman()): each is checked against the careful solve, so a fast path that misses
    // any of them hands the system to the careful solve; only the loop gain, a quantity of
    // its own, warns. (The impedance with the gain at zero is an exact zero behind an ideal
    // output, whose rounding has no relative accuracy to assure.)
    run(m_rrFull,
        {loopGainEntry(),
         {{kOutput, kSource}, "the feedthrough", false},
         {{kOutput, kTest}, "the loop gain", false},
         {{kReturned, kSource}, "the loop gain", false}});
    run(m_rrInput,
        {{{kInputVoltage, kInputPort}, "z_in", false},
         {{kReturned, kTest}, "z_in", false},
         {{kReturned, kInputPort}, "z_in", false},
         {{kInputVoltage, kTest}, "z_in", false}});
    run(m_rrOutput,
        {{{kLoadVoltage, kLoadPort}, "z_out", false},
         {{kReturned, kTest}, "z_out", false},
         {{kReturned, kLoadPort}, "z_out", false},
         {{kLoadVoltage, kTest}, "z_out", false}});
}

Diagnostics LoopModel::unassuredPointWarnings() const
{
    Diagnostics out;
    const auto add = [&](const std::optional<ReducedSystem> &system, const CheckedEntry &entry) {
        if (system)
            if (std::optional<Diagnostic> w
                = system->unassuredPointWarning({&entry, 1}, kAssuredRelativeError))
                out.push_back(std::move(*w));
    };
    add(m_full, gainEntry());
    add(m_input, zInEntry(0.0));
    add(m_output, zOutEntry(0.0));
    add(m_rrFull, loopGainEntry());
    return out;
}

void LoopModel::forgetUnassuredPoints() const
{
    for (const std::optional<ReducedSystem> *system : {&m_full, &m_input, &m_output, &m_rrFull})
        if (*system)
            (*system)->forgetUnassuredPoints();
}

void LoopModel::checkEstimateAccuracy(const Design &design, const EstimateSystems &systems)
{
    // Checked like the exact systems, but strictly and silently: a series chain of teraohms
    // beside ohms (fuzz seed 487's source side) gave h21 = +0.28 for -1 inside the careful
    // solve's own (far too wide) bound, and an estimate is no reason to exempt a design.
    const std::vector<Complex> probes = accuracyProbes(design);
    const double tolerance = kAssuredRelativeError;
    const auto term = [](TransferEntry e, const char *quantity) {
        return CheckedEntry{e, quantity, false, 0.0, true};
    };
    int refined = (systems.network.checkAccuracy(probes, tolerance) ? 1 : 0)
        + (systems.sourceSide.checkAccuracy(probes, tolerance) ? 1 : 0);
    std::vector<CheckedEntry> a;
    for (TransferEntry e : systems.aEntries)
        a.push_back(term(e, "a"));
    refined += systems.aFull.checkAccuracy(probes, a, tolerance).refined ? 1 : 0;
    const CheckedEntry input[] = {term({0, 0}, "z_in")};
    if (systems.seriesInput)
        refined += systems.seriesInput->checkAccuracy(probes, input, tolerance).refined ? 1 : 0;
    const CheckedEntry output[] = {term({loopio::kLoadVoltage, loopio::kLoadPort}, "z_out")};
    if (systems.seriesOutput)
        refined += systems.seriesOutput->checkAccuracy(probes, output, tolerance).refined ? 1 : 0;
    m_refinedSystems += refined;
}

} // namespace loopsketch
