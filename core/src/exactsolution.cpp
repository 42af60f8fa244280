#include "loopsketch/exactsolution.h"

#include "loopsketch/loopcircuit.h"
#include "loopsketch/reducedsystem.h"

#include <cmath>

namespace loopsketch {

std::string gainUnit(const Design &design)
{
    const Part *src = design.signalSource();
    const bool currentIn = src && src->type == PartType::ISource;
    const bool currentOut = design.output == OutputKind::Current;
    return std::string(currentOut ? "A" : "V") + "/" + (currentIn ? "A" : "V");
}

std::optional<double> finiteOrNone(double value)
{
    if (!std::isfinite(value))
        return std::nullopt;
    return value;
}

namespace {

Result<ReducedSystem> reduce(const Design &design, const LoopCircuitOptions &options)
{
    auto system = assembleSystem(buildLoopNetlist(design, options));
    if (!system)
        return system.diagnostics();
    return ReducedSystem::build(*system);
}

struct Entry
{
    int output;
    int input;
};

void fill(const ReducedSystem &r, Entry e, const std::vector<double> &f, std::optional<double> &dc,
          std::vector<std::complex<double>> &sweep)
{
    dc = r.dcRegular() ? finiteOrNone(r.evaluate(0.0)(e.output, e.input).real()) : std::nullopt;
    sweep.clear();
    sweep.reserve(f.size());
    for (const auto &h : r.sweep(f))
        sweep.push_back(h(e.output, e.input));
}

} // namespace

Result<ExactSolution> computeExactSolution(const Design &design,
                                           const std::vector<double> &frequenciesHz)
{
    using Source = LoopCircuitOptions::Source;
    auto full = reduce(design, {});
    if (!full)
        return full.diagnostics();
    LoopCircuitOptions inOpt;
    inOpt.source = Source::Removed;
    auto input = reduce(design, inOpt);
    LoopCircuitOptions outOpt;
    outOpt.source = Source::Zeroed;
    outOpt.load = false;
    auto output = reduce(design, outOpt);

    ExactSolution s;
    fill(*full, {loopio::kOutput, loopio::kSource}, frequenciesHz, s.gain, s.gainSweep);
    // Removing the source or the load can leave a part of the circuit floating (a source
    // that was the only DC path, say); then that impedance does not exist.
    if (input)
        fill(*input, {loopio::kInputVoltage, loopio::kInputPort}, frequenciesHz, s.zIn, s.zInSweep);
    else
        s.zInSweep.assign(frequenciesHz.size(), std::complex<double>(NAN, NAN));
    if (output)
        fill(*output, {loopio::kLoadVoltage, loopio::kLoadPort}, frequenciesHz, s.zOut,
             s.zOutSweep);
    else
        s.zOutSweep.assign(frequenciesHz.size(), std::complex<double>(NAN, NAN));
    return s;
}

} // namespace loopsketch
