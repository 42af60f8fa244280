// Spread and suggest speed targets (issue 5): 10,000 Monte Carlo trials with gain,
// bandwidth and phase margin on the demo design under 1 s on the 2-core machine; a suggest
// search over two parts in E96 across two decades under 2 s; and (issue 15) a search over three
// parts in E96 across one decade each under 1 s.

#include "loopsketch/analysis/spread.h"
#include "loopsketch/analysis/suggest.h"
#include "loopsketch/design/designfile.h"

#include "benchdesign.h"
#include "bridgestage.h"

#include <benchmark/benchmark.h>

#include <cstdlib>
#include <iostream>
#include <string>

namespace {

using loopsketch::bench::demo;

void monteCarloDemo(benchmark::State &state)
{
    const loopsketch::Design design = demo();
    loopsketch::SpreadOptions o;
    o.trials = 10000;
    o.seed = 7;
    o.gainSpread = 0.5;
    o.threads = static_cast<int>(state.range(0));
    for (auto _ : state) {
        auto r = loopsketch::monteCarlo(design, o);
        if (!r)
            state.SkipWithError(r.errorText().c_str());
        benchmark::DoNotOptimize(r);
    }
}
BENCHMARK(monteCarloDemo)->Arg(0)->Arg(1)->Unit(benchmark::kMillisecond)->UseRealTime();

void suggestDemoE96TwoDecades(benchmark::State &state)
{
    loopsketch::Design design = demo();
    for (const char *id : {"RF", "CF"})
        design.findPart(id)->series = loopsketch::ESeries::E96;
    loopsketch::SuggestOptions o;
    o.parts = {"RF", "CF"};
    o.ranges = {{"RF", {1e5, 1e7}}, {"CF", {1e-13, 1e-11}}};
    for (auto _ : state) {
        auto r = loopsketch::suggestValues(design, o);
        if (!r)
            state.SkipWithError(r.errorText().c_str());
        else
            state.counters["combinations"] = static_cast<double>(r->combinations);
        benchmark::DoNotOptimize(r);
    }
}
BENCHMARK(suggestDemoE96TwoDecades)->Unit(benchmark::kMillisecond)->UseRealTime();

/// The invented bridge stage of tests/support/bridgestage.h (RF, RG and CF in E96).
const loopsketch::Design &bridgeStage()
{
    static const loopsketch::Design design = [] {
        auto d = loopsketch::parseDesign(loopsketch::test::bridgeStageText());
        if (!d) {
            std::cerr << d.errorText() << "\n";
            std::exit(1);
        }
        return *d;
    }();
    return design;
}

void suggestThreePartsE96OneDecade(benchmark::State &state)
{
    loopsketch::SuggestOptions o;
    o.parts = {"RF", "RG", "CF"};
    o.ranges = {{"RF", {10e3, 99e3}}, {"RG", {1e3, 9.9e3}}, {"CF", {1e-12, 9.9e-12}}};
    for (auto _ : state) {
        auto r = loopsketch::suggestValues(bridgeStage(), o);
        if (!r) {
            state.SkipWithError(r.errorText().c_str());
        } else {
            state.counters["combinations"] = static_cast<double>(r->combinations);
            state.counters["evaluated"] = static_cast<double>(r->evaluated);
            state.counters["dc_gains"] = static_cast<double>(r->computed);
        }
        benchmark::DoNotOptimize(r);
    }
}
BENCHMARK(suggestThreePartsE96OneDecade)->Unit(benchmark::kMillisecond)->UseRealTime();

} // namespace

BENCHMARK_MAIN();
