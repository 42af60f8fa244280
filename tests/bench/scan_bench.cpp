// Map speed target (issue 16): a 60 x 60 map of the demo design (RF by CF, every cell
// analysed with the scan's analysis options) within 1 s on the 2-core machine. The
// one-thread run gives the cost of one cell.
//
// Before the re-stamping (measured on the CI preset with the machine shared, load about 10
// on 2 cores, so CPU time is the figure, not the wall time): 3.1 to 3.6 s of CPU for the 3600
// cells on one thread, 0.9 ms a cell. Then a cell built every netlist and reduction afresh and
// computed everything analyze() does: noise 24 %, model build 20 %, natural frequencies 20 %,
// step 17 %, sweep 15 %. Now (issue 15 item 5, the same load; base and new run back to back):
// 1.9 to 2.2 s of CPU on one thread against 3.4 to 3.6 s for the old code, 0.55 to 0.6 ms a
// cell, about 1 s on 2 idle cores: each worker re-stamps its loop model from row to row
// (LoopModel::rebuilt()), a row computes only what it reads (AnalysisOptions::metricsOnly) and
// the noise band starts from the closed-loop poles already found, every number the same bits
// as analyze(). What remains (perf, one thread): natural frequencies about 24 % (QZ, Newton
// confirmation, the 64-point contour count), step response 18 %, noise 19 % (band integral),
// re-stamp with its reduction and accuracy check 11 %, sweeps 8 %.
//
// Issue 16 (s9, main at 534d785; the machine shared by three builds, load 4 to 13 on 2 cores,
// so CPU times swing by 20 % from run to run and only shares and back-to-back pairs count).
// Before: 4.2 to 4.8 s of CPU on one thread at load 4 (the "2.05 s" above was idle). perf,
// one thread: the sweep kernel 33 % (gain 11 %, T 8 %, the noise grid 8 % and the noise band
// integral 8 % of it), analyze's noise 31 % in all (NoiseModel::build 6.9 % of it: a netlist,
// its assembly and reduction per cell), re-stamp 18 % (accuracy check 12 %, reductions 5 %),
// step 12 % (the modal exponentials), margins 4 %, peaking 3.5 %, malloc/free 6 %. Now the
// noise model is re-stamped per worker as the loop model is (NoiseModel::rebuilt(): 3.2 %
// of the samples instead of 6.9 %) and a cell whose loop is not known stable skips the noise
// (no rms exists there). Six back-to-back pairs at load 9 to 13: 3.49 to 4.17 s before (mean
// 3.87 s), 3.41 to 3.81 s after (mean 3.62 s), about 6 % less CPU; from the idle 2.05 s that
// is about 1.93 s on one thread and 0.97 s on 2 idle cores: under 1 s, with little margin.
// What is left is in the sweep kernel, the accuracy checks, the reductions and the step model
// (core/src/circuit, loopaccuracy.cpp), which this change does not touch.
//
// Issue 16 (s10, main at 19387b8; three builds and their tests sharing the 2 cores, load 6 to
// 12, so only back-to-back figures compare). Before, one thread at load 7 to 9: 3.30 to 3.71 s
// of CPU (median 3.48 s, 0.97 ms a cell); perf: sweep kernel 42 % (the noise model's grid and
// band integral 17 % of it, the gain 12 %, the loop gain 9 %), the noise in all 30 %, re-stamp
// 17 % (accuracy checks 11 %), step 11 %, margins 5 %, peaking 4 %, poles 3.5 %. A map shows one
// metric, the stability and the spec check, so it now asks for that metric alone
// (ScanOptions::metrics; the Map panel does, and runs again when another is shown): a row skips
// the noise, the step, the peaking, the gain margins and the two impedance systems (half the
// re-stamping and its accuracy checks) unless the specs read them, and sweeps the gain only
// to its -3 dB fall; every metric computed keeps its bits. The command line still computes
// every metric (mapDemo60x60). Back to back at load 8 (median of 3, one thread, CPU):
// mapDemo60x60 4.89 s, mapPhaseMargin60x60 1.83 s, 37 % of it: 0.51 ms a cell at that load
// (CPU times swell with the load: the same all-metrics run gave 3.48 s at load 7), about
// 0.36 ms of the idle 0.97 ms, so from the idle walls above about 1.4 s on one worker and
// 0.8 s on two (2149 ms x 0.37): under 1 s, with a margin of about a fifth.
// What remains (perf, one thread, phase margin alone): the gain to its fall 27 %, the loop
// gain 21 %, re-stamp 26 % (accuracy checks 16 %, reductions 9 %), poles 9 %, margins 8 %.

#include "loopsketch/analysis/scan.h"
#include "loopsketch/design/designfile.h"

#include "benchdesign.h"

#include <benchmark/benchmark.h>

#include <stdexcept>
#include <string>
#include <vector>

namespace {

using loopsketch::bench::demo;

/// 60 E96 values of `target` from its range's start (IEC 60063: 96 to the decade).
loopsketch::ScanAxis axis60(const loopsketch::Design &design, const char *target)
{
    auto t = loopsketch::parseScanTarget(target);
    if (!t)
        throw std::runtime_error(t.errorText());
    auto a = loopsketch::resolveScanAxis(design, *t, loopsketch::ESeries::E96);
    if (!a || a->values.size() < 60)
        throw std::runtime_error("no 60 E96 values for " + std::string(target));
    loopsketch::ScanAxis axis = *a;
    axis.values.resize(60);
    return axis;
}

/// The 60 x 60 map on `threads` workers computing `metrics` (empty: every one).
void runMap60x60(benchmark::State &state, std::vector<loopsketch::ScanMetric> metrics)
{
    const loopsketch::Design design = demo();
    const std::vector<loopsketch::ScanAxis> axes
        = {axis60(design, "RF:100k:10M"), axis60(design, "CF:1p:100p")};
    loopsketch::ScanOptions o;
    o.threads = static_cast<int>(state.range(0));
    o.metrics = std::move(metrics);
    for (auto _ : state) {
        auto r = loopsketch::runScan(design, axes, o);
        if (!r || r->completed != 3600)
            state.SkipWithError("the map did not complete");
        benchmark::DoNotOptimize(r);
    }
    state.counters["cells"] = 3600;
}

/// Every metric, as the command line's CSV has them.
void mapDemo60x60(benchmark::State &state)
{
    runMap60x60(state, {});
}
BENCHMARK(mapDemo60x60)->Arg(2)->Arg(1)->Unit(benchmark::kMillisecond)->UseRealTime();

/// The phase margin alone (with the stability verdict and the spec check): what the Map
/// panel asks for as it opens.
void mapPhaseMargin60x60(benchmark::State &state)
{
    runMap60x60(state, {&loopsketch::ScanMetrics::phaseMarginDeg});
}
BENCHMARK(mapPhaseMargin60x60)->Arg(2)->Arg(1)->Unit(benchmark::kMillisecond)->UseRealTime();

} // namespace

BENCHMARK_MAIN();
