// The large-order sweep through the Hessenberg-triangular form
// (core/src/circuit/hessenbergpencil.h), against the dense LU of the whole nodal matrix (the
// straightforward reference; common practice) and, for badly scaled circuits, against the
// careful solve of the whole nodal matrix (equilibrated LU with iterative refinement in
// extended precision, core/src/circuit/refinedsolve.h), whose own error bound is checked first.

#include "loopsketch/circuit/circuit.h"
#include "loopsketch/circuit/loopcircuit.h"
#include "loopsketch/circuit/reducedsystem.h"
#include "loopsketch/design/designfile.h"

#include "carefulreference.h"
#include "circuit/hessenbergpencil.h"
#include "circuit/pencilsweep.h"
#include "circuit/refinedsolve.h"
#include "numeric.h"

#include <gtest/gtest.h>

#include <cmath>
#include <limits>
#include <random>
#include <span>
#include <string>
#include <vector>

using namespace loopsketch;
using namespace loopsketch::test;

namespace {

/// An RC network of `nodes` nodes, each with a capacitor to ground (so the reduced order is
/// `nodes`), a resistor to ground, a chain of series resistors and about `extra` resistors
/// between random pairs of nodes (which make the reduced pencil dense). Resistors are drawn
/// log-uniformly from [rLow, rHigh] ohm, capacitors from [cLow, cHigh] F. A voltage source
/// drives node 1 through a resistor, a current source the middle node; two voltage outputs.
Netlist network(int nodes, int extra, double rLow, double rHigh, double cLow, double cHigh,
                std::mt19937 &rng)
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
    n.addResistor("R0", "s", node(1), pick(rLow, rHigh));
    for (int i = 1; i <= nodes; ++i) {
        n.addCapacitor("C" + std::to_string(i), node(i), "0", pick(cLow, cHigh));
        n.addResistor("RG" + std::to_string(i), node(i), "0", pick(rLow, rHigh));
        if (i < nodes)
            n.addResistor("R" + std::to_string(i), node(i), node(i + 1), pick(rLow, rHigh));
    }
    std::uniform_int_distribution<int> anyNode(1, nodes);
    for (int e = 0; e < extra; ++e) {
        const int a = anyNode(rng), b = anyNode(rng);
        if (a != b)
            n.addResistor("RX" + std::to_string(e), node(a), node(b), pick(rLow, rHigh));
    }
    n.addCurrentSource("I1", node((nodes + 1) / 2), "0", n.addInput());
    n.addOutput({NetlistOutput::Kind::VoltageBetween, node(nodes), "0"});
    n.addOutput({NetlistOutput::Kind::VoltageBetween, node((nodes + 1) / 2), "0"});
    return n;
}

struct Sweeps
{
    std::vector<cd> column, row; ///< one input's two outputs (direct), one output's two inputs
    int fallbacks = 0;
};

/// The reduced pencil of `system` swept through the form at `width`.
Sweeps throughForm(const ReducedSystem &reduced, std::span<const cd> s, SweepWidth width)
{
    const detail::PencilView pencil{reduced.gr(), reduced.cr(), reduced.br(), reduced.lr(),
                                    reduced.dr()};
    const detail::HessenbergPencil form(pencil);
    const TransferEntry column[] = {{0, 0}, {1, 0}}, row[] = {{0, 0}, {0, 1}};
    Sweeps out;
    out.column.resize(2 * s.size());
    out.row.resize(2 * s.size());
    out.fallbacks = form.sweep(pencil, s, column, out.column.data(), width)
        + form.sweep(pencil, s, row, out.row.data(), width);
    return out;
}

const SweepWidth kWidths[] = {SweepWidth::Two, SweepWidth::Four, SweepWidth::Eight};

/// A pencil of order k whose G is a chain of unit conductances with no path to ground
/// (singular) and whose C holds capacitors 1, 2, ... k to ground: regular at every s != 0.
/// One input into the first node, one output at the last.
struct FloatingChain
{
    Eigen::MatrixXd g, c, b, l, d;
    explicit FloatingChain(int k)
        : g(Eigen::MatrixXd::Zero(k, k)), c(Eigen::MatrixXd::Zero(k, k)),
          b(Eigen::MatrixXd::Zero(k, 1)), l(Eigen::MatrixXd::Zero(1, k)),
          d(Eigen::MatrixXd::Zero(1, 1))
    {
        for (int i = 0; i < k; ++i) {
            c(i, i) = 1.0 + i;
            if (i + 1 < k) {
                g(i, i) += 1.0;
                g(i + 1, i + 1) += 1.0;
                g(i, i + 1) -= 1.0;
                g(i + 1, i) -= 1.0;
            }
        }
        b(0, 0) = 1.0;
        l(0, k - 1) = 1.0;
    }
};

} // namespace

// Orders 2 to 40 forced through the form (below kHessenbergMinOrder too), at every width,
// direct and transposed solves, against the dense LU of the whole matrix to 1e-9; and the
// automatic choice of ReducedSystem across the threshold.
TEST(HessenbergSweep, OrdersAcrossTheThresholdMatchDenseLu)
{
    std::mt19937 rng(20261203);
    const std::vector<cd> s = logPoints(1.0, 1e9, 53); // a short last group at every width
    int fallbacks = 0, points = 0;
    for (int order = 2; order <= 40; ++order) {
        const std::string label = "order " + std::to_string(order);
        auto system = assembleSystem(network(order, order / 2, 100.0, 1e6, 1e-12, 1e-9, rng));
        ASSERT_TRUE(system.ok()) << system.errorText();
        auto reduced = ReducedSystem::build(*system);
        auto dense = ReducedSystem::build(*system, SolverPath::DenseLu);
        ASSERT_TRUE(reduced.ok() && dense.ok()) << label;
        ASSERT_EQ(reduced->order(), order) << label;
        const TransferEntry all[] = {{0, 0}, {1, 0}, {0, 1}};
        const auto want = dense->sweepEntries(s, all);
        for (SweepWidth width : kWidths) {
            if (!detail::sweepWidthAvailable(width))
                continue;
            const Sweeps got = throughForm(*reduced, s, width);
            fallbacks += got.fallbacks;

            points += 2 * static_cast<int>(s.size());
            for (std::size_t i = 0; i < s.size(); ++i) {
                ASSERT_LT(relErr(got.column[i], want[i]), 1e-9) << label << ", point " << i;
                ASSERT_LT(relErr(got.column[s.size() + i], want[s.size() + i]), 1e-9)
                    << label << ", point " << i;
                ASSERT_LT(relErr(got.row[i], want[i]), 1e-9) << label << ", point " << i;
                ASSERT_LT(relErr(got.row[s.size() + i], want[2 * s.size() + i]), 1e-9)
                    << label << ", point " << i;
            }
            const auto automatic = reduced->sweepEntries(s, all, width);
            for (std::size_t i = 0; i < automatic.size(); ++i)
                ASSERT_LT(relErr(automatic[i], want[i]), 1e-9) << label << ", value " << i;
        }
    }
    // Well-scaled networks: the form itself vouches for nearly every point (measured: 309 of
    // 12402 handed over, the same at every width).
    EXPECT_LT(fallbacks, points / 20) << fallbacks << " of " << points << " points fell back";
}

// Badly scaled: resistors 1e-3 .. 1e12 ohm and capacitors 1e-15 .. 1e-3 F in one network
// (the fuzzer's ranges), orders 9 to 40, against the careful solve of the whole nodal system
// (its own first-order error bound must be under 1e-11 of the value, else the point proves
// nothing and is skipped, counted). The sweep is through ReducedSystem, which takes the form
// at these orders, to 1e-9.
TEST(HessenbergSweep, BadlyScaledNetworksMatchTheCarefulSolve)
{
    std::mt19937 rng(977);
    const std::vector<cd> s = logPoints(1.0, 1e9, 29);
    int checked = 0, skipped = 0;
    for (int order = 9; order <= 40; order += 1) {
        const std::string label = "order " + std::to_string(order);
        auto system = assembleSystem(network(order, order, 1e-3, 1e12, 1e-15, 1e-3, rng));
        ASSERT_TRUE(system.ok()) << system.errorText();
        auto reduced = ReducedSystem::build(*system);
        ASSERT_TRUE(reduced.ok()) << label << ": " << reduced.errorText();
        ASSERT_EQ(reduced->order(), order) << label;
        const TransferEntry column[] = {{0, 0}, {1, 0}};
        detail::RefinedSolver careful(*system);
        for (SweepWidth width : kWidths) {
            if (!detail::sweepWidthAvailable(width))
                continue;
            const auto got = reduced->sweepEntries(s, column, width);
            for (std::size_t i = 0; i < s.size(); ++i) {
                ASSERT_TRUE(careful.factor(s[i])) << label;
                Eigen::VectorXcd r;
                const Eigen::VectorXcd x = careful.solve(0, &r);
                for (int o = 0; o < 2; ++o) {
                    const cd want = careful.output(o, x);
                    if (careful.errorBound(o, 0, x, r) > 1e-11 * std::abs(want)) {
                        ++skipped;
                        continue;
                    }
                    ++checked;
                    ASSERT_LT(relErr(got[static_cast<std::size_t>(o) * s.size() + i], want), 1e-9)
                        << label << ", width " << static_cast<int>(width) << ", output " << o
                        << ", " << std::abs(s[i]) / (2 * kPi) << " Hz";
                }
            }
        }
    }
    EXPECT_GT(checked, 10 * skipped) << checked << " checked, " << skipped << " skipped";
}

// Where the form cannot vouch for a point, the vector kernel solves it. A pencil singular at
// one frequency (G + sC of order 10 with G singular: a node held by capacitors only) has no
// value at s = 0: the form's zero pivot hands the point over and the kernel says NaN, never a
// number made of the division. And a pencil where the form's solutions are not accurate
// enough (below).
TEST(HessenbergSweep, PointsTheFormCannotVouchForGoToTheKernel)
{
    {
        // G is a chain of conductances with no path to ground: singular at s = 0 only.
        const FloatingChain chain(10);
        const auto &[g, c, b, l, d] = chain;
        const detail::PencilView pencil{g, c, b, l, d};
        const detail::HessenbergPencil form(pencil);
        const std::vector<cd> s = {cd(0.0), cd(0.0, 1.0), cd(0.0, 10.0)};
        const TransferEntry entry[] = {{0, 0}};
        for (SweepWidth width : kWidths) {
            if (!detail::sweepWidthAvailable(width))
                continue;
            std::vector<cd> got(s.size());
            EXPECT_GE(form.sweep(pencil, s, entry, got.data(), width), 1);
            EXPECT_TRUE(std::isnan(got[0].real()) && std::isnan(got[0].imag()));
            for (std::size_t i = 1; i < s.size(); ++i) {
                const Eigen::MatrixXcd a = g.cast<cd>() + s[i] * c.cast<cd>();
                const cd want = (l.cast<cd>() * a.fullPivLu().solve(b.cast<cd>()))(0, 0);
                EXPECT_LT(relErr(got[i], want), 1e-9) << "point " << i;
            }
        }
    }
    {
        // The fuzzer's seed 2928 (tests/data/fuzz-found, the case of
        // ReducedSweep.TinyOutputOfALargeSolutionIsRefinedToFullAccuracy): a gain of about
        // 1e-20 A/A near 1 kHz, a tiny component of a large solution, in a 22-state pencil
        // whose rows span many decades. The form's solutions there miss the componentwise
        // backward error even after a refinement at many points of 1 Hz .. 1 GHz, so those
        // must go to the kernel; every value against the careful solve of the full nodal
        // system to 1e-10 where its own bound is under 1e-12 of the value.
        auto design
            = loadDesign(std::string(LOOPSKETCH_TEST_DATA_DIR)
                         + "/fuzz-found/asymptotic-gain-off-5e-6-between-probes.loopsketch");
        ASSERT_TRUE(design.ok()) << design.errorText();
        auto full = assembleSystem(buildLoopNetlist(*design));
        ASSERT_TRUE(full.ok()) << full.errorText();
        auto reduced = ReducedSystem::build(*full);
        ASSERT_TRUE(reduced.ok()) << reduced.errorText();
        ASSERT_GE(reduced->order(), detail::kHessenbergMinOrder);
        const detail::PencilView pencil{reduced->gr(), reduced->cr(), reduced->br(), reduced->lr(),
                                        reduced->dr()};
        const detail::HessenbergPencil form(pencil);
        const std::vector<cd> s = logPoints(1.0, 1e9, 61);
        const auto reference = carefulEntry(*full, s, {loopio::kOutput, loopio::kSource});
        int checked = 0;
        const TransferEntry entry[] = {{loopio::kOutput, loopio::kSource}};
        for (SweepWidth width : kWidths) {
            if (!detail::sweepWidthAvailable(width))
                continue;
            std::vector<cd> got(s.size());
            EXPECT_GE(form.sweep(pencil, s, entry, got.data(), width), 1)
                << "width " << static_cast<int>(width);
            for (std::size_t i = 0; i < s.size(); ++i) {
                if (!(reference[i].relativeBound <= 1e-12))
                    continue; // the reference proves nothing here (or is singular)
                ++checked;
                EXPECT_LT(relErr(got[i], reference[i].value), 1e-10)
                    << "width " << static_cast<int>(width) << ", point " << i;
            }
        }
        EXPECT_GT(checked, 40) << "points with a reference accurate enough to check";
    }
}

// A reducible pencil (the two-port estimate's A circuit holds a copy of the feedback network
// at each port, one read by the other through the gain block): two RC chains of 12 nodes, the
// second's last node reading the first's first node (far below the diagonal, so the pencil is
// not Hessenberg as it stands). An input driving only the second chain leaves the first's
// unknowns at an exact zero, which the orthogonal transformations of one form for the whole
// pencil fill with rounding, so that points miss the componentwise backward error (the
// 50-part RC ladder's A circuit handed every point to the kernel). In block triangular order
// each chain is a form of its own: every point is vouched for, the zero stays exact, and the
// rest matches the dense LU of the pencil (common practice) to 1e-12.
TEST(HessenbergSweep, ReduciblePencilIsReducedBlockByBlock)
{
    const int n = 12, k = 2 * n;
    Eigen::MatrixXd g = Eigen::MatrixXd::Zero(k, k), c = Eigen::MatrixXd::Zero(k, k);
    for (int chain = 0; chain < 2; ++chain)
        for (int i = 0; i < n; ++i) {
            const int at = chain * n + i;
            c(at, at) = 1e-12 * (1.0 + 0.1 * i);
            g(at, at) += 1e-4;
            if (i + 1 < n) {
                const double gs = 1.0 / (4700.0 + 100.0 * i);
                g(at, at) += gs;
                g(at + 1, at + 1) += gs;
                g(at, at + 1) -= gs;
                g(at + 1, at) -= gs;
            }
        }
    g(k - 1, 0) = -2e-3; // the second chain reads the first
    Eigen::MatrixXd b = Eigen::MatrixXd::Zero(k, 2), l = Eigen::MatrixXd::Zero(2, k);
    b(n, 0) = 1.0; // into the second chain only
    b(0, 1) = 1.0; // into the first, which the second reads
    l(0, k - 1) = 1.0;
    l(1, n - 1) = 1.0;
    const Eigen::MatrixXd d = Eigen::MatrixXd::Zero(2, 2);
    const detail::PencilView pencil{g, c, b, l, d};
    const detail::HessenbergPencil form(pencil);
    EXPECT_EQ(form.blocks(), 2);
    const std::vector<cd> s = logPoints(1.0, 1e9, 73);
    const TransferEntry entries[] = {{0, 0}, {1, 0}, {0, 1}, {1, 1}};
    for (SweepWidth width : kWidths) {
        if (!detail::sweepWidthAvailable(width))
            continue;
        std::vector<cd> got(4 * s.size());
        EXPECT_EQ(form.sweep(pencil, s, entries, got.data(), width), 0)
            << "width " << static_cast<int>(width);
        for (std::size_t i = 0; i < s.size(); ++i) {
            const Eigen::MatrixXcd a = g.cast<cd>() + s[i] * c.cast<cd>();
            const Eigen::MatrixXcd want = l.cast<cd>() * a.partialPivLu().solve(b.cast<cd>());
            for (int e = 0; e < 4; ++e) {
                const cd w = want(entries[e].output, entries[e].input);
                const cd v = got[static_cast<std::size_t>(e) * s.size() + i];
                if (entries[e].output == 1 && entries[e].input == 0)
                    EXPECT_EQ(v, cd(0.0)) << "an exact zero, point " << i; // not reached
                else
                    EXPECT_LT(relErr(v, w), 1e-12) << "entry " << e << ", point " << i;
            }
        }
    }
}

// The per-point error estimate through the form (the adjoint solved through it, as the kernel
// solves it with its own factors: pencilsweep.h) on a pencil that is regular at every s != 0
// but whose G is singular (a chain of conductances with no path to ground, capacitors to
// ground): at s = 1e-10 j rad/s the pencil is conditioned to about 1e11, and both estimates
// flag the point; at 1 and 10 rad/s neither does, and the values match the dense LU (common
// practice) to 1e-12.
TEST(HessenbergSweep, ErrorEstimateFlagsWhatTheKernelFlags)
{
    const FloatingChain chain(12);
    const auto &[g, c, b, l, d] = chain;
    const detail::PencilView pencil{g, c, b, l, d};
    const detail::HessenbergPencil form(pencil);
    const std::vector<cd> s = {cd(0.0, 1e-10), cd(0.0, 1.0), cd(0.0, 10.0)};
    const TransferEntry entry[] = {{0, 0}};
    for (SweepWidth width : kWidths) {
        if (!detail::sweepWidthAvailable(width))
            continue;
        std::vector<cd> got(s.size()), kernel(s.size());
        std::vector<std::uint8_t> flagged(s.size(), 7), kernelFlagged(s.size(), 7);
        // Every point through the form itself: its own estimate, not the kernel's.
        EXPECT_EQ(form.sweep(pencil, s, entry, got.data(), width, flagged), 0);
        detail::sweepPencil(pencil, s, entry, kernel.data(), width, kernelFlagged);
        for (std::size_t i = 0; i < s.size(); ++i)
            EXPECT_EQ(flagged[i], kernelFlagged[i]) << "point " << i;
        EXPECT_EQ(flagged[0], 1);
        for (std::size_t i = 1; i < s.size(); ++i) {
            EXPECT_EQ(flagged[i], 0) << "point " << i;
            const Eigen::MatrixXcd a = g.cast<cd>() + s[i] * c.cast<cd>();
            const cd want = (l.cast<cd>() * a.fullPivLu().solve(b.cast<cd>()))(0, 0);
            EXPECT_LT(relErr(got[i], want), 1e-12) << "point " << i;
        }
    }
}
