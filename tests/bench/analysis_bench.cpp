// Speed of the full analysis (all methods, all metrics, the demo's sweep of 1 Hz..1 GHz at
// 100 points per decade) on the reduced fast path and on the straightforward path that
// factors the full MNA matrix with a dense LU at every frequency. Run:
//   build/<preset>/tests/bench/analysis_bench --benchmark_repetitions=5
// The ratio of the two medians is the speed-up the design asks for (>= 20x).

#include "loopsketch/analysis.h"
#include "loopsketch/designfile.h"

#include <benchmark/benchmark.h>

#include <cstdlib>
#include <iostream>

namespace {

const loopsketch::Design &demo()
{
    static const loopsketch::Design design = [] {
        auto d = loopsketch::loadDesign(LOOPSKETCH_DESIGNS_DIR "/demo.loopsketch");
        if (!d) {
            std::cerr << d.errorText() << "\n";
            std::exit(1);
        }
        return *d;
    }();
    return design;
}

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
BENCHMARK_MAIN();
