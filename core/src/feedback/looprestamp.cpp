// The loop model re-stamped for new part values (issue 15, item 5): a scan or a map changes
// one or two values from design to design, so its systems are rewritten from their stamp
// lists instead of building every netlist anew (core/include/loopsketch/circuit/restamp.h).
#include "loopsketch/feedback/loopmodel.h"

#include <algorithm>

namespace loopsketch {

Result<LoopModel> LoopModel::rebuilt(const Design &design,
                                     std::span<const FieldChange> changes) const
{
    // Under Metrics an impedance system that build() could not make is made afresh.
    const bool eligible = m_scope != LoopModelScope::Full && m_path == SolverPath::Reduced && m_full
        && m_rrFull && (m_scope == LoopModelScope::GainAndLoop || (m_input && m_output))
        && std::all_of(changes.begin(), changes.end(), [&](const FieldChange &c) {
                              // The full circuit holds every part: a field it does not stamp is
                              // absent there (an element a zero value leaves out), so the structure
                              // would change.
                              return restampable(design, c) && stampsField(m_full->system(), c);
                          });
    if (eligible) {
        LoopModel m;
        m.m_path = m_path;
        m.m_scope = m_scope;
        m.m_full = m_full;
        m.m_input = m_input;
        m.m_output = m_output;
        m.m_rrFull = m_rrFull;
        m.m_topology = m_topology;
        m.m_openLoopDcGain = m_openLoopDcGain;
        m.m_openLoopPolesHz = m_openLoopPolesHz;
        m.m_openLoopZerosHz = m_openLoopZerosHz;
        m.m_restamped = true;
        if (m.restampSystems(design, changes))
            return m;
    }
    return build(design, m_path, m_scope);
}

bool LoopModel::restampSystems(const Design &design, std::span<const FieldChange> changes)
{
    for (std::optional<ReducedSystem> *system : {&m_full, &m_input, &m_output, &m_rrFull}) {
        if (!*system) // an impedance system a GainAndLoop model does not make
            continue;
        DescriptorSystem stamped = (*system)->system();
        if (!restamp(stamped, changes))
            return false;
        auto reduced = ReducedSystem::build(std::move(stamped), m_path);
        if (!reduced) // what build() makes of it (no system, or a refusal): left to build()
            return false;
        *system = std::move(reduced).value();
    }
    checkAccuracy(design);
    return true;
}

} // namespace loopsketch
