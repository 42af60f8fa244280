#include "loopsketch/circuit/netlist.h"

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

} // namespace loopsketch
