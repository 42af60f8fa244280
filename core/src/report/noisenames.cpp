#include "loopsketch/report/noisenames.h"

namespace loopsketch {

std::string noiseSourceLabel(const NoiseContribution &c)
{
    switch (c.kind) {
    case NoiseSourceKind::Resistor:
        // "RF thermal" for the part itself; "PD1 r_parallel thermal" for a resistance inside
        // a part.
        return (c.field.empty() ? c.partId : c.partId + " " + c.field) + " thermal";
    case NoiseSourceKind::VoltageNoise:
        return c.partId + " e_n";
    case NoiseSourceKind::Shot:
        return c.partId + " shot";
    case NoiseSourceKind::CurrentNoise:
        // "U1 i_n at in_n": the current noise at the in_n pin.
        return c.pin.empty() ? c.partId + " i_n" : c.partId + " i_n at " + c.pin;
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
