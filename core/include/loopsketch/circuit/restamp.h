#pragma once

// Re-stamping (issue 15, item 5): when only part values change, a descriptor system's G and
// C are rewritten from its own stamp list instead of building the netlist and assembling it
// anew. Only a change that leaves the circuit's structure as it is qualifies (a passive
// value carried one to one by its elements, staying on the same side of every threshold the
// assembly draws); the matrices are then summed in the assembly's own order, so they come
// out exactly as assembleSystem() would make them.

#include "loopsketch/circuit/circuit.h"
#include "loopsketch/design/design.h"

#include <span>
#include <string>

namespace loopsketch {

/// One user field whose value changes: `from` is the value the system was stamped with,
/// `to` the new one (SI: ohm, farad, henry).
struct FieldChange
{
    std::string part;
    std::string field;
    double from = 0;
    double to = 0;
};

/// True when changing `change.field` of the part from `from` to `to` (the value `design`
/// holds) leaves every circuit variant buildLoopNetlist() makes with the same elements: a
/// resistance, capacitance or inductance that is present, finite and above zero before and
/// after, for a resistance on the same side of kImpedanceFormBelowOhms.
bool restampable(const Design &design, const FieldChange &change);

/// Rewrites, in place, every entry of `system` stamped by a field in `changes`, then G and C
/// from the stamp list. False, with `system` untouched, when an entry of one of those fields
/// is not the field's value (or its reciprocal) as restampable() fields are stamped: the
/// caller then builds afresh.
bool restamp(DescriptorSystem &system, std::span<const FieldChange> changes);

/// True when some entry of `system` is stamped by the change's field.
bool stampsField(const DescriptorSystem &system, const FieldChange &change);

} // namespace loopsketch
