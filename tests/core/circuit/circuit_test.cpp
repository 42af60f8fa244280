// Descriptor-system assembly, the dense reference solve and the reduced fast path, checked
// against closed forms of elementary circuits.

#include "loopsketch/circuit/circuit.h"
#include "loopsketch/circuit/reducedsystem.h"

#include "circuit/pencilsweep.h"
#include "gainblockelement.h"
#include "numeric.h"

#include <gmock/gmock.h>
#include <gtest/gtest.h>

#include <Eigen/Eigenvalues>

#include <cmath>
#include <numbers>
#include <random>

using namespace loopsketch;
using namespace loopsketch::test;
using ::testing::HasSubstr;

namespace {

DescriptorSystem assembleOrDie(const Netlist &n)
{
    auto s = assembleSystem(n);
    EXPECT_TRUE(s.ok()) << s.errorText();
    return *s;
}

Netlist rcLowPass(double r, double c)
{
    Netlist n;
    const int in = n.addInput();
    n.addVoltageSource("V1", "in", "0", in);
    n.addResistor("R1", "in", "out", r);
    n.addCapacitor("C1", "out", "0", c);
    n.addOutput({NetlistOutput::Kind::VoltageBetween, "out", "0"});
    return n;
}

std::vector<double> logGrid(double start, double stop, int perDecade)
{
    std::vector<double> f;
    const int n = static_cast<int>(std::round(std::log10(stop / start) * perDecade));
    for (int i = 0; i <= n; ++i)
        f.push_back(start * std::pow(10.0, static_cast<double>(i) / perDecade));
    return f;
}

} // namespace

// Source: first-order RC low-pass, H = 1/(1 + j w R C), pole at f = 1/(2 pi R C)
// (any circuits textbook; common practice).
TEST(Circuit, RcLowPassPoleFrequency)
{
    const double r = 1e3, c = 1e-6;
    const auto sys = assembleOrDie(rcLowPass(r, c));
    const double fc = 1.0 / (2 * kPi * r * c);
    auto dense = solveDense(sys, {fc});
    ASSERT_TRUE(dense.ok());
    EXPECT_NEAR(std::abs((*dense)[0](0, 0)), 1.0 / std::sqrt(2.0), 1e-12);
    EXPECT_NEAR(std::arg((*dense)[0](0, 0)), -kPi / 4, 1e-12);
    auto reduced = ReducedSystem::build(sys);
    ASSERT_TRUE(reduced.ok()) << reduced.errorText();
    EXPECT_EQ(reduced->order(), 1);
    const auto poles = reduced->naturalFrequencies();
    ASSERT_EQ(poles.size(), 1u);
    EXPECT_NEAR(poles[0].real(), -1.0 / (r * c), 1e-9 / (r * c));
    EXPECT_NEAR(poles[0].imag(), 0.0, 1e-12);
}

// Source: step response of a first-order low-pass, y = 1 - exp(-t / RC) (common practice).
TEST(Circuit, RcStepResponseIsExponential)
{
    const double r = 2.2e3, c = 4.7e-9, tau = r * c;
    auto reduced = ReducedSystem::build(assembleOrDie(rcLowPass(r, c)));
    ASSERT_TRUE(reduced.ok());
    std::vector<double> t;
    for (int i = 0; i <= 100; ++i)
        t.push_back(i * tau / 20);
    auto y = reduced->stepResponse(0, 0, t);
    ASSERT_TRUE(y.ok()) << y.errorText();
    for (std::size_t i = 0; i < t.size(); ++i)
        EXPECT_NEAR((*y)[i], 1.0 - std::exp(-t[i] / tau), 1e-10) << "t = " << t[i];
}

// Source: a single-pole amplifier a(f) = a0 / (1 + j f/fp) is 3 dB down with -45 degrees at
// f = fp (common practice).
TEST(Circuit, SinglePoleGainBlockIsThreeDbDownAtItsPole)
{
    Netlist n;
    const int in = n.addInput();
    n.addVoltageSource("V1", "p", "0", in);
    n.controlled.push_back(gainBlockElement("p", "0", "e", 2e5, {10.0}));
    n.addResistor("RL", "e", "0", 1e3);
    n.addOutput({NetlistOutput::Kind::VoltageBetween, "e", "0"});
    auto reduced = ReducedSystem::build(assembleOrDie(n));
    ASSERT_TRUE(reduced.ok());
    const cd h = reduced->evaluate(cd(0, 2 * kPi * 10.0))(0, 0);
    EXPECT_NEAR(std::abs(h), 2e5 / std::sqrt(2.0), 1e-6);
    EXPECT_NEAR(std::arg(h), -kPi / 4, 1e-12);
    EXPECT_NEAR(reduced->evaluate(0.0)(0, 0).real(), 2e5, 1e-6);
}

namespace {

/// gain * prod(1 + s/wz) / prod(1 + s/wp) evaluated factor by factor in long double.
std::complex<long double> productOfFactors(double gain, const std::vector<double> &polesHz,
                                           const std::vector<double> &zerosHz, double f)
{
    using cld = std::complex<long double>;
    const cld s(0.0L, 2.0L * std::numbers::pi_v<long double> * f);
    cld h = gain;
    for (double z : zerosHz)
        h *= 1.0L + s / (2.0L * std::numbers::pi_v<long double> * z);
    for (double p : polesHz)
        h /= 1.0L + s / (2.0L * std::numbers::pi_v<long double> * p);
    return h;
}

} // namespace

// A gain block whose zeros lie far below its poles (products of pole-zero ratios up to
// 1e17), driven by a source at in_p: v(e) / v_s must be gain(s) at every frequency from
// mHz to 100 GHz, and so must the return output H(s) vd of the same block test-driven.
// Reference: the transfer function's factored (Bode) form,
// gain * prod(1 + s/wz) / prod(1 + s/wp), evaluated factor by factor in long double
// (Ogata, Modern Control Engineering, 5th ed., section 7-2, from memory). The last case
// has as many zeros as poles, with the input node bare and with a capacitor on it (the two
// ways the last zero is stamped). Tolerance 1e-10 relative: the factors are exact, so only
// rounding of the solve remains. (The former stamping, y = (wp/wz) u + (1 - wp/wz) w per
// section, missed by 8.3e-8 at DC in the first case.)
TEST(Circuit, GainBlockWithZerosFarBelowPolesMatchesTheProductOfItsFactors)
{
    struct Case
    {
        double gain;
        std::vector<double> polesHz, zerosHz;
        bool capacitorOnInput = false;
    };
    const Case cases[] = {
        {13.0, {4e8, 1.5e10}, {0.027, 1691.0}},
        {1.04e7,
         {8207.2, 77808.5, 4651.0, 1.484, 2.451e6, 3.977e8, 7.281e6, 3.135e9},
         {0.07202, 0.1144, 27953.7}},
        {-250.0, {1e6, 1e9}, {0.01, 3.0}},
        {-250.0, {1e6, 1e9}, {0.01, 3.0}, true},
    };
    for (const Case &c : cases) {
        for (const auto mode :
             {ControlledSourceElement::Mode::Normal, ControlledSourceElement::Mode::TestDriven}) {
            Netlist n;
            const int in = n.addInput();
            n.addVoltageSource("V1", "p", "0", in);
            ControlledSourceElement cs;
            cs.part = "U1";
            cs.inP = "p";
            cs.inN = "0";
            cs.out = "e";
            cs.gain = c.gain;
            cs.polesHz = c.polesHz;
            cs.zerosHz = c.zerosHz;
            cs.mode = mode;
            if (mode == ControlledSourceElement::Mode::TestDriven)
                cs.testInput = n.addInput();
            n.controlled.push_back(cs);
            n.addResistor("RL", "e", "0", 1e3);
            if (c.capacitorOnInput)
                n.addCapacitor("CP", "p", "0", 1e-12);
            n.addOutput(mode == ControlledSourceElement::Mode::Normal
                            ? NetlistOutput{NetlistOutput::Kind::VoltageBetween, "e", "0"}
                            : NetlistOutput{NetlistOutput::Kind::ControlledReturn, "U1", {}});
            const DescriptorSystem sys = assembleOrDie(n);
            const std::string label = std::to_string(c.polesHz.size()) + " poles, "
                + std::to_string(c.zerosHz.size()) + " zeros, gain " + std::to_string(c.gain)
                + (c.capacitorOnInput ? ", CP" : "")
                + (mode == ControlledSourceElement::Mode::Normal ? ", v(e)" : ", return");
            for (const SolverPath path : {SolverPath::Reduced, SolverPath::DenseLu}) {
                auto reduced = ReducedSystem::build(sys, path);
                ASSERT_TRUE(reduced.ok()) << label << ": " << reduced.errorText();
                EXPECT_LT(relErr(reduced->entry(0.0, 0, 0), c.gain), 1e-12) << label << " at DC";
                // The dense path refuses solves whose unscaled rcond is under 1e-30, which
                // these gains (up to 1e18) reach above a few GHz: it is checked to 1 GHz.
                const std::vector<double> f
                    = logGrid(1e-3, path == SolverPath::Reduced ? 1e11 : 1e9, 4);
                std::vector<cd> s;
                for (double x : f)
                    s.push_back({0.0, 2 * kPi * x});
                const TransferEntry entry[] = {{0, 0}};
                const auto h = reduced->sweepEntries(s, entry);
                for (std::size_t i = 0; i < f.size(); ++i) {
                    const auto ref = productOfFactors(c.gain, c.polesHz, c.zerosHz, f[i]);
                    EXPECT_LT(relErr(h[i],
                                     cd(static_cast<double>(ref.real()),
                                        static_cast<double>(ref.imag()))),
                              1e-10)
                        << label << (path == SolverPath::Reduced ? " reduced" : " dense") << " at "
                        << f[i] << " Hz";
                }
            }
        }
    }
}

// Inverting stage with finite gain a, input resistance r_in and output resistance r_out,
// loaded by RL. Closed form by Cramer's rule on the two nodal equations (KCL at the
// inverting input n and the output o, e = -a v_n behind r_out); textbook nodal analysis.
TEST(Circuit, InvertingStageMatchesNodalClosedForm)
{
    const double r1 = 10e3, r2 = 100e3, rin = 1e6, rout = 75.0, rl = 2e3, a = 1e4;
    Netlist n;
    const int in = n.addInput();
    n.addVoltageSource("VS", "s", "0", in);
    n.addResistor("R1", "s", "n", r1);
    n.addResistor("R2", "n", "o", r2);
    n.addResistor("RIN", "n", "0", rin);
    n.controlled.push_back(gainBlockElement("0", "n", "e", a));
    n.addResistor("ROUT", "e", "o", rout);
    n.addResistor("RL", "o", "0", rl);
    n.addOutput({NetlistOutput::Kind::VoltageBetween, "o", "0"});
    // [g11 g12; g21 g22] [vn; vo] = [1/R1; 0] vs
    const double g11 = 1 / r1 + 1 / r2 + 1 / rin, g12 = -1 / r2;
    const double g21 = -1 / r2 + a / rout, g22 = 1 / r2 + 1 / rout + 1 / rl;
    const double expected = (-g21 / r1) / (g11 * g22 - g12 * g21);
    auto dense = solveDense(assembleOrDie(n), {0.0});
    ASSERT_TRUE(dense.ok());
    EXPECT_NEAR((*dense)[0](0, 0).real() / expected, 1.0, 1e-12);
    // And the familiar limit: -R2/R1 / (1 + (1 + R2/R1)/a) when r_in -> inf, r_out -> 0
    // (Franco, Design with Operational Amplifiers, 3rd ed., ch. 1, from memory).
    EXPECT_NEAR(expected, -10.0 / (1 + 11.0 / a), 0.01);
}

// Source: reciprocity theorem for linear passive (RLC) networks, z12 = z21 (any network
// theory textbook; common practice).
TEST(Circuit, PassiveNetworkIsReciprocal)
{
    Netlist n;
    const int i1 = n.addInput();
    const int i2 = n.addInput();
    n.addCurrentSource("I1", "p1", "0", i1);
    n.addCurrentSource("I2", "p2", "0", i2);
    n.addResistor("Ra", "p1", "m", 1e3);
    n.addCapacitor("Ca", "m", "0", 10e-9);
    n.addInductor("La", "m", "p2", 1e-3);
    n.addResistor("Rb", "p2", "0", 4.7e3);
    n.addResistor("Rc", "p1", "p2", 22e3);
    n.addOutput({NetlistOutput::Kind::VoltageBetween, "p1", "0"});
    n.addOutput({NetlistOutput::Kind::VoltageBetween, "p2", "0"});
    auto h = solveDense(assembleOrDie(n), logGrid(10, 1e7, 5));
    ASSERT_TRUE(h.ok());
    for (const auto &z : *h)
        EXPECT_LT(relErr(z(0, 1), z(1, 0)), 1e-12);
}

// Source: superposition theorem for linear circuits (common practice): the response to two
// sources at once is the sum of the responses to each.
TEST(Circuit, SuperpositionHolds)
{
    Netlist n;
    const int va = n.addInput();
    const int ib = n.addInput();
    n.addVoltageSource("VA", "a", "0", va);
    n.addCurrentSource("IB", "b", "0", ib);
    n.addResistor("R1", "a", "b", 1e3);
    n.addResistor("R2", "b", "0", 2e3);
    n.addCapacitor("C1", "b", "0", 1e-9);
    n.addOutput({NetlistOutput::Kind::VoltageBetween, "b", "0"});
    auto sys = assembleOrDie(n);
    auto both = sys;
    both.B = sys.B.col(0) * 1.5 + sys.B.col(1) * 2e-3; // one input carrying both sources
    const auto f = logGrid(1e3, 1e7, 4);
    auto h = solveDense(sys, f);
    auto hb = solveDense(both, f);
    ASSERT_TRUE(h.ok() && hb.ok());
    for (std::size_t i = 0; i < f.size(); ++i)
        EXPECT_LT(relErr((*hb)[i](0, 0), 1.5 * (*h)[i](0, 0) + 2e-3 * (*h)[i](0, 1)), 1e-12);
}

TEST(Circuit, FloatingSubnetworkIsReportedWithItsNodes)
{
    Netlist n;
    const int in = n.addInput();
    n.addVoltageSource("V1", "a", "0", in);
    n.addResistor("R1", "a", "0", 1e3);
    n.addResistor("R2", "x", "y", 1e3); // touches nothing else
    n.addOutput({NetlistOutput::Kind::VoltageBetween, "a", "0"});
    auto sys = assembleOrDie(n);
    auto dense = solveDense(sys, {1e3});
    ASSERT_FALSE(dense.ok());
    EXPECT_THAT(dense.errorText(), HasSubstr("node x"));
    EXPECT_THAT(dense.errorText(), HasSubstr("node y"));
    EXPECT_THAT(dense.errorText(), HasSubstr("floating"));
    auto reduced = ReducedSystem::build(sys);
    ASSERT_FALSE(reduced.ok());
    EXPECT_THAT(reduced.errorText(), HasSubstr("node x"));
}

TEST(Circuit, LoopOfVoltageSourcesIsReported)
{
    Netlist n;
    const int in = n.addInput();
    n.addVoltageSource("V1", "a", "0", in);
    n.addVoltageSource("V2", "a", "0", -1);
    n.addResistor("R1", "a", "0", 1e3);
    n.addOutput({NetlistOutput::Kind::VoltageBetween, "a", "0"});
    auto dense = solveDense(assembleOrDie(n), {1e3});
    ASSERT_FALSE(dense.ok());
    EXPECT_THAT(dense.errorText(), HasSubstr("i(V1)"));
    EXPECT_THAT(dense.errorText(), HasSubstr("i(V2)"));
}

TEST(Circuit, InductorLoopIsSingularOnlyAtDc)
{
    Netlist n;
    const int in = n.addInput();
    n.addCurrentSource("I1", "a", "0", in);
    n.addResistor("R1", "a", "0", 1e3);
    n.addInductor("L1", "a", "0", 1e-3);
    n.addInductor("L2", "a", "0", 2e-3);
    n.addOutput({NetlistOutput::Kind::VoltageBetween, "a", "0"});
    auto sys = assembleOrDie(n);
    auto dc = solveDense(sys, {0.0});
    ASSERT_FALSE(dc.ok());
    EXPECT_THAT(dc.errorText(), HasSubstr("at DC"));
    EXPECT_THAT(dc.errorText(), HasSubstr("i(L1)"));
    EXPECT_TRUE(solveDense(sys, {1e3}).ok());
    auto reduced = ReducedSystem::build(sys);
    ASSERT_TRUE(reduced.ok()) << reduced.errorText();
    EXPECT_FALSE(reduced->dcRegular());
    EXPECT_FALSE(reduced->evaluate(0.0).allFinite());
    EXPECT_TRUE(reduced->evaluate(cd(0, 2 * kPi * 1e3)).allFinite());
}

TEST(Circuit, NonFiniteValueIsRejectedWithTheElementNamed)
{
    Netlist n;
    n.addResistor("R7", "a", "0", std::numeric_limits<double>::infinity());
    auto s = assembleSystem(n);
    ASSERT_FALSE(s.ok());
    EXPECT_THAT(s.errorText(), HasSubstr("R7"));
}

namespace {

/// Values spread evenly in log between two ends, from a fixed seed.
class LogUniform
{
public:
    explicit LogUniform(unsigned seed) : m_rng(seed) { }
    double operator()(double lo, double hi) { return lo * std::pow(hi / lo, m_unit(m_rng)); }

private:
    std::mt19937 m_rng;
    std::uniform_real_distribution<double> m_unit{0.0, 1.0};
};

/// A non-inverting stage with random values: a two-pole gain block (and, with
/// `zeroAndLoad`, a zero and a resistive load) behind a source resistor, R2 || C2 feedback
/// to R1, r_in || c_in between the inputs and a capacitive load. Nodes "p", "m", "o".
Netlist randomNonInvertingLoop(LogUniform &pick, bool zeroAndLoad)
{
    Netlist n;
    const int in = n.addInput();
    n.addVoltageSource("VS", "s0", "0", in);
    n.addResistor("RS", "s0", "p", pick(10, 10e3));
    ControlledSourceElement cs = gainBlockElement("p", "m", "e", pick(1e3, 1e6));
    cs.polesHz = {pick(1, 100), pick(1e6, 1e8)};
    if (zeroAndLoad)
        cs.zerosHz = {pick(1e7, 1e9)};
    n.controlled.push_back(cs);
    n.addResistor("RO", "e", "o", pick(1, 200));
    n.addResistor("RIN", "p", "m", pick(1e5, 1e9));
    n.addCapacitor("CIN", "p", "m", pick(1e-12, 10e-12));
    n.addResistor("R2", "o", "m", pick(1e3, 1e6));
    n.addCapacitor("C2", "o", "m", pick(1e-13, 1e-11));
    n.addResistor("R1", "m", "0", pick(100, 1e5));
    if (zeroAndLoad)
        n.addResistor("RL", "o", "0", pick(100, 1e5));
    n.addCapacitor("CL", "o", "0", pick(1e-12, 1e-9));
    return n;
}

} // namespace

// The reduced fast path must agree with the dense LU to 1e-9 relative over a wide sweep,
// on randomised RC ladders around a two-pole gain block with feedback.
TEST(ReducedSystem, AgreesWithDenseLuOnRandomLoops)
{
    LogUniform pick(20261201);
    const auto f = logGrid(1.0, 1e9, 50);
    for (int trial = 0; trial < 20; ++trial) {
        Netlist n = randomNonInvertingLoop(pick, true);
        n.addOutput({NetlistOutput::Kind::VoltageBetween, "o", "0"});
        n.addOutput({NetlistOutput::Kind::VoltageBetween, "p", "m"});
        const auto sys = assembleOrDie(n);
        auto dense = solveDense(sys, f);
        auto reduced = ReducedSystem::build(sys);
        ASSERT_TRUE(dense.ok()) << dense.errorText();
        ASSERT_TRUE(reduced.ok()) << reduced.errorText();
        EXPECT_LT(reduced->order(), sys.size());
        const auto fast = reduced->sweep(f);
        for (std::size_t i = 0; i < f.size(); ++i)
            for (int o = 0; o < 2; ++o)
                ASSERT_LT(relErr(fast[i](o, 0), (*dense)[i](o, 0)), 1e-9)
                    << "trial " << trial << " f " << f[i] << " output " << o;
    }
}

// The whole-grid sweep (many frequencies per call, side by side in vector registers) must
// agree with the dense LU to 1e-9 relative at every vector width the processor runs, and
// the widths with each other to rounding (the same operations per frequency). Two inputs
// and one output row make it solve the transposed system; the second output row, the
// direct one. Check against the dense LU: the straightforward reference (common practice).
TEST(ReducedSystem, SweepAgreesWithDenseLuAtEveryWidth)
{
    LogUniform pick(20261202);
    const auto f = logGrid(1.0, 1e9, 37); // 334 points: a short last group at every width
    std::vector<cd> s;
    for (double hz : f)
        s.push_back({0.0, 2.0 * kPi * hz});
    for (int trial = 0; trial < 10; ++trial) {
        Netlist n = randomNonInvertingLoop(pick, false);
        n.addCurrentSource("IM", "m", "0", n.addInput());
        n.addOutput({NetlistOutput::Kind::VoltageBetween, "o", "0"});
        n.addOutput({NetlistOutput::Kind::VoltageBetween, "p", "m"});
        const auto sys = assembleOrDie(n);
        auto dense = solveDense(sys, f);
        auto reduced = ReducedSystem::build(sys);
        ASSERT_TRUE(dense.ok()) << dense.errorText();
        ASSERT_TRUE(reduced.ok()) << reduced.errorText();
        const TransferEntry transposed[] = {{0, 0}, {0, 1}};
        const TransferEntry direct[] = {{1, 0}};
        const auto two = reduced->sweepEntries(s, transposed, SweepWidth::Two);
        for (SweepWidth width :
             {SweepWidth::Two, SweepWidth::Four, SweepWidth::Eight, SweepWidth::Automatic}) {
            if (!detail::sweepWidthAvailable(width))
                continue;
            const auto t = reduced->sweepEntries(s, transposed, width);
            const auto d = reduced->sweepEntries(s, direct, width);
            for (std::size_t i = 0; i < f.size(); ++i) {
                for (int e = 0; e < 2; ++e) {
                    const cd got = t[static_cast<std::size_t>(e) * f.size() + i];
                    ASSERT_LT(relErr(got, (*dense)[i](0, e)), 1e-9)
                        << "trial " << trial << " width " << static_cast<int>(width) << " f "
                        << f[i] << " input " << e;
                    EXPECT_LT(relErr(got, two[static_cast<std::size_t>(e) * f.size() + i]), 1e-15);
                }
                ASSERT_LT(relErr(d[i], (*dense)[i](1, 0)), 1e-9)
                    << "trial " << trial << " width " << static_cast<int>(width) << " f " << f[i];
            }
        }
    }
}

// A point where the pencil is singular (s = 0 with a node held only by capacitors) comes
// out NaN, its neighbours in the same vector group exact: the careful per-point solve
// takes over only there. Source: capacitive divider, H = C1 / (C1 + C2) at any s != 0
// (any circuits textbook; common practice).
TEST(ReducedSystem, SweepMarksOnlyTheSingularPoint)
{
    Netlist n;
    const int in = n.addInput();
    n.addVoltageSource("V1", "in", "0", in);
    n.addCapacitor("C1", "in", "mid", 1e-9);
    n.addCapacitor("C2", "mid", "0", 3e-9);
    n.addOutput({NetlistOutput::Kind::VoltageBetween, "mid", "0"});
    auto reduced = ReducedSystem::build(assembleOrDie(n));
    ASSERT_TRUE(reduced.ok()) << reduced.errorText();
    std::vector<cd> s = {0.0};
    for (int i = 1; i < 11; ++i)
        s.push_back({0.0, 2.0 * kPi * std::pow(10.0, i)});
    const TransferEntry e[] = {{0, 0}};
    for (SweepWidth width : {SweepWidth::Two, SweepWidth::Four, SweepWidth::Eight}) {
        if (!detail::sweepWidthAvailable(width))
            continue;
        const auto h = reduced->sweepEntries(s, e, width);
        EXPECT_TRUE(std::isnan(h[0].real()) && std::isnan(h[0].imag()));
        for (std::size_t i = 1; i < s.size(); ++i)
            EXPECT_LT(relErr(h[i], 0.25), 1e-12) << "point " << i;
    }
}

// Natural frequencies from the reduced pencil equal the finite generalized eigenvalues of
// the full (G, C) pencil (Eigen's QZ on the unreduced matrices as second opinion).
TEST(ReducedSystem, NaturalFrequenciesMatchFullPencil)
{
    Netlist n;
    const int in = n.addInput();
    n.addVoltageSource("VS", "s", "0", in);
    n.addResistor("R1", "s", "a", 1e3);
    n.addCapacitor("C1", "a", "0", 1e-9);
    n.addInductor("L1", "a", "b", 1e-3);
    n.addCapacitor("C2", "b", "0", 2e-9);
    n.addResistor("R2", "b", "0", 500);
    n.addOutput({NetlistOutput::Kind::VoltageBetween, "b", "0"});
    const auto sys = assembleOrDie(n);
    auto reduced = ReducedSystem::build(sys);
    ASSERT_TRUE(reduced.ok());
    auto poles = reduced->naturalFrequencies();
    Eigen::GeneralizedEigenSolver<Eigen::MatrixXd> ges(sys.G, sys.C, false);
    std::vector<cd> full;
    for (Eigen::Index i = 0; i < ges.alphas().size(); ++i)
        if (std::abs(ges.betas()(i)) > 1e-12 * std::abs(ges.alphas()(i)))
            full.push_back(-ges.alphas()(i) / ges.betas()(i));
    ASSERT_EQ(poles.size(), 3u);
    ASSERT_EQ(full.size(), 3u);
    for (const cd p : poles) {
        double best = 1e300;
        for (const cd q : full)
            best = std::min(best, relErr(p, q));
        EXPECT_LT(best, 1e-8) << p;
        EXPECT_LT(p.real(), 0.0); // passive RLC: stable
    }
}

// Kirchhoff's current law (common practice): a subnetwork that meets the rest only through
// a current source and a controlled source's input has no path to ground, whatever its
// values; a capacitor, an inductor and a voltage source are paths, a zero capacitance and
// a controlled source's input are not.
TEST(Circuit, NodesWithoutGroundAreFoundFromTheConnections)
{
    Netlist n;
    const int in = n.addInput();
    n.addCurrentSource("I1", "a", "0", in);
    n.addCapacitor("C1", "a", "b", 1e-9);
    n.addResistor("R1", "b", "p", 1e3);
    n.addCapacitor("C0", "p", "0", 0.0);
    ControlledSourceElement e;
    e.inP = "p";
    e.inN = "q";
    e.out = "o";
    n.controlled.push_back(e);
    n.addInductor("L1", "q", "0", 1e-3);
    n.addResistor("RO", "o", "r", 1e3);
    EXPECT_EQ(nodesWithoutGround(n), (std::vector<std::string>{"a", "b", "p"}));
    n.addVoltageSource("V1", "p", "0", -1);
    EXPECT_TRUE(nodesWithoutGround(n).empty());
}

// Definition (a matrix with a zero column has determinant 0): diag(1, 0) is singular. Eigen's
// condition estimate reads it as perfectly conditioned (rcond 1), so a test on the estimate
// alone let the step model eliminate through a zero pivot and fill the response with NaN.
TEST(Circuit, ExactlyZeroPivotIsSingular)
{
    Eigen::MatrixXd real = Eigen::MatrixXd::Zero(2, 2);
    real(0, 0) = -3.6e8;
    EXPECT_TRUE(isSingular(real));
    EXPECT_TRUE(isSingular(Eigen::MatrixXcd(real.cast<std::complex<double>>())));
    real(1, 1) = 1e-3;
    EXPECT_FALSE(isSingular(real));
}
