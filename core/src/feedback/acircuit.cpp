// The A circuit's netlists for the two-port estimate: see acircuit.h.
#include "feedback/acircuit.h"

#include "loopsketch/circuit/loopcircuit.h"

#include <algorithm>
#include <map>

namespace loopsketch {

void addNetworkCopy(Netlist &n, const std::vector<Part> &parts, const std::string &prefix,
                    const std::string &port1, PortEnd end1, const std::string &port1At,
                    const std::string &port2, PortEnd end2, const std::string &port2At)
{
    const auto map = [&](const std::string &node) -> std::string {
        if (node == kGroundNode)
            return std::string(kGroundNode);
        const auto place = [&](PortEnd end, const std::string &at) {
            if (end == PortEnd::Attached)
                return at;
            if (end == PortEnd::Shorted)
                return std::string(kGroundNode);
            return prefix + node;
        };
        // A network whose ports share one node (a lone sense resistor) attaches that node
        // at whichever port this copy is attached by.
        if (node == port1 && node == port2)
            return end2 == PortEnd::Attached ? place(end2, port2At) : place(end1, port1At);
        if (node == port1)
            return place(end1, port1At);
        if (node == port2)
            return place(end2, port2At);
        return prefix + node;
    };
    std::vector<const Part *> kept;
    for (const Part &p : parts)
        kept.push_back(&p);
    for (bool pruned = true; pruned;) {
        pruned = false;
        std::map<std::string, int> degree;
        for (const Part *p : kept)
            for (const auto &t : {map(p->node("a")), map(p->node("b"))})
                ++degree[t];
        for (auto it = kept.begin(); it != kept.end(); ++it) {
            const std::string a = map((*it)->node("a")), b = map((*it)->node("b"));
            const bool danglingA = a.rfind(prefix, 0) == 0 && degree[a] == 1;
            const bool danglingB = b.rfind(prefix, 0) == 0 && degree[b] == 1;
            if (danglingA || danglingB) {
                kept.erase(it);
                pruned = true;
                break;
            }
        }
    }
    for (const Part *p : kept)
        addPassivePart(n, *p, prefix, map);
}

Result<TwoPortNetwork> sourceSideNetwork(const Design &design, const std::vector<Part> &sourceParts,
                                         const std::string &sourceInput)
{
    const auto [hot, cold] = inputPortNodes(design);
    const std::string srcHot = hot == std::string(kGroundNode) ? cold : hot;
    return TwoPortNetwork::build(sourceParts, srcHot, sourceInput, ParameterSet::H);
}

bool sourceSideGrounds(const std::vector<Part> &sourceParts, const std::string &node)
{
    Netlist n;
    const auto identity = [](const std::string &name) {
        return name;
    };
    for (const Part &p : sourceParts)
        addPassivePart(n, p, {}, identity);
    const bool present
        = std::any_of(n.elements.begin(), n.elements.end(),
                      [&](const NetlistElement &e) { return e.a == node || e.b == node; });
    const std::vector<std::string> floating = nodesWithoutGround(n);
    return present && std::find(floating.begin(), floating.end(), node) == floating.end();
}

Netlist sourceLoopNetlist(Netlist n, const std::set<std::string> &sourceIds,
                          const std::string &sourceInput)
{
    // The source-side parts go too: what is left is the loop the source drives.
    std::erase_if(n.elements, [&](const NetlistElement &e) { return sourceIds.count(e.name); });
    n.inputCount = 0;
    n.outputs.clear();
    n.addCurrentSource("test:q", sourceInput, "0", n.addInput()).role = NetlistElement::Role::Test;
    n.addOutput({NetlistOutput::Kind::VoltageBetween, sourceInput, "0"});
    std::erase_if(n.elements,
                  [](const NetlistElement &e) { return e.role == NetlistElement::Role::Port; });
    return n;
}

bool onlyTestSourceAt(const Netlist &n, const std::string &node)
{
    return std::none_of(n.elements.begin(), n.elements.end(), [&](const NetlistElement &e) {
        return e.role != NetlistElement::Role::Test && (e.a == node || e.b == node);
    });
}

std::string floatingCurrentSourceProblem(const std::string &sourceId,
                                         const std::string &sourceInput)
{
    return "series mixing needs the source as a voltage behind an impedance, and " + sourceId
        + " is a current source with no r_parallel or c_parallel and nothing from node "
        + sourceInput + " to ground on its side of the gain block: that impedance is infinite "
        + "at every frequency";
}

} // namespace loopsketch
