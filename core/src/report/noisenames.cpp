#include "loopsketch/report/noisenames.h"

namespace loopsketch {

std::string noiseSourceLabel(const NoiseContribution &c)
{
    switch (c.kind) {
    case NoiseSourceKind::Resistor: {
        // "RF" is the part itself; "PD1:r_parallel" a resistance inside a part.
        const auto colon = c.name.find(':');
        return (colon == std::string::npos ? c.partId : c.partId + " " + c.name.substr(colon + 1))
            + " thermal";
    }
    case NoiseSourceKind::VoltageNoise:
        return c.partId + " e_n";
    case NoiseSourceKind::Shot:
        return c.partId + " shot";
    case NoiseSourceKind::CurrentNoise: {
        // "U1:in(in_n)": the current noise at the in_n pin.
        const auto open = c.name.find('('), close = c.name.rfind(')');
        if (open != std::string::npos && close != std::string::npos && close > open)
            return c.partId + " i_n at " + c.name.substr(open + 1, close - open - 1);
        return c.partId + " i_n";
    }
    }
    return c.name;
}

NoiseUnits noiseUnits(std::string_view gainUnit)
{
    const auto slash = gainUnit.find('/');
    if (slash == std::string_view::npos)
        return {"V", "V"};
    return {std::string(gainUnit.substr(0, slash)), std::string(gainUnit.substr(slash + 1))};
}

} // namespace loopsketch
