// Transfer entries that are zero for every value of the parts (core/src/circuit/
// structuralzeros.h): the pattern rule against the inverse computed directly, and the ideal
// output whose impedance the fast path used to leave as rounding (fuzz seeds 417 and 451).

#include "loopsketch/analysis/analysis.h"
#include "loopsketch/circuit/circuit.h"

#include "circuit/structuralzeros.h"
#include "designs.h"

#include <gtest/gtest.h>

#include <Eigen/LU>

#include <cmath>
#include <random>
#include <string>

using namespace loopsketch;

namespace {

/// A random sparse system with a nonzero diagonal (so it is regular for generic values),
/// random off-diagonal entries with probability `density`, a few entries in C, and B, L
/// with one or two entries per column / row.
DescriptorSystem randomSparseSystem(int n, double density, std::mt19937 &rng)
{
    std::uniform_real_distribution<double> unit(0.0, 1.0);
    const auto value = [&] {
        return (unit(rng) < 0.5 ? -1.0 : 1.0) * (0.5 + unit(rng));
    };
    std::uniform_int_distribution<int> index(0, n - 1);
    DescriptorSystem s;
    s.G = Eigen::MatrixXd::Zero(n, n);
    s.C = Eigen::MatrixXd::Zero(n, n);
    for (int i = 0; i < n; ++i) {
        s.G(i, i) = value();
        for (int j = 0; j < n; ++j)
            if (i != j && unit(rng) < density)
                (unit(rng) < 0.7 ? s.G : s.C)(i, j) = value();
    }
    s.B = Eigen::MatrixXd::Zero(n, 3);
    s.L = Eigen::MatrixXd::Zero(3, n);
    for (int k = 0; k < 3; ++k)
        for (int m = 0; m < 1 + k % 2; ++m) {
            s.B(index(rng), k) = value();
            s.L(k, index(rng)) = value();
        }
    return s;
}

} // namespace

// The rule against the inverse itself: on random sparse patterns with random values, an
// entry of L (G + sC)^-1 B claimed zero is zero to rounding, and an entry not claimed is
// clearly nonzero (random values cancel only with probability zero). Reference: the inverse
// from a dense LU of the same matrix (common practice), tolerance 1e-10 of the size of the
// terms an entry sums.
TEST(StructuralZeros, ClaimsExactlyTheEntriesTheInverseHasZero)
{
    std::mt19937 rng(20261202);
    int claimed = 0, notClaimed = 0;
    for (int trial = 0; trial < 300; ++trial) {
        const int n = 3 + trial % 10;
        const DescriptorSystem s = randomSparseSystem(n, trial % 3 == 0 ? 0.08 : 0.2, rng);
        const detail::StructuralZeros z = detail::findStructuralZeros(s);
        ASSERT_EQ(z.outputs, 3);
        ASSERT_EQ(z.inputs, 3);
        const std::complex<double> sPoint(0.0, 0.7);
        const Eigen::MatrixXcd a = s.G.cast<std::complex<double>>() + sPoint * s.C;
        const Eigen::MatrixXcd inverse = a.fullPivLu().inverse();
        const Eigen::MatrixXcd h = s.L * inverse * s.B;
        // What an entry of h is made of: the largest entry of the inverse times those of L
        // and B (at most 1.5 each) and the two terms a row or column of them may hold.
        const double scale = inverse.cwiseAbs().maxCoeff() * 1.5 * 1.5 * 4.0;
        for (int o = 0; o < 3; ++o)
            for (int c = 0; c < 3; ++c) {
                if (z.at(o, c)) {
                    ++claimed;
                    EXPECT_LE(std::abs(h(o, c)), 1e-10 * scale)
                        << "trial " << trial << ": entry (" << o << ", " << c
                        << ") claimed zero is not";
                } else {
                    ++notClaimed;
                    EXPECT_GT(std::abs(h(o, c)), 1e-10 * scale)
                        << "trial " << trial << ": entry (" << o << ", " << c
                        << ") is zero but not claimed";
                }
            }
    }
    // Both kinds occur often enough for the test to mean something.
    EXPECT_GT(claimed, 200);
    EXPECT_GT(notClaimed, 200);
}

// A pattern with no perfect matching (a row of zeros) claims nothing.
TEST(StructuralZeros, StructurallySingularSystemClaimsNothing)
{
    DescriptorSystem s;
    s.G = Eigen::MatrixXd::Zero(2, 2);
    s.C = Eigen::MatrixXd::Zero(2, 2);
    s.G(0, 0) = 1.0;
    s.G(0, 1) = 1.0; // row 1 empty
    s.B = Eigen::MatrixXd::Identity(2, 2);
    s.L = Eigen::MatrixXd::Identity(2, 2);
    const detail::StructuralZeros z = detail::findStructuralZeros(s);
    EXPECT_FALSE(z.any());
}

namespace {

/// A unity follower of ground with an ideal output (r_out 0, the default) and a large input
/// capacitance, the source isolated from the loop: an invented design in the shape of fuzz
/// seed 451.
std::string idealFollowerOfGround(const std::string &rOut)
{
    return R"({
  "schema": "loopsketch.design/1",
  "title": "Ideal follower of ground",
  "parts": [
    {"id": "SIG", "type": "isource", "to": "src", "from": "0", "r_parallel": "20k"},
    {"id": "U1", "type": "gain_block", "in_p": "0", "in_n": "out", "out": "out",
     "gain": "340", "poles_hz": ["300k", "470", "27", "1.2", "0.86"],
     "zeros_hz": ["64k", "115M"], "r_in": "1M", "c_in": "2.7u", "r_out": ")"
        + rOut + R"("},
    {"id": "LD", "type": "load", "a": "out", "b": "0", "r": "78G", "c": "7f"},
    {"id": "R1", "type": "resistor", "a": "src", "b": "0", "value": "12m"}
  ],
  "input": "SIG",
  "output": "voltage",
  "sweep": {"start": "40", "stop": "1.2M", "points_per_decade": 21}
})";
}

} // namespace

// An ideal output (r_out 0) holds its node whatever flows into it: z_out is 0 (an ideal
// voltage source has no internal impedance; common practice). Before, the fast path left
// rounding of 1e-22..2e-16 ohm at frequencies whose pivots routed the test current through
// the node's row (fuzz seeds 417, 451), and the Blackman check could not tell it from an error.
TEST(StructuralZeros, IdealOutputImpedanceIsExactlyZeroAtEveryFrequency)
{
    const Design d = test::parseOrFail(idealFollowerOfGround("0"));
    const Analysis a = test::analyzeOrFail(d);
    ASSERT_FALSE(a.curves.zOutExact.empty());
    // The claim is an exact zero, so the tolerance is 0.
    for (std::size_t i = 0; i < a.curves.zOutExact.size(); ++i) {
        EXPECT_EQ(std::abs(a.curves.zOutExact[i]), 0.0) << "at " << a.frequenciesHz[i] << " Hz";
        EXPECT_EQ(std::abs(a.curves.zOutReturnRatio[i]), 0.0)
            << "at " << a.frequenciesHz[i] << " Hz";
    }
    ASSERT_TRUE(a.exact.zOut.has_value());
    EXPECT_EQ(std::abs(*a.exact.zOut), 0.0);
}

// The same loop with 50 ohm of r_out has an output impedance: nothing is claimed zero that
// is not. Feedback divides r_out by 1 + T at most (common practice), and |1 + T| stays far
// below 5e7 here (gain 340), so |z_out| is well above 1e-6 ohm everywhere.
TEST(StructuralZeros, OutputBehindResistanceIsNotClaimedZero)
{
    const Design d = test::parseOrFail(idealFollowerOfGround("50"));
    const Analysis a = test::analyzeOrFail(d);
    ASSERT_FALSE(a.curves.zOutExact.empty());
    for (std::size_t i = 0; i < a.curves.zOutExact.size(); ++i)
        EXPECT_GT(std::abs(a.curves.zOutExact[i]), 1e-6) << "at " << a.frequenciesHz[i] << " Hz";
}
