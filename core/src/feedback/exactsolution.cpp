#include "loopsketch/feedback/exactsolution.h"

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

} // namespace loopsketch
