// The analysis text summary (analysisToText()) on designs of our own.

#include "loopsketch/analysis/analysis.h"

#include "designs.h"

#include <gmock/gmock.h>
#include <gtest/gtest.h>

#include <string>

using namespace loopsketch;
using namespace loopsketch::test;
using ::testing::HasSubstr;

// An unstable loop fails every spec, reason "unstable" (core/README.md, the stability
// verdict), and the text summary lists the verdicts after the noise section, which for an
// unstable loop has no rms, as it does for a stable loop (common practice: a review names
// every spec with its verdict). Positive feedback around a one-pole gain block: in_p tied to
// the output puts one real pole at s = w1 (a0 - 1) in the right half-plane (the
// characteristic equation 1 - a0/(1 + s/w1) = 0 solved by hand).
TEST(AnalysisText, UnstableLoopListsEverySpecAsFailing)
{
    const Design d = parseOrFail(
        R"({"schema": "loopsketch.design/1", "title": "t", "parts": [
            {"id": "VS", "type": "vsource", "pos": "in", "neg": "0"},
            {"id": "U1", "type": "gain_block", "in_p": "out", "in_n": "in", "out": "out",
             "gain": "1e4", "poles_hz": ["100"]},
            {"id": "RL", "type": "load", "a": "out", "b": "0", "r": "10k"}],
            "input": "VS", "output": "voltage",
            "sweep": {"start": "1", "stop": "1M", "points_per_decade": 10},
            "specs": {"gain": ["0.5", "2"], "bandwidth_min": "1"}})");
    const Analysis a = analyzeOrFail(d);
    ASSERT_FALSE(a.stable);
    ASSERT_TRUE(a.noise.has_value()) << a.noiseProblem;
    ASSERT_EQ(a.specs.size(), 2u);
    const std::string text = analysisToText(a, &d);
    const auto specs = text.find("\nSpecs\n");
    ASSERT_NE(specs, std::string::npos) << text;
    EXPECT_LT(text.find("\nNoise ("), specs);
    const std::string section = text.substr(specs);
    // Both specs, each failing for the instability.
    std::size_t failing = 0;
    for (auto at = section.find(": FAIL (unstable)"); at != std::string::npos;
         at = section.find(": FAIL (unstable)", at + 1))
        ++failing;
    EXPECT_EQ(failing, 2u) << section;
    EXPECT_THAT(section, ::testing::Not(HasSubstr(": pass")));
}
