#include "loopsketch/circuit/restamp.h"

#include <cmath>
#include <vector>

namespace loopsketch {

bool restampable(const Design &design, const FieldChange &change)
{
    const Part *part = design.findPart(change.part);
    if (!part || !part->has(change.field))
        return false;
    const FieldSpec *spec = findFieldSpec(part->type, change.field);
    if (!spec
        || (spec->kind != ValueKind::Resistance && spec->kind != ValueKind::Capacitance
            && spec->kind != ValueKind::Inductance))
        return false;
    const auto usable = [](double v) {
        return std::isfinite(v) && v > 0;
    };
    if (!usable(change.from) || !usable(change.to) || part->number(change.field) != change.to)
        return false;
    // A resistor below this is stamped in impedance form, with a current of its own.
    return spec->kind != ValueKind::Resistance
        || (change.from < kImpedanceFormBelowOhms) == (change.to < kImpedanceFormBelowOhms);
}

bool restamp(DescriptorSystem &system, std::span<const FieldChange> changes)
{
    // The change of every origin that changes (null: unchanged); every entry is checked
    // before any is written, so that a refusal leaves the system as it was.
    thread_local std::vector<const FieldChange *> changeOf;
    changeOf.assign(system.origins.size(), nullptr);
    for (std::size_t o = 0; o < system.origins.size(); ++o)
        for (const FieldChange &c : changes)
            if (system.origins[o].part == c.part && system.origins[o].field == c.field)
                changeOf[o] = &c;
    const auto magnitude = [](const StampEntry &e, double value) {
        return e.power == 1 ? value : 1.0 / value;
    };
    for (const StampEntry &e : system.stamps) {
        const FieldChange *c = changeOf[static_cast<std::size_t>(e.origin)];
        // Power 0: a fixed +-1 of the element's connections (impedance form), not its value.
        if (c && e.power != 0
            && ((e.power != 1 && e.power != -1) || std::abs(e.value) != magnitude(e, c->from)))
            return false;
    }
    for (StampEntry &e : system.stamps) {
        const FieldChange *c = changeOf[static_cast<std::size_t>(e.origin)];
        if (c && e.power != 0) {
            const double m = magnitude(e, c->to);
            e.value = e.value < 0 ? -m : m;
        }
    }
    // assembleSystem() adds each entry to a zero matrix in the order of the list.
    system.G.setZero();
    system.C.setZero();
    for (const StampEntry &e : system.stamps)
        (e.reactive ? system.C : system.G)(e.row, e.col) += e.value;
    return true;
}

bool stampsField(const DescriptorSystem &system, const FieldChange &change)
{
    for (const StampEntry &e : system.stamps) {
        const StampOrigin &o = system.origins[static_cast<std::size_t>(e.origin)];
        if (o.part == change.part && o.field == change.field)
            return true;
    }
    return false;
}

} // namespace loopsketch
