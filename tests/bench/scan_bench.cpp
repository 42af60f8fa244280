// Map speed target (issue 16): a 60 x 60 map of the demo design (RF by CF, every cell
// analysed with the scan's analysis options) within 1 s on the 2-core machine. The
// one-thread run gives the cost of one cell.

#include "loopsketch/analysis/scan.h"
#include "loopsketch/design/designfile.h"

#include <benchmark/benchmark.h>

#include <stdexcept>
#include <string>
#include <vector>

namespace {

loopsketch::Design demo()
{
    auto d = loopsketch::loadDesign(std::string(LOOPSKETCH_DESIGNS_DIR) + "/demo.loopsketch");
    if (!d)
        throw std::runtime_error(d.errorText());
    return *d;
}

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

void mapDemo60x60(benchmark::State &state)
{
    const loopsketch::Design design = demo();
    const std::vector<loopsketch::ScanAxis> axes
        = {axis60(design, "RF:100k:10M"), axis60(design, "CF:1p:100p")};
    loopsketch::ScanOptions o;
    o.threads = static_cast<int>(state.range(0));
    for (auto _ : state) {
        auto r = loopsketch::runScan(design, axes, o);
        if (!r || r->completed != 3600)
            state.SkipWithError("the map did not complete");
        benchmark::DoNotOptimize(r);
    }
    state.counters["cells"] = 3600;
}
BENCHMARK(mapDemo60x60)->Arg(2)->Arg(1)->Unit(benchmark::kMillisecond)->UseRealTime();

} // namespace

BENCHMARK_MAIN();
