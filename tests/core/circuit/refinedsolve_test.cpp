// The careful solve of the whole nodal matrix (core/src/circuit/refinedsolve.h): what it
// counts as singular, and its answer against closed forms.

#include "loopsketch/circuit/circuit.h"

#include "circuit/refinedsolve.h"
#include "gainblockelement.h"

#include <gtest/gtest.h>

#include <cmath>
#include <complex>
#include <limits>
#include <numbers>
#include <string>
#include <utility>
#include <vector>

using namespace loopsketch;
using namespace loopsketch::test;

namespace {

/// An inverting amplifier: V1 drives R1 into the summing node n, RF from n to the output,
/// an ideal gain block e = -gain v(n) at the output. Output v(out).
Netlist invertingAmplifier(double r1, double rf, double gain, std::vector<double> polesHz = {},
                           std::vector<double> zerosHz = {})
{
    Netlist n;
    n.addVoltageSource("V1", "in", "0", n.addInput());
    n.addResistor("R1", "in", "n", r1);
    n.addResistor("RF", "n", "out", rf);
    n.controlled.push_back(
        gainBlockElement("0", "n", "out", gain, std::move(polesHz), std::move(zerosHz)));
    n.addOutput({NetlistOutput::Kind::VoltageBetween, "out", "0"});
    return n;
}

/// Its closed-loop gain with open-loop gain `a`, -(RF/R1) / (1 + (1 + RF/R1) / a) (the
/// standard op-amp relation; any analog-design textbook, from memory).
std::complex<double> invertingGain(double r1, double rf, std::complex<double> a)
{
    return -(rf / r1) / (1.0 + (1.0 + rf / r1) / a);
}

} // namespace

// Source: the inverting amplifier's closed-loop gain with a finite open-loop gain A,
// -(RF/R1) / (1 + (1 + RF/R1) / A) (the standard op-amp relation; any analog-design textbook,
// from memory). Gains up to 1e120 beside a milliohm: the careful solve answers to the closed
// form and its own error bound.
TEST(RefinedSolve, ExtremeGainIsRegularAndSolvedToTheClosedForm)
{
    const double r1 = 1e-3, rf = 1e4; // a milliohm input beside ten kilohms
    for (double gain : {1e6, 1e20, 1e37, 1e60, 1e120}) {
        auto system = assembleSystem(invertingAmplifier(r1, rf, gain));
        ASSERT_TRUE(system.ok()) << system.errorText();
        detail::RefinedSolver solver(*system);
        for (double hz : {0.0, 1e3, 3e9}) {
            const std::complex<double> s(0.0, 2 * std::numbers::pi * hz);
            ASSERT_TRUE(solver.factor(s)) << "gain " << gain << ", " << hz << " Hz";
            Eigen::VectorXcd r;
            const Eigen::VectorXcd x = solver.solve(0, &r);
            const std::complex<double> got = solver.output(0, x);
            const std::complex<double> want = invertingGain(r1, rf, gain);
            EXPECT_NEAR(std::abs(got - want) / std::abs(want), 0.0, 1e-12)
                << "gain " << gain << ", " << hz << " Hz";
            EXPECT_LE(solver.errorBound(0, 0, x, r), 1e-12 * std::abs(want))
                << "gain " << gain << ", " << hz << " Hz";
        }
    }
}

// Source: a node connected to nothing but a capacitor has no DC solution (KCL at that node
// reads 0 = 0 at s = 0; common practice). Exact singularity is still refused.
TEST(RefinedSolve, NodeWithOnlyACapacitorIsSingularAtDc)
{
    Netlist n;
    n.addVoltageSource("V1", "in", "0", n.addInput());
    n.addCapacitor("C1", "in", "float", 1e-9);
    n.addOutput({NetlistOutput::Kind::VoltageBetween, "float", "0"});
    auto system = assembleSystem(n);
    ASSERT_TRUE(system.ok()) << system.errorText();
    detail::RefinedSolver solver(*system);
    EXPECT_FALSE(solver.factor(0.0));
    EXPECT_TRUE(solver.factor({0.0, 2 * std::numbers::pi * 1e3}));
}

// The same relation with A(jw) = gain prod(1 + jf/z) / prod(1 + jf/p): six zeros far below
// six poles (as fuzz seed 9426's gain block) make |A| reach 1e37 and more at gigahertz; the
// answer is within the solve's own error bound at every frequency.
TEST(RefinedSolve, GainBlockRisingThroughZerosIsRegularAtEveryFrequency)
{
    const double r1 = 1.8e-3, rf = 1e4;
    const std::vector<double> zeros{0.023, 0.5, 40.0, 3e3, 2e5, 1e7};
    const std::vector<double> poles{1e8, 3e8, 1e9, 3e9, 1e10, 3e10};
    auto system = assembleSystem(invertingAmplifier(r1, rf, 1e3, poles, zeros));
    ASSERT_TRUE(system.ok()) << system.errorText();
    detail::RefinedSolver solver(*system);
    for (double hz = 1.0; hz < 1e11; hz *= 3.7) {
        std::complex<double> a = 1e3;
        for (double z : zeros)
            a *= 1.0 + std::complex<double>(0.0, hz / z);
        for (double p : poles)
            a /= 1.0 + std::complex<double>(0.0, hz / p);
        const std::complex<double> s(0.0, 2 * std::numbers::pi * hz);
        ASSERT_TRUE(solver.factor(s)) << hz << " Hz, |A| " << std::abs(a);
        Eigen::VectorXcd r;
        const Eigen::VectorXcd x = solver.solve(0, &r);
        const std::complex<double> got = solver.output(0, x);
        const std::complex<double> want = invertingGain(r1, rf, a);
        const double bound = solver.errorBound(0, 0, x, r);
        EXPECT_LE(std::abs(got - want), std::max(4.0 * bound, 1e-12 * std::abs(want)))
            << hz << " Hz, |A| " << std::abs(a) << ", bound " << bound / std::abs(want);
    }
}
