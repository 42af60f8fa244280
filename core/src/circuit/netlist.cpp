#include "loopsketch/circuit/netlist.h"

#include "loopsketch/design/design.h"

#include <algorithm>
#include <cmath>
#include <map>
#include <utility>

namespace loopsketch {

namespace {

NetlistElement makeElement(NetlistElement::Kind kind, std::string name, std::string a,
                           std::string b, double value, int input)
{
    NetlistElement e;
    e.kind = kind;
    e.name = std::move(name);
    e.a = std::move(a);
    e.b = std::move(b);
    e.value = value;
    e.input = input;
    return e;
}

} // namespace

NetlistElement &Netlist::addResistor(std::string name, std::string a, std::string b, double ohms)
{
    return elements.emplace_back(makeElement(NetlistElement::Kind::Resistor, std::move(name),
                                             std::move(a), std::move(b), ohms, -1));
}

NetlistElement &Netlist::addCapacitor(std::string name, std::string a, std::string b, double farads)
{
    return elements.emplace_back(makeElement(NetlistElement::Kind::Capacitor, std::move(name),
                                             std::move(a), std::move(b), farads, -1));
}

NetlistElement &Netlist::addInductor(std::string name, std::string a, std::string b, double henries)
{
    return elements.emplace_back(makeElement(NetlistElement::Kind::Inductor, std::move(name),
                                             std::move(a), std::move(b), henries, -1));
}

NetlistElement &Netlist::addVoltageSource(std::string name, std::string pos, std::string neg,
                                          int input)
{
    return elements.emplace_back(makeElement(NetlistElement::Kind::VoltageSource, std::move(name),
                                             std::move(pos), std::move(neg), 0.0, input));
}

NetlistElement &Netlist::addCurrentSource(std::string name, std::string into, std::string outOf,
                                          int input)
{
    return elements.emplace_back(makeElement(NetlistElement::Kind::CurrentSource, std::move(name),
                                             std::move(into), std::move(outOf), 0.0, input));
}

int Netlist::addOutput(NetlistOutput output)
{
    outputs.push_back(std::move(output));
    return static_cast<int>(outputs.size()) - 1;
}

std::vector<std::string> nodesWithoutGround(const Netlist &netlist)
{
    // Union-find over node names; ground is one of them.
    std::map<std::string, std::string> parent;
    const auto find = [&](std::string node) {
        parent.try_emplace(node, node);
        while (parent[node] != node) {
            parent[node] = parent[parent[node]];
            node = parent[node];
        }
        return node;
    };
    const auto join = [&](const std::string &a, const std::string &b) {
        const std::string ra = find(a), rb = find(b);
        if (ra != rb)
            parent[ra] = rb;
    };
    const std::string ground(kGroundNode);
    find(ground);
    for (const NetlistElement &e : netlist.elements) {
        find(e.a);
        find(e.b);
        bool carries = true;
        switch (e.kind) {
        case NetlistElement::Kind::Resistor:
            carries = !std::isinf(e.value);
            break;
        case NetlistElement::Kind::Capacitor:
            carries = e.value != 0.0;
            break;
        case NetlistElement::Kind::Inductor:
        case NetlistElement::Kind::VoltageSource:
            break;
        case NetlistElement::Kind::CurrentSource:
            carries = false;
            break;
        }
        if (carries)
            join(e.a, e.b);
    }
    for (const ControlledSourceElement &c : netlist.controlled) {
        find(c.inP);
        find(c.inN);
        join(c.out, ground);
    }
    std::vector<std::string> out;
    const std::string groundRoot = find(ground);
    std::vector<std::string> nodes;
    for (const auto &entry : parent)
        nodes.push_back(entry.first);
    for (const std::string &node : nodes)
        if (find(node) != groundRoot)
            out.push_back(node);
    return out;
}

} // namespace loopsketch
