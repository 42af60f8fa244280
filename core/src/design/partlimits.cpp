#include "loopsketch/design/partlimits.h"

#include "loopsketch/base/value.h"

#include <cmath>
#include <sstream>

namespace loopsketch {

namespace {

std::string outside(double value, std::string_view unit, const char *bound, double limit)
{
    return formatEngineering(value, 3, unit) + " is " + bound + " what real parts offer ("
        + formatEngineering(limit, 3, unit)
        + "); the results may describe no buildable circuit and may lose accuracy";
}

} // namespace

Diagnostics partLimitWarnings(const Design &design, const PartLimits &limits)
{
    Diagnostics out;
    for (const Part &part : design.parts) {
        for (const FieldSpec &spec : partSpec(part.type).fields) {
            if (!part.has(spec.name))
                continue;
            const double v = part.number(spec.name);
            const double m = std::abs(v);
            if (!std::isfinite(v) || v == 0.0)
                continue; // infinity means ideal; the loader rejects NaN
            std::string message;
            switch (spec.kind) {
            case ValueKind::Resistance:
                if (m < limits.minResistance)
                    message = outside(v, "Ω", "below", limits.minResistance);
                else if (m > limits.maxResistance)
                    message = outside(v, "Ω", "above", limits.maxResistance);
                break;
            case ValueKind::Capacitance:
                if (m < limits.minCapacitance)
                    message = outside(v, "F", "below", limits.minCapacitance);
                break;
            case ValueKind::Inductance:
                if (m < limits.minInductance)
                    message = outside(v, "H", "below", limits.minInductance);
                break;
            case ValueKind::Gain:
                if (m > limits.maxGain) {
                    const auto db = [](double x) {
                        std::ostringstream os;
                        os.precision(4);
                        os << 20.0 * std::log10(x) << " dB";
                        return os.str();
                    };
                    message = db(m) + " is above what real parts offer (" + db(limits.maxGain)
                        + "); the results may describe no buildable circuit and may lose "
                          "accuracy";
                }
                break;
            default:
                break;
            }
            if (!message.empty())
                out.push_back({{}, part.id, std::string(spec.name), message});
        }
    }
    return out;
}

} // namespace loopsketch
