// Speed of the full analysis (all methods, all metrics, the demo's sweep of 1 Hz..1 GHz at
// 100 points per decade) on the reduced fast path and on the straightforward path that
// factors the full MNA matrix with a dense LU at every frequency. Run:
//   build/<preset>/tests/bench/analysis_bench --benchmark_repetitions=5
// The ratio of the two medians is the speed-up the design asks for (>= 20x).
//
// Measured on the shared 2-core machine, 3 December 2026, CPU time per analysis (median of 5,
// the CPU column; CPU time itself rises with the load), before and after back to back:
//   before (the lead's build of main: 19387b8 plus uncommitted accuracy work), load 3.8:
//     demo 3.04 ms (dense LU 25.6 ms), 200-part chain 99.2 ms, 50-part ladder 77.8 ms (dense
//     LU 540 ms); at load 8.4: 3.12 / 85.8 / 69.4 ms.
//   after (the Hessenberg form block by block with its own error estimate, and the noise
//   march refined to the total's tolerance), load 3.7: demo 2.92 ms (dense LU 25.1 ms), chain
//   96.4 ms (its time is the model build, untouched), ladder 54.0 ms (dense LU 502 ms); at
//   load 8.0: 2.66 / 97.8 / 62.1 ms.
// The chain's dense LU takes 11.3 s of CPU per analysis (median of 3, before, load 3-9). The
// targets (demo 0.22 ms, chain 10 ms, ladder 5 ms) are missed: the ladder's sweeps through the form
// (two-port A circuit of order 51 in 5 blocks, exact systems of order 27-28, each point
// refined once and its error estimated) and its natural frequencies dominate what remains.

#include "chaindesigns.h"

#include "loopsketch/analysis/analysis.h"
#include "loopsketch/design/designfile.h"

#include "benchdesign.h"

#include <benchmark/benchmark.h>

#include <algorithm>
#include <chrono>
#include <cstdlib>
#include <iostream>
#include <string>
#include <vector>

namespace {

using loopsketch::bench::demo;

void fullAnalysis(benchmark::State &state, loopsketch::SolverPath path)
{
    loopsketch::AnalysisOptions options;
    options.solver = path;
    for (auto _ : state) {
        auto a = loopsketch::analyze(demo(), {}, options);
        benchmark::DoNotOptimize(a);
        if (!a)
            state.SkipWithError("analysis failed");
    }
    state.counters["points"] = static_cast<double>(demo().sweep.frequencies().size());
}

void BM_FullAnalysisReduced(benchmark::State &state)
{
    fullAnalysis(state, loopsketch::SolverPath::Reduced);
}
void BM_FullAnalysisDenseLu(benchmark::State &state)
{
    fullAnalysis(state, loopsketch::SolverPath::DenseLu);
}

} // namespace

BENCHMARK(BM_FullAnalysisReduced)->Unit(benchmark::kMillisecond);
BENCHMARK(BM_FullAnalysisDenseLu)->Unit(benchmark::kMillisecond);

namespace {

/// `text` parsed; the benchmark stops with the diagnostics when it does not parse.
loopsketch::Design parsed(const std::string &text)
{
    auto d = loopsketch::parseDesign(text, "generated.loopsketch");
    if (!d) {
        std::cerr << d.errorText() << "\n";
        std::exit(1);
    }
    return *d;
}

/// 200 parts: 99 series resistors of 1 kOhm with 98 shunts of 1 MOhm.
const loopsketch::Design &resistorChain()
{
    static const loopsketch::Design d = parsed(loopsketch::test::resistorChainText());
    return d;
}

/// 50 parts: 24 series resistors of 4.7 kOhm with 23 shunt capacitors of 1 pF.
const loopsketch::Design &rcLadder()
{
    static const loopsketch::Design d = parsed(loopsketch::test::rcLadderText());
    return d;
}

void analysisOf(benchmark::State &state, const loopsketch::Design &design,
                loopsketch::SolverPath path)
{
    loopsketch::AnalysisOptions options;
    options.solver = path;
    for (auto _ : state) {
        auto a = loopsketch::analyze(design, {}, options);
        benchmark::DoNotOptimize(a);
        if (!a)
            state.SkipWithError(a.errorText().c_str());
    }
    state.counters["parts"] = static_cast<double>(design.parts.size());
}

void BM_ResistorChain200Reduced(benchmark::State &state)
{
    analysisOf(state, resistorChain(), loopsketch::SolverPath::Reduced);
}
void BM_ResistorChain200DenseLu(benchmark::State &state)
{
    analysisOf(state, resistorChain(), loopsketch::SolverPath::DenseLu);
}
void BM_RcLadder50Reduced(benchmark::State &state)
{
    analysisOf(state, rcLadder(), loopsketch::SolverPath::Reduced);
}
void BM_RcLadder50DenseLu(benchmark::State &state)
{
    analysisOf(state, rcLadder(), loopsketch::SolverPath::DenseLu);
}

} // namespace

BENCHMARK(BM_ResistorChain200Reduced)->Unit(benchmark::kMillisecond);
BENCHMARK(BM_ResistorChain200DenseLu)->Unit(benchmark::kMillisecond);
BENCHMARK(BM_RcLadder50Reduced)->Unit(benchmark::kMillisecond);
BENCHMARK(BM_RcLadder50DenseLu)->Unit(benchmark::kMillisecond);

namespace {

/// Median wall time (ms) of `runs` full analyses on one path.
double medianMs(loopsketch::SolverPath path, int runs)
{
    loopsketch::AnalysisOptions options;
    options.solver = path;
    std::vector<double> ms;
    for (int i = 0; i < runs; ++i) {
        const auto t0 = std::chrono::steady_clock::now();
        auto a = loopsketch::analyze(demo(), {}, options);
        benchmark::DoNotOptimize(a);
        ms.push_back(
            std::chrono::duration<double, std::milli>(std::chrono::steady_clock::now() - t0)
                .count());
    }
    std::nth_element(ms.begin(), ms.begin() + runs / 2, ms.end());
    return ms[static_cast<std::size_t>(runs / 2)];
}

} // namespace

int main(int argc, char **argv)
{
    benchmark::Initialize(&argc, argv);
    benchmark::RunSpecifiedBenchmarks();
    benchmark::Shutdown();
    // Side by side in the same process, for the ratio the design asks for.
    const double reduced = medianMs(loopsketch::SolverPath::Reduced, 101);
    const double dense = medianMs(loopsketch::SolverPath::DenseLu, 31);
    std::cout << "full analysis of the demo, median: reduced " << reduced << " ms, dense LU "
              << dense << " ms, speed-up " << dense / reduced << "x (targets: < 0.5 ms, >= 20x)\n";
    return 0;
}
