#include "loopsketch/circuit/loopcircuit.h"

#include <cassert>
#include <cmath>

namespace loopsketch {

double gainBlockGain(const Part &gainBlock)
{
    return gainBlock.number("gain");
}

std::vector<double> gainBlockPolesHz(const Part &gainBlock)
{
    std::vector<double> poles;
    // gbw places the first pole at gbw / |gain|; poles_hz then lists the remaining ones.
    if (gainBlock.has("gbw"))
        poles.push_back(gainBlock.number("gbw") / std::abs(gainBlockGain(gainBlock)));
    for (const auto &p : gainBlock.polesHz)
        poles.push_back(p.si);
    return poles;
}

void addPassivePart(Netlist &netlist, const Part &part, const std::string &namePrefix,
                    const std::function<std::string(const std::string &)> &mapNode)
{
    const std::string a = mapNode(part.node("a"));
    const std::string b = mapNode(part.node("b"));
    const std::string name = namePrefix + part.id;
    const double v = part.number("value");
    NetlistElement *e = nullptr;
    switch (part.type) {
    case PartType::Resistor:
        e = &netlist.addResistor(name, a, b, v);
        break;
    case PartType::Capacitor:
        e = &netlist.addCapacitor(name, a, b, v);
        break;
    case PartType::Inductor:
        e = &netlist.addInductor(name, a, b, v);
        break;
    default:
        assert(false && "addPassivePart takes resistors, capacitors and inductors");
        return;
    }
    e->part = part.id;
    e->field = "value";
}

std::pair<std::string, std::string> inputPortNodes(const Design &design)
{
    const Part *src = design.signalSource();
    assert(src);
    if (src->type == PartType::VSource)
        return {src->node("pos"), src->node("neg")};
    return {src->node("to"), src->node("from")};
}

std::pair<std::string, std::string> loadPortNodes(const Design &design)
{
    const Part *load = design.uniquePart(PartType::Load);
    assert(load);
    return {load->node("a"), load->node("b")};
}

namespace {

void addSource(Netlist &n, const Part &src, LoopCircuitOptions::Source mode)
{
    using Source = LoopCircuitOptions::Source;
    if (mode == Source::Removed)
        return;
    const int input = mode == Source::Active ? loopio::kSource : -1;
    if (src.type == PartType::VSource) {
        const double rs = src.number("r_series");
        if (rs > 0) {
            const std::string inner = src.id + ":int";
            n.addVoltageSource(src.id, inner, src.node("neg"), input).part = src.id;
            NetlistElement &r = n.addResistor(src.id + ":r_series", inner, src.node("pos"), rs);
            r.part = src.id;
            r.field = "r_series";
        } else {
            n.addVoltageSource(src.id, src.node("pos"), src.node("neg"), input).part = src.id;
        }
        return;
    }
    n.addCurrentSource(src.id, src.node("to"), src.node("from"), input).part = src.id;
    if (src.has("r_parallel")) {
        NetlistElement &r = n.addResistor(src.id + ":r_parallel", src.node("to"), src.node("from"),
                                          src.number("r_parallel"));
        r.part = src.id;
        r.field = "r_parallel";
    }
    if (src.number("c_parallel") > 0) {
        NetlistElement &c = n.addCapacitor(src.id + ":c_parallel", src.node("to"), src.node("from"),
                                           src.number("c_parallel"));
        c.part = src.id;
        c.field = "c_parallel";
    }
}

void addGainBlock(Netlist &n, const Part &gb, const LoopCircuitOptions &options)
{
    const auto split = [&](const std::string &node) {
        return !options.splitNode.empty() && node == options.splitNode ? node + "#in" : node;
    };
    const std::string inP = split(gb.node("in_p"));
    const std::string inN = split(gb.node("in_n"));
    const std::string out = gb.node("out");
    const auto own = [&gb](NetlistElement &e, const char *field) {
        e.part = gb.id;
        e.field = field;
    };
    if (gb.has("r_in"))
        own(n.addResistor(gb.id + ":r_in", inP, inN, gb.number("r_in")), "r_in");
    if (gb.number("c_in") > 0)
        own(n.addCapacitor(gb.id + ":c_in", inP, inN, gb.number("c_in")), "c_in");
    if (const double ccm = gb.number("c_cm"); ccm > 0) {
        // from each input pin to ground; a pin on ground has none
        if (gb.node("in_p") != kGroundNode)
            own(n.addCapacitor(gb.id + ":c_cm(in_p)", inP, std::string(kGroundNode), ccm), "c_cm");
        if (gb.node("in_n") != kGroundNode)
            own(n.addCapacitor(gb.id + ":c_cm(in_n)", inN, std::string(kGroundNode), ccm), "c_cm");
    }
    ControlledSourceElement cs;
    cs.part = gb.id;
    cs.inP = inP;
    cs.inN = inN;
    cs.out = out;
    if (const double rout = gb.number("r_out"); rout > 0) {
        cs.out = gb.id + ":e";
        own(n.addResistor(gb.id + ":r_out", cs.out, out, rout), "r_out");
    }
    cs.gain = gainBlockGain(gb) * options.gainScale;
    cs.polesHz = gainBlockPolesHz(gb);
    for (const auto &z : gb.zerosHz)
        cs.zerosHz.push_back(z.si);
    if (options.testDriven) {
        cs.mode = ControlledSourceElement::Mode::TestDriven;
        cs.testInput = loopio::kTest;
    }
    n.controlled.push_back(cs);
}

} // namespace

Netlist buildLoopNetlist(const Design &design, const LoopCircuitOptions &options)
{
    Netlist n;
    n.inputCount = loopio::kInputCount;
    const Part *src = design.signalSource();
    const Part *load = design.uniquePart(PartType::Load);
    assert(src && load && design.uniquePart(PartType::GainBlock));

    const auto identity = [](const std::string &node) {
        return node;
    };
    for (const Part &p : design.parts) {
        switch (p.type) {
        case PartType::Resistor:
        case PartType::Capacitor:
        case PartType::Inductor:
            if (!options.includePart || options.includePart(p))
                addPassivePart(n, p, {}, identity);
            break;
        case PartType::VSource:
        case PartType::ISource:
            if (&p == src)
                addSource(n, p, options.source);
            break;
        case PartType::GainBlock:
            addGainBlock(n, p, options);
            break;
        case PartType::Load:
            break;
        }
    }

    const std::string la = load->node("a");
    const std::string lb = load->node("b");
    std::string sense; // element whose branch current is the load current
    if (options.load) {
        std::string hot = la;
        if (design.output == OutputKind::Current || options.senseLoadCurrent) {
            hot = load->id + ":i";
            sense = load->id + ":sense";
            n.addVoltageSource(sense, hot, lb, -1).part = load->id;
        }
        NetlistElement &r
            = n.addResistor(load->id, la, sense.empty() ? lb : hot, load->number("r"));
        r.part = load->id;
        r.field = "r";
        if (load->number("c") > 0) {
            NetlistElement &c
                = n.addCapacitor(load->id + ":c", la, sense.empty() ? lb : hot, load->number("c"));
            c.part = load->id;
            c.field = "c";
        }
    }

    const auto [ip, im] = inputPortNodes(design);
    n.addCurrentSource("port:in", ip, im, loopio::kInputPort).role = NetlistElement::Role::Port;
    n.addCurrentSource("port:load", la, lb, loopio::kLoadPort).role = NetlistElement::Role::Port;

    const NetlistOutput noCurrent{NetlistOutput::Kind::VoltageBetween, la, la}; // zero row
    const NetlistOutput loadCurrent
        = sense.empty() ? noCurrent : NetlistOutput{NetlistOutput::Kind::BranchCurrent, sense, {}};
    if (design.output == OutputKind::Voltage)
        n.addOutput({NetlistOutput::Kind::VoltageBetween, la, lb});
    else
        n.addOutput(loadCurrent);
    n.addOutput({NetlistOutput::Kind::VoltageBetween, ip, im});
    n.addOutput({NetlistOutput::Kind::VoltageBetween, la, lb});
    n.addOutput({NetlistOutput::Kind::ControlledReturn, {}, {}});
    const Part *gb = design.uniquePart(PartType::GainBlock);
    const auto split = [&](const std::string &node) {
        return !options.splitNode.empty() && node == options.splitNode ? node + "#in" : node;
    };
    n.addOutput(
        {NetlistOutput::Kind::VoltageBetween, split(gb->node("in_p")), split(gb->node("in_n"))});
    n.addOutput(loadCurrent);
    return n;
}

} // namespace loopsketch
