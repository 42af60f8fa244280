#include "loopsketch/loopmodel.h"

#include "loopsketch/loopcircuit.h"

#include <cmath>
#include <limits>
#include <map>
#include <set>

namespace loopsketch {

namespace {

const Complex kNaN(std::numeric_limits<double>::quiet_NaN(),
                   std::numeric_limits<double>::quiet_NaN());

Result<ReducedSystem> reduceWith(SolverPath path, const Netlist &netlist)
{
    auto system = assembleSystem(netlist);
    if (!system)
        return system.diagnostics();
    return ReducedSystem::build(*system, path);
}

Result<ReducedSystem> reduceWith(SolverPath path, const Design &d, const LoopCircuitOptions &o)
{
    return reduceWith(path, buildLoopNetlist(d, o));
}

std::optional<ReducedSystem> optionalOf(Result<ReducedSystem> r)
{
    if (!r)
        return std::nullopt;
    return std::move(r).value();
}

/// How a copy of the feedback network is attached in the A circuit.
enum class PortEnd { Attached, Shorted, Open };

/// Appends a copy of the network. Port nodes are attached to `port1At` / `port2At`,
/// shorted to ground, or left open on a private node; internal nodes are private. Parts
/// left dangling on an open node carry no current and are dropped.
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

} // namespace

struct LoopModel::TwoPortSystems
{
    Topology topology;
    TwoPortNetwork network;
    ReducedSystem aFull;
    std::optional<ReducedSystem> aSeriesInput; // Z seen at the source-driven input
    std::optional<ReducedSystem> aSeriesOutput; // Z seen by the load, load removed
    TwoPortNetwork sourceSide; // h parameters from the source's terminals to its input
    int testP1 = -1, testP2 = -1, outP1 = -1, outP2 = -1, sampled = -1;
    double sampledSign = 1.0;
    bool voltageSource = true;
    double rSeries = 0, gParallel = 0, cParallel = 0; // the source's own impedance
    double loadR = 1, loadC = 0;
    double gIn = 0, cIn = 0, rOut = 0; // the gain block's
};

Result<LoopModel> LoopModel::build(const Design &design, SolverPath path)
{
    const auto reduce = [path](const auto &...args) {
        return reduceWith(path, args...);
    };
    using Source = LoopCircuitOptions::Source;
    LoopModel m;
    auto full = reduce(design, LoopCircuitOptions{});
    if (!full)
        return full.diagnostics();
    m.m_full = std::move(full).value();
    LoopCircuitOptions o;
    o.source = Source::Removed;
    m.m_input = optionalOf(reduce(design, o));
    o = {};
    o.source = Source::Zeroed;
    o.load = false;
    m.m_output = optionalOf(reduce(design, o));

    o = {};
    o.testDriven = true;
    auto rr = reduce(design, o);
    if (!rr)
        return rr.diagnostics();
    m.m_rrFull = std::move(rr).value();
    o.source = Source::Removed;
    m.m_rrInput = optionalOf(reduce(design, o));
    o.source = Source::Zeroed;
    o.load = false;
    m.m_rrOutput = optionalOf(reduce(design, o));

    m.m_topology = identifyTopology(design);
    if (!m.m_topology.topology)
        return m;
    const Topology &t = *m.m_topology.topology;

    std::vector<Part> networkParts;
    std::set<std::string> networkIds(t.networkParts.begin(), t.networkParts.end());
    std::set<std::string> sourceIds(t.sourceSideParts.begin(), t.sourceSideParts.end());
    std::vector<Part> sourceParts;
    for (const Part &p : design.parts) {
        if (networkIds.count(p.id))
            networkParts.push_back(p);
        if (sourceIds.count(p.id))
            sourceParts.push_back(p);
    }
    auto network = TwoPortNetwork::build(networkParts, t.port1Node, t.port2Node, t.parameters());
    if (!network) {
        m.m_twoPortProblem = network.errorText();
        return m;
    }

    const bool split = t.port1Node == t.port2Node;
    const std::string p1 = split ? t.port1Node + "#in" : t.port1Node;
    const std::string p2 = t.port2Node;
    const PortEnd inCopyPort2 = t.sampling == Connection::Shunt ? PortEnd::Shorted : PortEnd::Open;
    const PortEnd outCopyPort1 = t.mixing == Connection::Shunt ? PortEnd::Shorted : PortEnd::Open;
    const auto withCopies = [&](LoopCircuitOptions opts) {
        opts.includePart = [&](const Part &p) {
            return !networkIds.count(p.id);
        };
        opts.splitNode = split ? t.port1Node : std::string();
        const auto include = opts.includePart;
        Netlist n = buildLoopNetlist(design, opts);
        addNetworkCopy(n, networkParts, "A.in:", t.port1Node, PortEnd::Attached, p1, t.port2Node,
                       inCopyPort2, p2);
        addNetworkCopy(n, networkParts, "A.out:", t.port1Node, outCopyPort1, p1, t.port2Node,
                       PortEnd::Attached, p2);
        return n;
    };

    LoopCircuitOptions aOpts;
    aOpts.senseLoadCurrent = t.sampling == Connection::Series;
    Netlist aNet = withCopies(aOpts);
    auto sys = std::make_shared<TwoPortSystems>();
    sys->topology = t;
    sys->network = std::move(network).value();
    sys->testP1 = aNet.addInput();
    aNet.addCurrentSource("test:p1", p1, "0", sys->testP1);
    sys->testP2 = aNet.addInput();
    aNet.addCurrentSource("test:p2", p2, "0", sys->testP2);
    sys->outP1 = aNet.addOutput({NetlistOutput::Kind::VoltageBetween, p1, "0"});
    sys->outP2 = aNet.addOutput({NetlistOutput::Kind::VoltageBetween, p2, "0"});
    const Part *load = design.uniquePart(PartType::Load);
    if (t.sampling == Connection::Shunt) {
        sys->sampled = sys->outP2;
    } else {
        sys->sampled = loopio::kLoadCurrent;
        sys->sampledSign = load->node("b") == p2 ? 1.0 : -1.0;
    }
    auto aFull = reduce(aNet);
    if (!aFull) {
        m.m_twoPortProblem = "the A circuit has no solution: " + aFull.errorText();
        return m;
    }
    sys->aFull = std::move(aFull).value();

    if (t.mixing == Connection::Series) {
        LoopCircuitOptions so;
        so.source = Source::Removed;
        Netlist n = withCopies(so);
        // The source-side parts go too: what is left is the loop the source drives.
        std::erase_if(n.elements, [&](const NetlistElement &e) { return sourceIds.count(e.name); });
        n.inputCount = 0;
        n.outputs.clear();
        n.addCurrentSource("test:q", t.sourceInput, "0", n.addInput());
        n.addOutput({NetlistOutput::Kind::VoltageBetween, t.sourceInput, "0"});
        std::erase_if(n.elements, [](const NetlistElement &e) {
            return e.kind == NetlistElement::Kind::CurrentSource && e.name.rfind("port:", 0) == 0;
        });
        sys->aSeriesInput = optionalOf(reduce(n));
    }
    if (t.sampling == Connection::Series) {
        LoopCircuitOptions so;
        so.source = Source::Zeroed;
        so.load = false;
        sys->aSeriesOutput = optionalOf(reduce(withCopies(so)));
    }

    const Part *src = design.signalSource();
    sys->voltageSource = src->type == PartType::VSource;
    if (sys->voltageSource) {
        sys->rSeries = src->number("r_series");
    } else {
        sys->gParallel = src->has("r_parallel") ? 1.0 / src->number("r_parallel") : 0.0;
        sys->cParallel = src->number("c_parallel");
    }
    {
        // h parameters of what lies between the source's terminals (port 1) and the
        // gain-block input it drives (port 2); with no parts there it is a plain wire.
        const auto [hot, cold] = inputPortNodes(design);
        const std::string srcHot = hot == std::string(kGroundNode) ? cold : hot;
        auto side = TwoPortNetwork::build(sourceParts, srcHot, t.sourceInput, ParameterSet::H);
        if (!side) {
            m.m_twoPortProblem = "the parts between the source and the gain block have no "
                                 "two-port form: "
                + side.errorText();
            return m;
        }
        sys->sourceSide = std::move(side).value();
    }
    sys->loadR = load->number("r");
    sys->loadC = load->number("c");
    const Part *gb = design.uniquePart(PartType::GainBlock);
    sys->gIn = gb->has("r_in") ? 1.0 / gb->number("r_in") : 0.0;
    sys->cIn = gb->number("c_in");
    sys->rOut = gb->number("r_out");
    m.m_twoPort = sys;
    return m;
}

namespace {

/// Blackman: Z = Z_D (1 + T_sc) / (1 + T_oc), from a test-driven system with a port.
Complex blackman(const ReducedSystem &r, Complex s, int portVoltage, int portInput, Complex &zd)
{
    thread_local Eigen::MatrixXcd h;
    r.evaluateInto(s, {portInput, loopio::kTest}, {portVoltage, loopio::kReturned}, h);
    zd = h(portVoltage, portInput);
    if (zd == Complex(0.0))
        return 0.0; // a port held by an ideal source stays at zero impedance
    const Complex tOc = -h(loopio::kReturned, loopio::kTest);
    const Complex tSc = -(h(loopio::kReturned, loopio::kTest)
                          - h(loopio::kReturned, portInput) * h(portVoltage, loopio::kTest) / zd);
    return zd * (1.0 + tSc) / (1.0 + tOc);
}

Complex parallel(Complex a, Complex b)
{
    return a * b / (a + b);
}

} // namespace

Complex LoopModel::loopGainAt(Complex s) const
{
    return -m_rrFull->entry(s, loopio::kReturned, loopio::kTest);
}

Complex LoopModel::gainAt(Complex s) const
{
    return m_full->entry(s, loopio::kOutput, loopio::kSource);
}

LoopPoint LoopModel::at(Complex s) const
{
    LoopPoint p;
    p.gain = gainAt(s);
    p.zIn = m_input ? m_input->entry(s, loopio::kInputVoltage, loopio::kInputPort) : kNaN;
    p.zOut = m_output ? m_output->entry(s, loopio::kLoadVoltage, loopio::kLoadPort) : kNaN;

    thread_local Eigen::MatrixXcd rr;
    m_rrFull->evaluateInto(s, {loopio::kSource, loopio::kTest},
                           {loopio::kOutput, loopio::kReturned}, rr);
    const Complex t = -rr(loopio::kReturned, loopio::kTest);
    const Complex g0 = rr(loopio::kOutput, loopio::kSource);
    const Complex through
        = rr(loopio::kOutput, loopio::kTest) * rr(loopio::kReturned, loopio::kSource);
    p.loopGain = t;
    p.feedthrough = g0;
    p.gainInf = g0 + through / t;
    p.rrGain = p.gainInf * t / (1.0 + t) + g0 / (1.0 + t);
    p.zInOpenLoop = p.zOutOpenLoop = kNaN;
    p.rrZIn = m_rrInput
        ? blackman(*m_rrInput, s, loopio::kInputVoltage, loopio::kInputPort, p.zInOpenLoop)
        : kNaN;
    p.rrZOut = m_rrOutput
        ? blackman(*m_rrOutput, s, loopio::kLoadVoltage, loopio::kLoadPort, p.zOutOpenLoop)
        : kNaN;

    p.a = p.beta = p.tpLoopGain = p.closedLoop = p.tpGain = p.tpZIn = p.tpZOut = kNaN;
    p.inputLoading = p.outputLoading = kNaN;
    p.network.setConstant(kNaN);
    if (!m_twoPort)
        return p;
    const TwoPortSystems &x = *m_twoPort;
    const Topology &top = x.topology;
    const bool seriesMix = top.mixing == Connection::Series;
    const bool seriesSample = top.sampling == Connection::Series;

    // The source as seen from the gain-block input it drives, through the source-side
    // two-port h: V_S = h11 I_S + h12 V_P, I_P = h21 I_S + h22 V_P (currents into it).
    const TwoPortMatrix h = x.sourceSide.at(s);
    const Complex h11 = h(0, 0), h12 = h(0, 1), h21 = h(1, 0), h22 = h(1, 1);
    const Complex ySrc = x.gParallel + s * x.cParallel;
    // Source equation  u11 I_S + u12 V_S = 1  (1 V behind r_series, or 1 A beside ySrc).
    const Complex u11 = x.voltageSource ? Complex(x.rSeries) : Complex(1.0);
    const Complex u12 = x.voltageSource ? Complex(1.0) : ySrc;
    // With V_S = h11 I_S + h12 V_P:  (u11 + u12 h11) I_S + u12 h12 V_P = 1.
    const Complex c1 = u11 + u12 * h11, c2 = u12 * h12;
    const Complex vOpen = -h21 / (c1 * h22 - c2 * h21); // V_P with the input open
    const Complex iShort = -h21 / c1; // Norton current into the input
    const Complex ys = h22 - h21 * c2 / c1; // admittance with the source zeroed
    const Complex zs = 1.0 / ys;
    const Complex kSrc = seriesMix ? vOpen : iShort;

    thread_local Eigen::MatrixXcd a;
    x.aFull.evaluateInto(s, {loopio::kSource, x.testP1, x.testP2},
                         {loopio::kOutput, x.sampled, x.outP1, x.outP2}, a);
    const Complex sampled = x.sampledSign * a(x.sampled, loopio::kSource);
    p.a = sampled / kSrc;
    p.network = x.network.at(s);
    p.beta = p.network(0, 1);
    p.tpLoopGain = p.a * p.beta;
    const Complex desens = 1.0 + p.tpLoopGain;
    p.closedLoop = p.a / desens;
    p.tpGain = p.closedLoop * kSrc * (a(loopio::kOutput, loopio::kSource) / sampled);

    Complex zNode;
    if (seriesMix) {
        const Complex zq = x.aSeriesInput ? x.aSeriesInput->entry(s, 0, 0) : kNaN;
        zNode = (zs + zq) * desens - zs;
    } else {
        const Complex ri = a(x.outP1, x.testP1);
        zNode = 1.0 / (desens / ri - ys);
    }
    p.tpZIn = h11 - h12 * h21 * zNode / (1.0 + h22 * zNode);

    const Complex yl = 1.0 / x.loadR + s * x.loadC;
    const Complex zl = 1.0 / yl;
    if (seriesSample) {
        const Complex zRest = x.aSeriesOutput
            ? x.aSeriesOutput->entry(s, loopio::kLoadVoltage, loopio::kLoadPort)
            : kNaN;
        p.tpZOut = (zl + zRest) * desens - zl;
    } else {
        const Complex ro = a(x.outP2, x.testP2);
        p.tpZOut = 1.0 / (desens / ro - yl);
    }

    // Loading budget: what the network's port loading costs against an unloaded input
    // and output (1 = nothing lost).
    const TwoPortMatrix &n = p.network;
    Complex zn1, zn2;
    switch (top.parameters()) {
    case ParameterSet::H:
        zn1 = n(0, 0), zn2 = 1.0 / n(1, 1);
        break;
    case ParameterSet::Y:
        zn1 = 1.0 / n(0, 0), zn2 = 1.0 / n(1, 1);
        break;
    case ParameterSet::Z:
        zn1 = n(0, 0), zn2 = n(1, 1);
        break;
    case ParameterSet::G:
        zn1 = 1.0 / n(0, 0), zn2 = n(1, 1);
        break;
    }
    const Complex yIn = x.gIn + s * x.cIn;
    if (seriesMix) {
        p.inputLoading
            = std::abs(yIn) == 0.0 ? Complex(1.0) : (1.0 / yIn + zs) / (1.0 / yIn + zs + zn1);
    } else {
        p.inputLoading = (ys + yIn) / (ys + 1.0 / zn1 + yIn);
    }
    if (seriesSample) {
        p.outputLoading = (x.rOut + zl) / (x.rOut + zl + zn2);
    } else {
        const Complex zp = parallel(zl, zn2);
        p.outputLoading = zp * (x.rOut + zl) / (zl * (x.rOut + zp));
    }
    return p;
}

std::vector<Complex> LoopModel::closedLoopPoles() const
{
    return m_full->naturalFrequencies();
}

Result<std::vector<double>> LoopModel::stepResponse(const std::vector<double> &times) const
{
    return m_full->stepResponse(loopio::kOutput, loopio::kSource, times);
}

} // namespace loopsketch
