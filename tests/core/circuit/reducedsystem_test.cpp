// The reduced sweep kernel at every order and vector width, against the dense LU of the
// whole nodal matrix (the straightforward reference; common practice).

#include "loopsketch/circuit/circuit.h"
#include "loopsketch/circuit/loopcircuit.h"
#include "loopsketch/circuit/reducedsystem.h"
#include "loopsketch/design/designfile.h"

#include "carefulreference.h"
#include "circuit/pencilsweep.h"
#include "circuit/refinedsolve.h"
#include "gainblockelement.h"
#include "numeric.h"

#include <gtest/gtest.h>

#include <cmath>
#include <numbers>
#include <random>
#include <string>
#include <utility>
#include <vector>

using namespace loopsketch;
using namespace loopsketch::test;

namespace {

/// An RC ladder of `sections` nodes, each with a capacitor to ground (so the reduced order
/// is `sections`), with random values and a few resistors skipping a node; a voltage
/// source drives the first node, a current source the middle one.
Netlist ladder(int sections, std::mt19937 &rng)
{
    std::uniform_real_distribution<double> unit(0.0, 1.0);
    const auto pick = [&](double lo, double hi) {
        return lo * std::pow(hi / lo, unit(rng));
    };
    const auto node = [](int i) {
        return "n" + std::to_string(i);
    };
    Netlist n;
    n.addVoltageSource("V1", "s", "0", n.addInput());
    n.addResistor("R0", "s", node(1), pick(10, 1e3));
    for (int i = 1; i <= sections; ++i) {
        n.addCapacitor("C" + std::to_string(i), node(i), "0", pick(1e-12, 1e-9));
        n.addResistor("RG" + std::to_string(i), node(i), "0", pick(1e4, 1e7));
        if (i < sections)
            n.addResistor("R" + std::to_string(i), node(i), node(i + 1), pick(100, 1e4));
        if (i + 2 <= sections && unit(rng) < 0.3)
            n.addResistor("RK" + std::to_string(i), node(i), node(i + 2), pick(1e3, 1e5));
    }
    n.addCurrentSource("I1", node((sections + 1) / 2), "0", n.addInput());
    n.addOutput({NetlistOutput::Kind::VoltageBetween, node(sections), "0"});
    n.addOutput({NetlistOutput::Kind::VoltageBetween, node((sections + 1) / 2), "0"});
    return n;
}

/// A system of two unknowns named `names`: G x + C dx/dt = b u, y = l^T x.
DescriptorSystem twoUnknowns(const Eigen::Matrix2d &g, const Eigen::Matrix2d &c,
                             const Eigen::Vector2d &b, const Eigen::Vector2d &l,
                             std::vector<std::string> names)
{
    DescriptorSystem sys;
    sys.G = g;
    sys.C = c;
    sys.B = b;
    sys.L = l.transpose();
    sys.unknowns = std::move(names);
    return sys;
}

/// An inverting stage around a gain block with `poles` poles and `zeros` zeros, feedback
/// R || C, a source resistor and an RC load: order poles + 2 (input and output nodes).
Netlist gainBlockLoop(int poles, int zeros, std::mt19937 &rng)
{
    std::uniform_real_distribution<double> unit(0.0, 1.0);
    const auto pick = [&](double lo, double hi) {
        return lo * std::pow(hi / lo, unit(rng));
    };
    Netlist n;
    n.addVoltageSource("V1", "s", "0", n.addInput());
    n.addResistor("RS", "s", "m", pick(1e3, 1e4));
    ControlledSourceElement cs = gainBlockElement("0", "m", "e", pick(1e3, 1e6));
    cs.polesHz.push_back(pick(1, 100));
    for (int p = 1; p < poles; ++p)
        cs.polesHz.push_back(pick(1e6, 1e9));
    for (int z = 0; z < zeros; ++z)
        cs.zerosHz.push_back(pick(1e6, 1e9));
    n.controlled.push_back(cs);
    n.addResistor("RO", "e", "o", pick(10, 100));
    n.addResistor("RF", "m", "o", pick(1e4, 1e5));
    n.addCapacitor("CF", "m", "o", pick(1e-12, 1e-11));
    n.addCapacitor("CM", "m", "0", pick(1e-12, 1e-11));
    n.addResistor("RL", "o", "0", pick(1e3, 1e4));
    n.addCapacitor("CL", "o", "0", pick(1e-11, 1e-10));
    n.addCurrentSource("I1", "m", "0", n.addInput());
    // Not the virtual ground "m": its voltage is the output over the loop gain, a
    // difference whose relative rounding error grows with the gain in any solver.
    n.addOutput({NetlistOutput::Kind::VoltageBetween, "o", "0"});
    n.addOutput({NetlistOutput::Kind::VoltageBetween, "e", "0"});
    return n;
}

/// Every entry at every width the processor runs, against the dense LU, to `tolerance`
/// relative. Two outputs and two inputs, asked for as one row (transposed solve) and as
/// one column (direct solve).
void expectEveryWidthMatchesDenseLu(const Netlist &netlist, int expectedOrder,
                                    const std::string &label)
{
    auto system = assembleSystem(netlist);
    ASSERT_TRUE(system.ok()) << system.errorText();
    auto reduced = ReducedSystem::build(*system);
    auto dense = ReducedSystem::build(*system, SolverPath::DenseLu);
    ASSERT_TRUE(reduced.ok()) << label << ": " << reduced.errorText();
    ASSERT_TRUE(dense.ok()) << label << ": " << dense.errorText();
    ASSERT_EQ(reduced->order(), expectedOrder) << label;
    const std::vector<cd> s = logPoints(1.0, 1e9, 53); // a short last group at every width
    const TransferEntry entries[] = {{0, 0}, {0, 1}, {1, 0}};
    const auto reference = dense->sweepEntries(s, entries);
    int widthsRun = 0;
    for (SweepWidth width : {SweepWidth::Two, SweepWidth::Four, SweepWidth::Eight}) {
        if (!detail::sweepWidthAvailable(width))
            continue;
        ++widthsRun;
        const TransferEntry row[] = {{0, 0}, {0, 1}};
        const TransferEntry column[] = {{1, 0}};
        const auto r = reduced->sweepEntries(s, row, width);
        const auto c = reduced->sweepEntries(s, column, width);
        for (std::size_t i = 0; i < s.size(); ++i) {
            for (std::size_t e = 0; e < 2; ++e)
                ASSERT_LT(relErr(r[e * s.size() + i], reference[e * s.size() + i]), 1e-9)
                    << label << " width " << static_cast<int>(width) << " point " << i << " entry "
                    << e;
            ASSERT_LT(relErr(c[i], reference[2 * s.size() + i]), 1e-9)
                << label << " width " << static_cast<int>(width) << " point " << i;
        }
    }
    EXPECT_GE(widthsRun, 1);
}

} // namespace

// Orders 1 to 40: the unrolled orders (1..8) and the general one (9 and up, whose scratch
// once lacked the alignment of the wide vectors and crashed at AVX2 and AVX-512 widths).
TEST(ReducedSweep, EveryOrderUpToFortyMatchesDenseLuAtEveryWidth)
{
    std::mt19937 rng(20261202);
    for (int order = 1; order <= 40; ++order)
        expectEveryWidthMatchesDenseLu(ladder(order, rng), order,
                                       "ladder of order " + std::to_string(order));
}

// Gain blocks with 1 to 12 poles and as many zeros as poles or fewer.
TEST(ReducedSweep, GainBlocksWithUpToTwelvePolesAndZerosMatchDenseLu)
{
    std::mt19937 rng(20261203);
    for (int poles = 1; poles <= 12; ++poles)
        for (int zeros : {0, poles / 2, poles})
            expectEveryWidthMatchesDenseLu(gainBlockLoop(poles, zeros, rng), poles + 2,
                                           std::to_string(poles) + " poles, "
                                               + std::to_string(zeros) + " zeros");
}

// Rows in different units: the first row of the pencil is a million million times larger
// than the second only because of its units. Plain partial pivoting takes its entry 10 as
// the pivot (larger than the 1 below it) and leaves x to a difference of two nearly equal
// numbers (about 1e-5 of x lost); pivoting on each row's entry relative to that row's
// largest takes the second row and keeps x to rounding. Reference: Cramer's rule on
//   s (10 x + 1e12 y) = 1e12,  s (x + y) = 2   =>   x = 1e12 / (s (1e12 - 10)).
TEST(ReducedSweep, RowsInDifferentUnitsKeepFullAccuracyAtEveryWidth)
{
    DescriptorSystem sys;
    sys.G = Eigen::MatrixXd::Zero(2, 2);
    sys.C.resize(2, 2);
    sys.C << 10.0, 1e12, 1.0, 1.0;
    sys.B.resize(2, 1);
    sys.B << 1e12, 2.0;
    sys.L.resize(1, 2);
    sys.L << 1.0, 0.0;
    sys.unknowns = {"x", "y"};
    auto reduced = ReducedSystem::build(sys);
    ASSERT_TRUE(reduced.ok()) << reduced.errorText();
    ASSERT_EQ(reduced->order(), 2);
    const std::vector<cd> s = logPoints(1e-3, 1e3, 13);
    const TransferEntry entry[] = {{0, 0}};
    for (SweepWidth width :
         {SweepWidth::Automatic, SweepWidth::Two, SweepWidth::Four, SweepWidth::Eight}) {
        if (!detail::sweepWidthAvailable(width))
            continue;
        const std::vector<cd> x = reduced->sweepEntries(s, entry, width);
        for (std::size_t i = 0; i < s.size(); ++i) {
            const cd want = 1e12 / (s[i] * (1e12 - 10.0)); // Cramer's rule
            EXPECT_LT(relErr(x[i], want), 1e-13)
                << "width " << static_cast<int>(width) << ", point " << i;
        }
    }
    // The one-point path (root finding) and the careful fallback take the same pivots.
    EXPECT_LT(relErr(reduced->entry(s[6], 0, 0), 1e12 / (s[6] * (1e12 - 10.0))), 1e-13);
}

// Partial pivoting is backward stable normwise only. The fuzzer's seed 2928 (a 22-state
// pencil: 11 gain-block poles from 0.036 Hz to 44 GHz, current output) has a gain of about
// 1e-20 A/A near 1 kHz, a tiny component of a solution whose other components are large;
// there the elimination left a componentwise backward error of up to 1e-5 and the gain off by
// 1e-6..1e-5 of its value, between the accuracy check's probes (DC, start, middle and top of
// the sweep), so no warning said so. Reference: the full nodal system (29 unknowns, not the
// reduced pencil) solved with equilibration and iterative refinement with extended-precision
// residuals (core/src/circuit/refinedsolve.h), whose own first-order error bound is under
// 1e-12 of the value here. Every width, and the one-point path, to 1e-10.
TEST(ReducedSweep, TinyOutputOfALargeSolutionIsRefinedToFullAccuracy)
{
    auto design = loadDesign(std::string(LOOPSKETCH_TEST_DATA_DIR)
                             + "/fuzz-found/asymptotic-gain-off-5e-6-between-probes.loopsketch");
    ASSERT_TRUE(design.ok()) << design.errorText();
    auto assembled = assembleSystem(buildLoopNetlist(*design));
    ASSERT_TRUE(assembled.ok()) << assembled.errorText();
    const DescriptorSystem full = *assembled;
    auto reduced = ReducedSystem::build(full);
    ASSERT_TRUE(reduced.ok()) << reduced.errorText();
    ASSERT_GT(reduced->order(), 8); // the general order, not an unrolled one
    const std::vector<cd> s = logPoints(500.0, 2000.0, 41);
    std::vector<cd> want(s.size());
    const auto reference = carefulEntry(full, s, {loopio::kOutput, loopio::kSource});
    for (std::size_t i = 0; i < s.size(); ++i) {
        want[i] = reference[i].value;
        ASSERT_LT(reference[i].relativeBound, 1e-12) << "the reference itself at point " << i;
    }
    const TransferEntry entry[] = {{loopio::kOutput, loopio::kSource}};
    for (SweepWidth width :
         {SweepWidth::Automatic, SweepWidth::Two, SweepWidth::Four, SweepWidth::Eight}) {
        if (!detail::sweepWidthAvailable(width))
            continue;
        const std::vector<cd> got = reduced->sweepEntries(s, entry, width);
        for (std::size_t i = 0; i < s.size(); ++i)
            EXPECT_LT(relErr(got[i], want[i]), 1e-10) << "width " << static_cast<int>(width) << ", "
                                                      << std::abs(s[i]) / (2 * kPi) << " Hz";
    }
    for (std::size_t i = 0; i < s.size(); i += 10)
        EXPECT_LT(relErr(reduced->entry(s[i], loopio::kOutput, loopio::kSource), want[i]), 1e-10)
            << "one point, " << std::abs(s[i]) / (2 * kPi) << " Hz";
}

// A reduced pencil far worse conditioned than the circuit (fuzz seed 14: a -480 dB
// series-series gain through gigaohms beside ohms). Each solve's backward error is a few
// eps, yet the gain was off by up to 2.6e-7 at some points of 100-500 kHz and by 1e-11 at
// their neighbours, between the accuracy check's probes and with no warning. With
// checkEveryPoint() each point's adjoint error estimate sends such points to the full
// system. Reference: the careful solve of the full system (extended-precision residuals),
// whose own first-order bound is asked to be small first; and the 50-digit nodal model
// of tests/fuzz/scipy_cross_check.py's conventions, run by hand, agreed to 1.1e-10.
TEST(ReducedSweep, IllConditionedPencilBetweenProbesIsSolvedFromTheFullSystem)
{
    auto design
        = loadDesign(std::string(LOOPSKETCH_TEST_DATA_DIR)
                     + "/fuzz-found/reduced-pencil-ill-conditioned-between-probes.loopsketch");
    ASSERT_TRUE(design.ok()) << design.errorText();
    auto assembled = assembleSystem(buildLoopNetlist(*design));
    ASSERT_TRUE(assembled.ok()) << assembled.errorText();
    const DescriptorSystem full = *assembled;
    auto unchecked = ReducedSystem::build(full);
    ASSERT_TRUE(unchecked.ok()) << unchecked.errorText();
    ReducedSystem checked = *unchecked;
    checked.checkEveryPoint();
    const std::vector<cd> s = logPoints(1e5, 5e5, 29);
    std::vector<cd> want(s.size());
    const auto reference = carefulEntry(full, s, {loopio::kOutput, loopio::kSource});
    for (std::size_t i = 0; i < s.size(); ++i) {
        want[i] = reference[i].value;
        ASSERT_LT(reference[i].relativeBound, 1e-8) << "the reference itself at point " << i;
    }
    const TransferEntry entry[] = {{loopio::kOutput, loopio::kSource}};
    double worstUnchecked = 0;
    const std::vector<cd> fast = unchecked->sweepEntries(s, entry);
    for (std::size_t i = 0; i < s.size(); ++i)
        worstUnchecked = std::max(worstUnchecked, relErr(fast[i], want[i]));
    ASSERT_GT(worstUnchecked, 1e-8) << "the design no longer shows the ill-conditioned pencil";
    for (SweepWidth width :
         {SweepWidth::Automatic, SweepWidth::Two, SweepWidth::Four, SweepWidth::Eight}) {
        if (!detail::sweepWidthAvailable(width))
            continue;
        const std::vector<cd> got = checked.sweepEntries(s, entry, width);
        for (std::size_t i = 0; i < s.size(); ++i)
            EXPECT_LT(relErr(got[i], want[i]), 1e-9) << "width " << static_cast<int>(width) << ", "
                                                     << std::abs(s[i]) / (2 * kPi) << " Hz";
    }
    for (std::size_t i = 0; i < s.size(); ++i)
        EXPECT_LT(relErr(checked.entry(s[i], loopio::kOutput, loopio::kSource), want[i]), 1e-9)
            << "one point, " << std::abs(s[i]) / (2 * kPi) << " Hz";
}

// Neighbouring lanes that choose different pivot rows. Rows 0 and 1 of G + sC start
// [s, 1] and [1, 2]: the scaled pivot choice takes row 0 in column 0 where |s| > 0.5 and
// row 1 below, so points alternating across |s| = 0.5 make every group of lanes disagree
// and take the lane-wise swaps. A kernel whose lanes saw another lane's pivot rows (at -O0,
// a helper compiled for the baseline processor received the AVX lanes by another calling
// convention: fuzz seeds 7, 8 and 19 off by up to 5 % with no warning) fails here in the
// sanitizer build. Reference: Eigen's full-pivoting LU of the same matrix, point by point.
TEST(ReducedSweep, LanesWithDifferentPivotRowsMatchFullPivotingLu)
{
    for (int k : {3, 12}) { // an unrolled order and the general one
        Eigen::MatrixXd g = Eigen::MatrixXd::Zero(k, k), c = Eigen::MatrixXd::Zero(k, k);
        c(0, 0) = 1.0;
        g(0, 1) = 1.0;
        g(1, 0) = 1.0;
        g(1, 1) = 2.0;
        for (int i = 2; i < k; ++i) {
            g(i, i) = 1.0 + i;
            g(i, i - 1) = 0.5;
            g(i - 1, i) = 0.25;
            c(i, i) = 1e-3 * i;
        }
        Eigen::MatrixXd b = Eigen::MatrixXd::Zero(k, 2), l = Eigen::MatrixXd::Zero(2, k);
        const Eigen::MatrixXd d = Eigen::MatrixXd::Zero(2, 2);
        for (int i = 0; i < k; ++i) {
            b(i, 0) = 1.0 + 0.1 * i;
            b(i, 1) = i % 2 == 0 ? 1.0 : -0.5;
            l(0, i) = 1.0;
            l(1, i) = 0.5 * i - 1.0;
        }
        std::vector<cd> s;
        for (int i = 0; i < 37; ++i) // a short last group at every width
            s.push_back({0.0, (i % 2 == 0 ? 0.1 : 10.0) * (1.0 + 0.01 * i)});
        const detail::PencilView pencil{g, c, b, l, d};
        for (SweepWidth width : {SweepWidth::Two, SweepWidth::Four, SweepWidth::Eight}) {
            if (!detail::sweepWidthAvailable(width))
                continue;
            // Two outputs of one input (direct solves), one output of two inputs (transposed).
            const TransferEntry column[] = {{0, 0}, {1, 0}}, row[] = {{1, 0}, {1, 1}};
            for (const auto &entries :
                 {std::span<const TransferEntry>(column), std::span<const TransferEntry>(row)}) {
                std::vector<cd> got(entries.size() * s.size());
                detail::sweepPencil(pencil, s, entries, got.data(), width);
                for (std::size_t i = 0; i < s.size(); ++i) {
                    const Eigen::MatrixXcd a = g.cast<cd>() + s[i] * c.cast<cd>();
                    const Eigen::MatrixXcd z = a.fullPivLu().solve(b.cast<cd>());
                    const Eigen::MatrixXcd y = l.cast<cd>() * z;
                    for (std::size_t e = 0; e < entries.size(); ++e)
                        ASSERT_LT(
                            relErr(got[e * s.size() + i], y(entries[e].output, entries[e].input)),
                            1e-12)
                            << "order " << k << ", width " << static_cast<int>(width) << ", point "
                            << i << ", entry " << e;
                }
            }
        }
    }
}

// An exactly zero pivot: the lossless pair x' = y, y' = -x + u (G = [[0, -1], [1, 0]],
// C = I) has det(G + sC) = s^2 + 1, so at s = j the elimination's second pivot is
// j + 1/j = 0 exactly. There the entry does not exist (a natural frequency on the jw axis):
// NaN on every path and at every width, never a number made of the division by zero; one
// step away it is y = s / (s^2 + 1) (Cramer's rule, common practice) to 1e-13.
TEST(ReducedSweep, ExactlyZeroPivotGivesNoValueOnEveryPath)
{
    const DescriptorSystem sys = twoUnknowns((Eigen::Matrix2d() << 0.0, -1.0, 1.0, 0.0).finished(),
                                             Eigen::Matrix2d::Identity(), Eigen::Vector2d(0.0, 1.0),
                                             Eigen::Vector2d(0.0, 1.0), {"x", "y"});
    const std::vector<cd> s = {cd(0.0, 0.5), cd(0.0, 1.0), cd(0.0, 2.0)};
    const TransferEntry entry[] = {{0, 0}};
    for (SolverPath path : {SolverPath::Reduced, SolverPath::DenseLu}) {
        auto reduced = ReducedSystem::build(sys, path);
        ASSERT_TRUE(reduced.ok()) << reduced.errorText();
        for (SweepWidth width :
             {SweepWidth::Automatic, SweepWidth::Two, SweepWidth::Four, SweepWidth::Eight}) {
            if (!detail::sweepWidthAvailable(width))
                continue;
            const std::vector<cd> x = reduced->sweepEntries(s, entry, width);
            const std::string where = "path " + std::to_string(static_cast<int>(path)) + ", width "
                + std::to_string(static_cast<int>(width));
            EXPECT_TRUE(std::isnan(x[1].real()) && std::isnan(x[1].imag())) << where;
            for (std::size_t i : {0u, 2u})
                EXPECT_LT(relErr(x[i], s[i] / (s[i] * s[i] + 1.0)), 1e-13) << where;
        }
        const cd one = reduced->entry(s[1], 0, 0);
        EXPECT_TRUE(std::isnan(one.real()) && std::isnan(one.imag()));
        const Eigen::MatrixXcd h = reduced->evaluate(s[1]);
        EXPECT_TRUE(std::isnan(h(0, 0).real()));
    }
}

// A circuit whose equations are singular at every frequency (two unknowns held by one
// equation twice over) is refused with a diagnostic that names the user's part, not with
// numbers: the static block's rank leaves a pencil that is zero, and the refusal names the
// part whose entries touch what is not determined.
TEST(ReducedSweep, SingularAtEveryFrequencyIsRefusedNamingThePart)
{
    // one resistor between two nodes, nothing to ground
    DescriptorSystem sys = twoUnknowns((Eigen::Matrix2d() << 1.0, -1.0, -1.0, 1.0).finished(),
                                       Eigen::Matrix2d::Zero(), Eigen::Vector2d(1.0, 0.0),
                                       Eigen::Vector2d(1.0, 0.0), {"v(a)", "v(b)"});
    sys.origins = {{"RX", "value"}};
    for (int r = 0; r < 2; ++r)
        for (int c = 0; c < 2; ++c)
            sys.stamps.push_back({0, r, c, sys.G(r, c), false});
    auto reduced = ReducedSystem::build(sys);
    ASSERT_FALSE(reduced.ok());
    ASSERT_FALSE(reduced.diagnostics().empty());
    EXPECT_EQ(reduced.diagnostics().front().part, "RX");
    EXPECT_NE(reduced.diagnostics().front().message.find("no unique solution"), std::string::npos)
        << reduced.errorText();
}
