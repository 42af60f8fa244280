#include "loopsketch/feedback/topology.h"

#include "loopsketch/base/lookup.h"

#include <array>

#include <algorithm>
#include <set>

namespace loopsketch {

ParameterSet Topology::parameters() const
{
    if (mixing == Connection::Series)
        return sampling == Connection::Shunt ? ParameterSet::H : ParameterSet::Z;
    return sampling == Connection::Shunt ? ParameterSet::Y : ParameterSet::G;
}

std::string toString(Connection c)
{
    return c == Connection::Series ? "series" : "shunt";
}

std::string toString(ParameterSet p)
{
    static constexpr std::array<EnumName<ParameterSet>, 4> kNames{{{ParameterSet::H, "h"},
                                                                   {ParameterSet::Y, "y"},
                                                                   {ParameterSet::Z, "z"},
                                                                   {ParameterSet::G, "g"}}};
    return nameOf(kNames, p, "");
}

std::string Topology::name() const
{
    return toString(mixing) + "-" + toString(sampling);
}

std::string Topology::gainType() const
{
    if (mixing == Connection::Series)
        return sampling == Connection::Shunt ? "voltage" : "transconductance";
    return sampling == Connection::Shunt ? "transresistance" : "current";
}

std::string Topology::gainUnit() const
{
    const std::string out = sampling == Connection::Shunt ? "V" : "A";
    const std::string in = mixing == Connection::Series ? "V" : "A";
    return out + "/" + in;
}

std::string Topology::feedbackUnit() const
{
    if (mixing == sampling)
        return mixing == Connection::Shunt ? "S" : "\u03A9";
    return mixing == Connection::Series ? "V/V" : "A/A";
}

namespace {

bool isPassive(const Part &p)
{
    return p.type == PartType::Resistor || p.type == PartType::Capacitor
        || p.type == PartType::Inductor;
}

bool isGround(const std::string &n)
{
    return n == kGroundNode;
}

/// Passive parts reachable from `start` through nodes other than ground and `stops`.
/// Parts touching a node in `stops` are collected but not passed through.
std::vector<const Part *> explore(const Design &d, const std::set<std::string> &start,
                                  const std::set<std::string> &stops, std::set<std::string> &seen)
{
    std::vector<const Part *> parts;
    std::set<const Part *> taken;
    std::vector<std::string> queue(start.begin(), start.end());
    seen.insert(start.begin(), start.end());
    while (!queue.empty()) {
        const std::string node = queue.back();
        queue.pop_back();
        for (const Part &p : d.parts) {
            if (!isPassive(p) || taken.count(&p))
                continue;
            const std::string a = p.node("a"), b = p.node("b");
            if (a != node && b != node)
                continue;
            taken.insert(&p);
            parts.push_back(&p);
            for (const std::string &other : {a, b}) {
                if (isGround(other) || seen.count(other))
                    continue;
                seen.insert(other);
                if (!stops.count(other))
                    queue.push_back(other);
            }
        }
    }
    return parts;
}

/// The input side of topology `t` (network and ports found): the source-side parts, the
/// mixing and the gain-block input the source drives. Returns why there is no single mixing
/// port, or empty when `t` is complete.
std::string findInputSide(const Design &d, const Part &source, const std::string &srcHot,
                          const std::string &otherInput, const std::string &out, Topology &t)
{
    const Part *src = &source;
    // Input side: where the source arrives, through passive parts outside the network.
    std::set<std::string> srcSeen;
    std::set<std::string> netIds(t.networkParts.begin(), t.networkParts.end());
    std::vector<std::string> queue{srcHot};
    srcSeen.insert(srcHot);
    while (!queue.empty()) {
        const std::string node = queue.back();
        queue.pop_back();
        // Stop at the network's input; go on through the other input, so that parts
        // hanging there (to ground, under series mixing) count as the source's: they sit
        // across the source, outside the loop that the feedback closes.
        if (node == t.port1Node)
            continue;
        for (const Part &p : d.parts) {
            if (!isPassive(p) || netIds.count(p.id))
                continue;
            const std::string a = p.node("a"), b = p.node("b");
            if (a != node && b != node)
                continue;
            if (std::find(t.sourceSideParts.begin(), t.sourceSideParts.end(), p.id)
                == t.sourceSideParts.end())
                t.sourceSideParts.push_back(p.id);
            for (const std::string &other : {a, b})
                if (!isGround(other) && srcSeen.insert(other).second)
                    queue.push_back(other);
        }
    }
    if (srcSeen.count(t.port1Node) && srcSeen.count(otherInput) && !isGround(otherInput))
        return "the signal source drives both gain-block inputs (a differential drive), so "
               "the input has no single mixing port";
    if (srcSeen.count(t.port1Node)) {
        t.mixing = Connection::Shunt;
        t.sourceInput = t.port1Node;
    } else if (srcSeen.count(otherInput)) {
        t.mixing = Connection::Series;
        t.sourceInput = otherInput;
    } else {
        return "the signal source reaches neither gain-block input except "
               "through the feedback network";
    }
    if (srcSeen.count(out) || srcSeen.count(t.port2Node))
        return "the signal source also reaches the output side outside the "
               "feedback network";
    if (t.mixing == Connection::Shunt && src->type == PartType::VSource
        && !(src->number("r_series") > 0) && srcHot == t.port1Node)
        return "an ideal voltage source (r_series 0) at a shunt-mixing input "
               "holds the input node and leaves no loop";
    if (t.mixing == Connection::Series && src->type == PartType::ISource && !src->has("r_parallel")
        && srcHot == t.sourceInput)
        return "an ideal current source (no r_parallel) in a series-mixing "
               "input loop has no Thevenin form";
    return {};
}

} // namespace

TopologyResult identifyTopology(const Design &d)
{
    const Part *gb = d.uniquePart(PartType::GainBlock);
    const Part *load = d.uniquePart(PartType::Load);
    const Part *src = d.signalSource();
    if (!gb || !load || !src)
        return {std::nullopt, "the design needs one gain block, one load and one signal source"};
    const std::string inP = gb->node("in_p"), inN = gb->node("in_n"), out = gb->node("out");
    std::string srcHot = src->type == PartType::VSource ? src->node("pos") : src->node("to");
    std::string srcCold = src->type == PartType::VSource ? src->node("neg") : src->node("from");
    if (isGround(srcHot))
        std::swap(srcHot, srcCold);
    if (!isGround(srcCold))
        return {std::nullopt,
                "the signal source floats: neither terminal is at ground, so "
                "the input has no single ground-referenced port"};

    // Output side: shunt sampling when the load hangs from its hot node to ground, series
    // sampling when the load sits between the gain-block output and the network.
    Topology t;
    const std::string la = load->node("a"), lb = load->node("b");
    if (isGround(lb) || isGround(la)) {
        t.sampling = Connection::Shunt;
        t.port2Node = isGround(lb) ? la : lb;
    } else if (la == out || lb == out) {
        t.sampling = Connection::Series;
        t.port2Node = la == out ? lb : la;
    } else {
        return {std::nullopt,
                "the load touches neither ground nor the gain-block output, so "
                "the output has no single sampling port"};
    }

    // The feedback network: passive parts reachable from port 2 up to a gain-block input.
    std::set<std::string> seen;
    std::set<std::string> stops{inP, inN, srcHot};
    // Shunt sampling at a node other than the gain-block output: the parts between the
    // output and that node (a series output resistor, an output filter) carry the output to
    // the load and belong to the amplifier, not to the network that feeds back.
    std::set<const Part *> outputPath;
    if (t.sampling == Connection::Shunt && t.port2Node != out) {
        stops.insert(out);
        std::set<std::string> pathSeen;
        for (const Part *p : explore(d, {out}, {t.port2Node, inP, inN, srcHot}, pathSeen)) {
            for (const std::string &n : {p->node("a"), p->node("b")})
                if ((n == inP || n == inN || n == srcHot) && !isGround(n))
                    return {std::nullopt,
                            "the gain-block output reaches an input outside the network at the "
                            "load (part "
                                + p->id + "), so the output has no single sampling port"};
            outputPath.insert(p);
        }
    }
    auto network = explore(d, {t.port2Node}, stops, seen);
    if (!outputPath.empty()) {
        std::erase_if(network, [&](const Part *p) { return outputPath.count(p) != 0; });
        seen = {t.port2Node};
        for (const Part *p : network)
            seen.insert({p->node("a"), p->node("b")});
    }
    const bool reachesP = seen.count(inP) && !isGround(inP);
    const bool reachesN = seen.count(inN) && !isGround(inN);
    if (!reachesP && !reachesN)
        return {std::nullopt,
                "no feedback network: no passive path leads from the output side "
                "back to a gain-block input"};
    if (reachesP && reachesN)
        return {std::nullopt, "the feedback network connects to both gain-block inputs"};
    t.port1Node = reachesN ? inN : inP;
    const std::string otherInput = reachesN ? inP : inN;
    // Parts hanging from port 1 (the lower leg of a divider) belong to the network too,
    // but not those on the source's side of port 1 (R1 of an inverting stage driven by a
    // voltage source): they are part of the source.
    std::set<const Part *> sourceRegion;
    if (srcHot != t.port1Node && srcHot != inP && srcHot != inN) {
        std::set<std::string> regionSeen;
        for (const Part *p : explore(d, {srcHot}, {t.port1Node, inP, inN, t.port2Node}, regionSeen))
            sourceRegion.insert(p);
    }
    for (const Part *p : explore(d, {t.port1Node}, {t.port2Node, srcHot, otherInput}, seen))
        if (!sourceRegion.count(p) && std::find(network.begin(), network.end(), p) == network.end())
            network.push_back(p);
    for (const Part *p : network) {
        for (const std::string &n : {p->node("a"), p->node("b")}) {
            if (n == srcHot && srcHot != t.port1Node)
                return {std::nullopt,
                        "the feedback network also connects to the signal "
                        "source directly (part "
                            + p->id + ")"};
            if (n == otherInput && !isGround(n))
                return {std::nullopt,
                        "the feedback network connects to both gain-block inputs "
                        "(part "
                            + p->id + ")"};
            if (t.sampling == Connection::Series && n == out)
                return {std::nullopt,
                        "the feedback network touches the gain-block output as "
                        "well as the load's far end (part "
                            + p->id + ")"};
        }
    }
    for (const Part *p : network)
        t.networkParts.push_back(p->id);

    if (std::string reason = findInputSide(d, *src, srcHot, otherInput, out, t); !reason.empty())
        return {std::nullopt, reason};
    return {t, {}};
}

} // namespace loopsketch
