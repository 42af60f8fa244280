// Encirclements of -1 by the return ratio, checked against the Nyquist criterion
// N = Z - P: N clockwise encirclements, Z closed-loop poles in the right half-plane (counted
// from the closed-loop natural frequencies), P poles of T there (Ogata, Modern Control
// Engineering, 5th ed., §7-5, the Nyquist stability criterion; from memory).

#include "loopsketch/analysis/analysis.h"
#include "loopsketch/analysis/nyquist.h"

#include "designs.h"

#include <gtest/gtest.h>

#include <sstream>
#include <string>

using namespace loopsketch;
using namespace loopsketch::test;

namespace {

/// A follower around a gain block of `gain` with poles at 10 Hz and twice at `pole2`
/// (Hz); with `positive` the output goes back to in_p (positive feedback).
Design follower(double gain, double pole2, bool positive = false)
{
    std::ostringstream s;
    s.precision(17);
    s << R"({"schema": "loopsketch.design/1", "parts": [
  {"id": "SIG", "type": "vsource", "pos": "in", "neg": "0", "r_series": "1k"},
  {"id": "RS", "type": "resistor", "a": "in", "b": ")"
      << (positive ? "n" : "p") << R"(", "value": "1k"},
  {"id": "U1", "type": "gain_block", "in_p": ")"
      << (positive ? "out" : "p") << R"(", "in_n": ")" << (positive ? "n" : "out")
      << R"(", "out": "out", "gain": )" << gain << R"(, "r_in": "1M", "poles_hz": ["10", )" << pole2
      << ", " << pole2 << R"(]},
  {"id": "RL", "type": "load", "a": "out", "b": "0", "r": "10k"}],
 "input": "SIG", "output": "voltage", "sweep": {"start": "1", "stop": "1G"}})";
    return parseOrFail(s.str());
}

} // namespace

TEST(Nyquist, UnstableThreePoleFollowerEncirclesMinusOneOncePerRhpPole)
{
    // Three poles and a loop gain of 1e5: the phase passes -180 degrees well above 0 dB, so
    // the closed loop has a pair of poles in the right half-plane (Routh-Hurwitz for a cubic,
    // common practice) and T encircles -1 twice clockwise, with P = 0.
    const Analysis a = analyzeOrFail(follower(1e5, 1e5));
    ASSERT_FALSE(a.stable);
    EXPECT_EQ(a.rhpPoles, 2);
    ASSERT_TRUE(a.nyquist.encirclements) << a.nyquist.reason;
    EXPECT_EQ(a.nyquist.openLoopRhpPoles, 0);
    EXPECT_EQ(*a.nyquist.encirclements, a.rhpPoles - a.nyquist.openLoopRhpPoles);
}

TEST(Nyquist, PositiveFeedbackAboveUnityIsOneRealRhpPole)
{
    // T(0) = -(A0 beta) < -1: 1 + T changes sign between DC and infinity, one real closed-loop
    // pole in the right half-plane and one clockwise encirclement (N = Z - P = 1).
    const Analysis a = analyzeOrFail(follower(10, 1e6, true));
    ASSERT_FALSE(a.stable);
    ASSERT_TRUE(a.nyquist.encirclements) << a.nyquist.reason;
    EXPECT_EQ(a.rhpPoles, 1);
    EXPECT_EQ(*a.nyquist.encirclements, 1);
}

class NyquistOverGain : public ::testing::TestWithParam<double>
{
};

TEST_P(NyquistOverGain, EncirclementsEqualClosedLoopRhpPoles)
{
    // From a stable follower through the margin to an unstable one: N = Z - P at every gain.
    const Analysis a = analyzeOrFail(follower(GetParam(), 3e5));
    ASSERT_TRUE(a.nyquist.encirclements) << a.nyquist.reason;
    EXPECT_EQ(*a.nyquist.encirclements, a.rhpPoles - a.nyquist.openLoopRhpPoles)
        << "gain " << GetParam();
}

INSTANTIATE_TEST_SUITE_P(Gains, NyquistOverGain,
                         ::testing::Values(1.0, 10.0, 100.0, 1e3, 1e4, 1e5, 1e6));

TEST(Nyquist, EveryExampleAgreesWithItsStabilityVerdict)
{
    for (const std::string &file : exampleDesigns()) {
        const Analysis a = analyzeOrFail(loadOrFail(kDesignsDir / file));
        ASSERT_TRUE(a.nyquist.encirclements) << file << ": " << a.nyquist.reason;
        EXPECT_EQ(*a.nyquist.encirclements, a.rhpPoles - a.nyquist.openLoopRhpPoles) << file;
    }
}
