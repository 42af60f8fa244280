#include "loopsketch/design/candidate.h"

#include <algorithm>
#include <string>

namespace loopsketch {

const Candidate *findCandidate(const Design &design, std::string_view name)
{
    const auto it = std::find_if(design.candidates.begin(), design.candidates.end(),
                                 [&](const Candidate &c) { return c.name == name; });
    return it == design.candidates.end() ? nullptr : &*it;
}

Result<Design> applyCandidate(Design design, const Candidate &candidate, std::string_view file)
{
    for (const auto &[id, value] : candidate.values) {
        Part *p = design.findPart(id);
        if (!p || p->primaryField().empty())
            return Diagnostic{std::string(file), id, "candidates",
                              "candidate \"" + candidate.name + "\" changes part " + id
                                  + ", which has no value"};
        p->fields[std::string(p->primaryField())] = value;
    }
    return design;
}

Result<Design> applyCandidate(Design design, std::string_view name, std::string_view file)
{
    const Candidate *c = findCandidate(design, name);
    if (!c)
        return Diagnostic{std::string(file),
                          {},
                          "candidates",
                          "no candidate named \"" + std::string(name) + "\""};
    const Candidate copy = *c; // `design` is moved into the call below
    return applyCandidate(std::move(design), copy, file);
}

} // namespace loopsketch
