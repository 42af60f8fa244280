// The design loader on hostile files: time to refuse a file of N unknown top-level keys.
// Before the loader built its own DOM (nlohmann's ordered_json inserted every key through a
// linear search) this grew as N^2: 50k keys 1.4 s, 100k 8.7 s, 200k about 35 s.

#include "loopsketch/design/designfile.h"

#include "hostilecorpus.h"

#include <benchmark/benchmark.h>

namespace {

void unknownKeys(benchmark::State &state)
{
    const auto n = static_cast<std::size_t>(state.range(0));
    const std::string text = loopsketch::test::hostileDesign("", loopsketch::test::unknownKeys(n));
    for (auto _ : state) {
        auto d = loopsketch::parseDesign(text, "keys.loopsketch");
        if (d.ok())
            state.SkipWithError("a file of unknown keys loaded");
        benchmark::DoNotOptimize(d);
    }
    state.SetComplexityN(state.range(0));
}
BENCHMARK(unknownKeys)
    ->Arg(50000)
    ->Arg(100000)
    ->Arg(200000)
    ->Unit(benchmark::kMillisecond)
    ->Complexity();

} // namespace

BENCHMARK_MAIN();
