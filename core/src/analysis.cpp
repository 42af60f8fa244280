#include "loopsketch/analysis.h"

namespace loopsketch {

Result<Analysis> analyze(const Design &design, std::string_view file)
{
    if (auto problems = validateDesign(design, file); !problems.empty())
        return problems;
    Analysis a;
    a.title = design.title;
    a.gainUnit = gainUnit(design);
    a.frequenciesHz = design.sweep.frequencies();
    auto exact = computeExactSolution(design, a.frequenciesHz);
    if (!exact) {
        Diagnostics d = exact.diagnostics();
        for (auto &x : d)
            x.file = std::string(file);
        return d;
    }
    a.exact = std::move(exact).value();
    return a;
}

} // namespace loopsketch
