#pragma once

// The design the benchmarks time: the demo of resources/designs, loaded once. A benchmark
// cannot fail a test, so a demo that does not load ends the program with the diagnostics.
// Needs LOOPSKETCH_DESIGNS_DIR from the benchmark's build.

#include "loopsketch/design/designfile.h"

#include <cstdlib>
#include <iostream>

namespace loopsketch::bench {

/// The demo design (resources/designs/demo.loopsketch).
inline const Design &demo()
{
    static const Design design = [] {
        auto d = loadDesign(LOOPSKETCH_DESIGNS_DIR "/demo.loopsketch");
        if (!d) {
            std::cerr << d.errorText() << "\n";
            std::exit(1);
        }
        return *d;
    }();
    return design;
}

} // namespace loopsketch::bench
