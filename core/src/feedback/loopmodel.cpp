#include "loopsketch/feedback/loopmodel.h"

#include "loopsketch/circuit/loopcircuit.h"

#include "feedback/acircuit.h"

#include <algorithm>
#include <cmath>
#include <limits>
#include <map>
#include <numbers>
#include <set>

namespace loopsketch {

namespace {

const Complex kNaN(std::numeric_limits<double>::quiet_NaN(),
                   std::numeric_limits<double>::quiet_NaN());

/// The nodes in words, for a message: "node x" or "nodes x, y and z".
std::string nodeList(const std::vector<std::string> &nodes)
{
    std::string text = nodes.size() == 1 ? "node " : "nodes ";
    for (std::size_t i = 0; i < nodes.size(); ++i)
        text += (i == 0 ? "" : i + 1 == nodes.size() ? " and " : ", ") + nodes[i];
    return text;
}

Result<ReducedSystem> reduceWith(SolverPath path, const Netlist &netlist)
{
    // Decided from the connections, not from a pivot: rounding can leave such a system
    // looking solvable at some frequencies, with values made of round-off (an input port
    // that leads only into an ideal gain-block input, with no r_in or c_in).
    if (const std::vector<std::string> floating = nodesWithoutGround(netlist); !floating.empty())
        return Diagnostic{{},
                          {},
                          {},
                          "the circuit has no solution: " + nodeList(floating)
                              + (floating.size() == 1 ? " has" : " have")
                              + " no path to ground (only gain-block inputs or current "
                                "sources lead there)"};
    auto system = assembleSystem(netlist);
    if (!system)
        return system.diagnostics();
    return ReducedSystem::build(std::move(system).value(), path);
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

} // namespace

struct LoopModel::TwoPortSystems
{
    Topology topology;
    TwoPortNetwork network;
    ReducedSystem aFull;
    std::optional<ReducedSystem> aSeriesInput; // Z seen at the source-driven input
    bool inputDrawsNoCurrent = false; // nothing left at that input: Z is infinite
    std::optional<ReducedSystem> aSeriesOutput; // Z seen by the load, load removed
    TwoPortNetwork sourceSide; // h parameters from the source's terminals to its input
    int testP1 = -1, testP2 = -1, outP1 = -1, outP2 = -1, sampled = -1;
    double sampledSign = 1.0;
    bool voltageSource = true;
    double rSeries = 0, gParallel = 0, cParallel = 0; // the source's own impedance
    double loadR = 1, loadC = 0;
    double gIn = 0, cIn = 0, cCm = 0, rOut = 0; // the gain block's

    /// The source's, the load's and the gain block's values the estimate reads directly.
    void readPartValues(const Design &design)
    {
        const Part *src = design.signalSource();
        voltageSource = src->type == PartType::VSource;
        if (voltageSource) {
            rSeries = src->number("r_series");
        } else {
            gParallel = src->has("r_parallel") ? 1.0 / src->number("r_parallel") : 0.0;
            cParallel = src->number("c_parallel");
        }
        const Part *load = design.uniquePart(PartType::Load);
        loadR = load->number("r");
        loadC = load->number("c");
        const Part *gb = design.uniquePart(PartType::GainBlock);
        gIn = gb->has("r_in") ? 1.0 / gb->number("r_in") : 0.0;
        cIn = gb->number("c_in");
        cCm = gb->number("c_cm");
        rOut = gb->number("r_out");
    }
};

Result<LoopModel> LoopModel::build(const Design &design, SolverPath path, LoopModelScope scope)
{
    const auto reduce = [path](const auto &...args) {
        return reduceWith(path, args...);
    };
    using Source = LoopCircuitOptions::Source;
    LoopModel m;
    m.m_path = path;
    m.m_scope = scope;
    auto full = reduce(design, LoopCircuitOptions{});
    if (!full)
        return full.diagnostics();
    m.m_full = std::move(full).value();
    LoopCircuitOptions o;
    if (scope != LoopModelScope::GainAndLoop) {
        o.source = Source::Removed;
        m.m_input = optionalOf(reduce(design, o));
        o = {};
        o.source = Source::Zeroed;
        o.load = false;
        m.m_output = optionalOf(reduce(design, o));
    }

    o = {};
    o.testDriven = true;
    auto rr = reduce(design, o);
    if (!rr)
        return rr.diagnostics();
    m.m_rrFull = std::move(rr).value();
    if (scope == LoopModelScope::Full) {
        o.source = Source::Removed;
        m.m_rrInput = optionalOf(reduce(design, o));
        o.source = Source::Zeroed;
        o.load = false;
        m.m_rrOutput = optionalOf(reduce(design, o));
    }

    if (path == SolverPath::Reduced)
        m.checkAccuracy(design);

    if (const Part *gainBlock = design.uniquePart(PartType::GainBlock)) {
        m.m_openLoopDcGain = gainBlockGain(*gainBlock);
        m.m_openLoopPolesHz = gainBlockPolesHz(*gainBlock);
        for (const Value &z : gainBlock->zerosHz)
            m.m_openLoopZerosHz.push_back(z.si);
    }

    if (scope != LoopModelScope::Full)
        return m;
    m.m_topology = identifyTopology(design);
    if (m.m_topology.topology)
        m.buildTwoPort(design, path);
    return m;
}

void LoopModel::buildTwoPort(const Design &design, SolverPath path)
{
    const auto reduce = [path](const auto &...args) {
        return reduceWith(path, args...);
    };
    using Source = LoopCircuitOptions::Source;
    const Topology &t = *m_topology.topology;

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
        m_twoPortProblem = network.errorText();
        return;
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
        // A network that is a bare wire (a follower's output straight to its input): the
        // input copy, port 2 shorted, holds the split input at ground, through a source that
        // of 0 V (input -1).
        if (split && networkParts.empty() && inCopyPort2 == PortEnd::Shorted)
            n.addVoltageSource("A.in:wire", p1, std::string(kGroundNode), -1);
        return n;
    };

    LoopCircuitOptions aOpts;
    aOpts.senseLoadCurrent = t.sampling == Connection::Series;
    Netlist aNet = withCopies(aOpts);
    auto sys = std::make_shared<TwoPortSystems>();
    sys->topology = t;
    sys->network = std::move(network).value();
    sys->testP1 = aNet.addInput();
    aNet.addCurrentSource("test:p1", p1, "0", sys->testP1).role = NetlistElement::Role::Test;
    sys->testP2 = aNet.addInput();
    aNet.addCurrentSource("test:p2", p2, "0", sys->testP2).role = NetlistElement::Role::Test;
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
        m_twoPortProblem = "the A circuit has no solution: " + aFull.errorText();
        return;
    }
    sys->aFull = std::move(aFull).value();

    if (t.mixing == Connection::Series) {
        LoopCircuitOptions so;
        so.source = Source::Removed;
        Netlist n = sourceLoopNetlist(withCopies(so), sourceIds, t.sourceInput);
        // With the legs at the input counted on the source's side, an input with an ideal
        // r_in and no c_in has nothing left on it but the test source: it draws no current.
        sys->inputDrawsNoCurrent = onlyTestSourceAt(n, t.sourceInput);
        if (!sys->inputDrawsNoCurrent) {
            // Nor does an input whose side, with the source removed, has no solution at any
            // frequency (a subnetwork with no path back to ground, fuzz seed 7191): its Z
            // is infinite at every frequency, not unknown.
            auto input = reduce(n);
            sys->inputDrawsNoCurrent = !input;
            sys->aSeriesInput = optionalOf(std::move(input));
        }
    }
    if (t.sampling == Connection::Series) {
        LoopCircuitOptions so;
        so.source = Source::Zeroed;
        so.load = false;
        sys->aSeriesOutput = optionalOf(reduce(withCopies(so)));
    }

    auto side = sourceSideNetwork(design, sourceParts, t.sourceInput);
    if (!side) {
        m_twoPortProblem = "the parts between the source and the gain block have no "
                           "two-port form: "
            + side.errorText();
        return;
    }
    sys->sourceSide = std::move(side).value();
    sys->readPartValues(design);
    // Series mixing drives the A circuit with the source's open-circuit voltage behind its
    // impedance, both infinite for an ideal current source with nothing to ground on its side:
    // the estimate would divide rounding by rounding, so it is missing as a whole.
    if (t.mixing == Connection::Series && !sys->voltageSource && sys->gParallel == 0.0
        && sys->cParallel == 0.0 && !sourceSideGrounds(sourceParts, t.sourceInput)) {
        m_twoPortProblem = floatingCurrentSourceProblem(design.signalSource()->id, t.sourceInput);
        return;
    }
    if (path == SolverPath::Reduced) {
        std::vector<TransferEntry> aEntries
            = {{sys->sampled, loopio::kSource}, {loopio::kOutput, loopio::kSource}};
        for (int out : {sys->outP1, sys->outP2})
            for (int in : {sys->testP1, sys->testP2})
                aEntries.push_back({out, in});
        checkEstimateAccuracy(design,
                              {sys->network, sys->sourceSide, sys->aFull, aEntries,
                               sys->aSeriesInput, sys->aSeriesOutput});
    }
    m_twoPort = sys;
}

namespace {

using Curve = std::vector<Complex>;

Curve nanCurve(std::size_t n)
{
    return Curve(n, kNaN);
}

/// One entry of a system over the sweep.
Curve entryCurve(const ReducedSystem &r, std::span<const Complex> s, int output, int input)
{
    const TransferEntry e[] = {{output, input}};
    return r.sweepEntries(s, e);
}

/// Blackman: Z = Z_D (1 + T_sc) / (1 + T_oc), from a test-driven system with a port.
Curve blackman(const ReducedSystem &r, std::span<const Complex> s, int portVoltage, int portInput,
               Curve &zd)
{
    const TransferEntry e[] = {{portVoltage, portInput},
                               {loopio::kReturned, loopio::kTest},
                               {loopio::kReturned, portInput},
                               {portVoltage, loopio::kTest}};
    const Curve h = r.sweepEntries(s, e);
    const std::size_t n = s.size();
    Curve z(n);
    zd.resize(n);
    for (std::size_t i = 0; i < n; ++i) {
        zd[i] = h[i];
        if (zd[i] == Complex(0.0)) {
            z[i] = 0.0; // a port held by an ideal source stays at zero impedance
            continue;
        }
        // With T_oc = -h1 and T_sc = -(h1 - h2 h3 / Z_D):
        // Z_D (1 + T_sc) / (1 + T_oc) = (Z_D (1 - h1) + h2 h3) / (1 - h1), one quotient.
        const Complex openLoop = 1.0 - h[n + i];
        z[i] = (zd[i] * openLoop + h[2 * n + i] * h[3 * n + i]) / openLoop;
    }
    return z;
}

/// The signal source as the gain-block input it drives sees it.
struct SourceAtInput
{
    Complex ys; ///< admittance with the source zeroed, S
    Complex zs; ///< 1 / ys under series mixing (0 otherwise), ohms
    Complex drive; ///< the open-circuit voltage (series mixing) or the short-circuit current
};

/// The source (1 V behind `rSeries`, or 1 A beside `ySrc`) through the source-side two-port
/// `h`: V_S = h11 I_S + h12 V_P, I_P = h21 I_S + h22 V_P (currents into it).
SourceAtInput sourceAtInput(const TwoPortMatrix &h, bool voltageSource, double rSeries,
                            Complex ySrc, bool seriesMix)
{
    const Complex h11 = h(0, 0), h12 = h(0, 1), h21 = h(1, 0), h22 = h(1, 1);
    // Source equation  u11 I_S + u12 V_S = 1.
    const Complex u11 = voltageSource ? Complex(rSeries) : Complex(1.0);
    const Complex u12 = voltageSource ? Complex(1.0) : ySrc;
    // With V_S = h11 I_S + h12 V_P:  (u11 + u12 h11) I_S + u12 h12 V_P = 1.
    const Complex c1 = u11 + u12 * h11, c2 = u12 * h12;
    const Complex invC1 = 1.0 / c1;
    const Complex iShort = -h21 * invC1; // Norton current into the input
    SourceAtInput source;
    source.ys = h22 - h21 * c2 * invC1;
    // Only series mixing reads the source as an impedance.
    // 1 / ys over one quotient: 0 for an ideal voltage source right at the input (c1 = 0),
    // where ys itself is infinite.
    source.zs = seriesMix ? c1 / (c1 * h22 - c2 * h21) : Complex(0.0);
    // Series mixing drives with the open-circuit voltage V_P, shunt with the current.
    source.drive = seriesMix ? -h21 / (c1 * h22 - c2 * h21) : iShort;
    return source;
}

} // namespace

std::vector<Complex> LoopModel::loopGainOver(std::span<const Complex> s) const
{
    const TransferEntry e[] = {{loopio::kReturned, loopio::kTest}};
    std::vector<Complex> t = m_rrFull->sweepEntries(s, e);
    for (Complex &v : t)
        v = -v;
    return t;
}

std::vector<Complex> LoopModel::gainOver(std::span<const Complex> s) const
{
    const TransferEntry e[] = {{loopio::kOutput, loopio::kSource}};
    return m_full->sweepEntries(s, e);
}

Complex LoopModel::loopGainAt(Complex s) const
{
    return -m_rrFull->entry(s, loopio::kReturned, loopio::kTest);
}

Complex LoopModel::gainAt(Complex s) const
{
    return m_full->entry(s, loopio::kOutput, loopio::kSource);
}

Complex LoopModel::openLoopGainAt(Complex s) const
{
    Complex a = m_openLoopDcGain;
    const double twoPi = 2.0 * std::numbers::pi;
    for (double z : m_openLoopZerosHz)
        a *= 1.0 + s / (twoPi * z);
    for (double p : m_openLoopPolesHz)
        a /= 1.0 + s / (twoPi * p);
    return a;
}

LoopPoint LoopModel::at(Complex s) const
{
    LoopCurves c = sweep({&s, 1});
    LoopPoint p;
    LoopPoint::forEachPair(p, c, [](auto &value, auto &curve) { value = curve[0]; });
    return p;
}

LoopCurves LoopModel::sweepLoop(std::span<const Complex> s) const
{
    LoopCurves c;
    c.gainExact = entryCurve(*m_full, s, loopio::kOutput, loopio::kSource);
    sweepReturnRatio(s, c);
    return c;
}

void LoopModel::sweepReturnRatio(std::span<const Complex> s, LoopCurves &c) const
{
    const std::size_t n = s.size();
    const TransferEntry e[] = {{loopio::kReturned, loopio::kTest},
                               {loopio::kOutput, loopio::kSource},
                               {loopio::kOutput, loopio::kTest},
                               {loopio::kReturned, loopio::kSource}};
    const Curve rr = m_rrFull->sweepEntries(s, e);
    c.loopGain.resize(n);
    c.feedthrough.resize(n);
    c.gainInf.resize(n);
    c.gainReturnRatio.resize(n);
    c.desensitivity.resize(n);
    for (std::size_t i = 0; i < n; ++i) {
        const Complex t = -rr[i];
        const Complex g0 = rr[n + i];
        const Complex through = rr[2 * n + i] * rr[3 * n + i];
        c.loopGain[i] = t;
        c.feedthrough[i] = g0;
        c.gainInf[i] = g0 + through / t;
        // G_inf T/(1+T) + G_0/(1+T) with G_inf = G_0 + through/T, written without
        // G_inf: the same value, and finite where T is 0 (no loop at that frequency),
        // where G_inf is not.
        c.gainReturnRatio[i] = g0 + through / (1.0 + t);
        c.desensitivity[i] = 1.0 + t;
    }
    c.openLoopGain.resize(n);
    c.invBeta.resize(n);
    for (std::size_t i = 0; i < n; ++i) {
        c.openLoopGain[i] = openLoopGainAt(s[i]);
        // Where T is 0 (no loop at that frequency) 1/beta is infinite: absent.
        c.invBeta[i] = c.loopGain[i] != 0.0 ? c.openLoopGain[i] / c.loopGain[i] : kNaN;
    }
}

LoopCurves LoopModel::sweep(std::span<const Complex> s) const
{
    const std::size_t n = s.size();
    LoopCurves c;
    c.gainExact = entryCurve(*m_full, s, loopio::kOutput, loopio::kSource);
    c.zInExact = m_input ? entryCurve(*m_input, s, loopio::kInputVoltage, loopio::kInputPort)
                         : nanCurve(n);
    c.zOutExact = m_output ? entryCurve(*m_output, s, loopio::kLoadVoltage, loopio::kLoadPort)
                           : nanCurve(n);

    sweepReturnRatio(s, c);
    c.zInOpenLoop = c.zOutOpenLoop = nanCurve(n);
    c.zInReturnRatio = m_rrInput
        ? blackman(*m_rrInput, s, loopio::kInputVoltage, loopio::kInputPort, c.zInOpenLoop)
        : nanCurve(n);
    c.zOutReturnRatio = m_rrOutput
        ? blackman(*m_rrOutput, s, loopio::kLoadVoltage, loopio::kLoadPort, c.zOutOpenLoop)
        : nanCurve(n);

    for (Curve *curve : {&c.a, &c.beta, &c.loopGainTwoPort, &c.closedLoop, &c.gainTwoPort,
                         &c.zInTwoPort, &c.zOutTwoPort, &c.inputLoading, &c.outputLoading})
        *curve = nanCurve(n);
    if (!m_twoPort) {
        TwoPortMatrix none;
        none.setConstant(kNaN);
        c.network.assign(n, none);
        return c;
    }
    sweepTwoPort(s, c);
    return c;
}

void LoopModel::sweepTwoPort(std::span<const Complex> s, LoopCurves &c) const
{
    const std::size_t n = s.size();
    const TwoPortSystems &x = *m_twoPort;
    const Topology &top = x.topology;
    const bool seriesMix = top.mixing == Connection::Series;
    const bool seriesSample = top.sampling == Connection::Series;

    const std::vector<TwoPortMatrix> sourceSide = x.sourceSide.sweep(s);
    c.network = x.network.sweep(s);
    std::vector<TransferEntry> aEntries
        = {{x.sampled, loopio::kSource}, {loopio::kOutput, loopio::kSource}};
    if (!seriesMix)
        aEntries.push_back({x.outP1, x.testP1});
    if (!seriesSample)
        aEntries.push_back({x.outP2, x.testP2});
    const Curve aCurves = x.aFull.sweepEntries(s, aEntries);
    const auto aEntry = [&](std::size_t e, std::size_t i) {
        return aCurves[e * n + i];
    };
    // Unused when the input draws no current.
    const Curve zq = seriesMix && x.aSeriesInput ? entryCurve(*x.aSeriesInput, s, 0, 0)
                                                 : nanCurve(seriesMix ? n : 0);
    const Curve zRest = seriesSample && x.aSeriesOutput
        ? entryCurve(*x.aSeriesOutput, s, loopio::kLoadVoltage, loopio::kLoadPort)
        : nanCurve(seriesSample ? n : 0);

    for (std::size_t i = 0; i < n; ++i) {
        // The source as seen from the gain-block input it drives, through the source-side
        // two-port h: V_S = h11 I_S + h12 V_P, I_P = h21 I_S + h22 V_P (currents into it).
        const TwoPortMatrix &h = sourceSide[i];
        const Complex h11 = h(0, 0), h12 = h(0, 1), h21 = h(1, 0), h22 = h(1, 1);
        const SourceAtInput source = sourceAtInput(h, x.voltageSource, x.rSeries,
                                                   x.gParallel + s[i] * x.cParallel, seriesMix);
        const Complex ys = source.ys, zs = source.zs, kSrc = source.drive;

        const Complex sampled = x.sampledSign * aEntry(0, i);
        c.a[i] = sampled / kSrc;
        const TwoPortMatrix &network = c.network[i];
        c.beta[i] = network(0, 1);
        c.loopGainTwoPort[i] = c.a[i] * c.beta[i];
        const Complex desens = 1.0 + c.loopGainTwoPort[i];
        c.closedLoop[i] = c.a[i] / desens;
        // a / (1 + a beta) times the drive per unit of source and the output per unit
        // sampled, with the drive and the sampled signal cancelled: neither is divided by, so
        // a point where one of them is zero (a notch, or rounding of one) is no 0/0.
        c.gainTwoPort[i] = aEntry(1, i) / desens;

        if (seriesMix && x.inputDrawsNoCurrent) {
            // The node's impedance (zs + zq) desens - zs is infinite: the limit.
            c.zInTwoPort[i] = h11 - h12 * h21 / h22;
        } else if (seriesMix) {
            const Complex zNode = (zs + zq[i]) * desens - zs;
            c.zInTwoPort[i] = h11 - h12 * h21 * zNode / (1.0 + h22 * zNode);
        } else {
            // 1 / (desens / ri - ys) with one quotient.
            const Complex ri = aEntry(2, i);
            const Complex zNode = ri / (desens - ys * ri);
            c.zInTwoPort[i] = h11 - h12 * h21 * zNode / (1.0 + h22 * zNode);
        }

        const Complex yl = 1.0 / x.loadR + s[i] * x.loadC;
        const Complex zl = seriesSample ? 1.0 / yl : Complex(0.0);
        if (seriesSample) {
            c.zOutTwoPort[i] = (zl + zRest[i]) * desens - zl;
        } else {
            const Complex ro = aEntry(seriesMix ? 2 : 3, i);
            c.zOutTwoPort[i] = ro / (desens - yl * ro);
        }

        // Loading budget: what the network's port loading costs against an unloaded input
        // and output (1 = nothing lost).
        // Port 1 is read as an impedance under series mixing and as an admittance under
        // shunt mixing: take whichever form the parameter set holds without inverting twice.
        const bool port1Impedance
            = top.parameters() == ParameterSet::H || top.parameters() == ParameterSet::Z;
        const Complex n11 = network(0, 0);
        const Complex yIn = x.gIn + s[i] * x.cIn;
        if (seriesMix) {
            const Complex zn1 = port1Impedance ? n11 : 1.0 / n11;
            if (std::abs(yIn) == 0.0) {
                c.inputLoading[i] = Complex(1.0);
            } else {
                const Complex zInSide = 1.0 / yIn + zs;
                c.inputLoading[i] = zInSide / (zInSide + zn1);
            }
        } else {
            // the mixing pin's common-mode capacitance to ground loads it too
            const Complex yn1 = port1Impedance ? 1.0 / n11 : n11;
            const Complex yPin = yIn + s[i] * x.cCm;
            c.inputLoading[i] = (ys + yPin) / (ys + yn1 + yPin);
        }
        // Series sampling holds port 2 as an impedance (z, g), shunt sampling as an
        // admittance (h, y): use it as it is, so an open port 2 (y22 = 0, a network with
        // nothing from port 1 to ground) gives no loading rather than infinity / infinity.
        if (seriesSample) {
            const Complex zn2 = network(1, 1);
            c.outputLoading[i] = (x.rOut + zl) / (x.rOut + zl + zn2);
        } else {
            // zp (rOut + zl) / (zl (rOut + zp)) with zp = 1 / (yl + yn2) and zl = 1 / yl,
            // over one quotient.
            const Complex yn2 = network(1, 1);
            c.outputLoading[i] = (1.0 + x.rOut * yl) / (1.0 + x.rOut * (yl + yn2));
        }
    }
    // A port the exact solution has no solution at (a test current with no path back, as
    // into an ideal input through series capacitors) has an infinite impedance; the
    // estimate's formula then divides rounding by rounding (a port admittance that is zero
    // at some frequencies and 1e-20 at others), so it is missing as a whole too.
    const Complex nan(std::numeric_limits<double>::quiet_NaN(),
                      std::numeric_limits<double>::quiet_NaN());
    if (!m_input)
        std::fill(c.zInTwoPort.begin(), c.zInTwoPort.end(), nan);
    if (!m_output)
        std::fill(c.zOutTwoPort.begin(), c.zOutTwoPort.end(), nan);
}

std::vector<Complex> LoopModel::closedLoopPoles() const
{
    return m_full->naturalFrequencies();
}

std::vector<Complex> LoopModel::loopGainPoles() const
{
    return m_rrFull->naturalFrequencies();
}

Result<StepModel> LoopModel::stepModel() const
{
    return StepModel::build(*m_full, loopio::kOutput, loopio::kSource);
}

Result<std::vector<double>> LoopModel::stepResponse(const std::vector<double> &times) const
{
    return m_full->stepResponse(loopio::kOutput, loopio::kSource, times);
}

} // namespace loopsketch
