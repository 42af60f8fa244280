// The names of the noise sources, as the Noise panel, the review sheet and the analysis text
// show them, on the noise analysis of a transimpedance stage of our own.

#include "loopsketch/analysis/noise.h"
#include "loopsketch/report/noisenames.h"

#include "designs.h"

#include <gmock/gmock.h>
#include <gtest/gtest.h>

#include <string>
#include <vector>

using namespace loopsketch;
using namespace loopsketch::test;

// Every source is named by its part and where in the part the noise arises (core/README.md's
// vocabulary): a resistor and the load as themselves, a source's r_parallel as a field of it,
// its shot noise, the gain block's e_n, and its i_n at in_n only: in_p sits on ground, which
// shorts the current noise there (common practice).
TEST(NoiseNames, LabelsNameThePartAndWhereInItTheNoiseArises)
{
    const Design d = parseOrFail(
        R"({"schema": "loopsketch.design/1", "title": "t", "parts": [
            {"id": "PD1", "type": "isource", "to": "in", "from": "0", "r_parallel": "1G",
             "c_parallel": "15p", "i_dc": "5u"},
            {"id": "U1", "type": "gain_block", "in_p": "0", "in_n": "in", "out": "out",
             "gain": "120dB", "gbw": "10M", "r_out": "50", "en": "5n", "in": "2f"},
            {"id": "RF", "type": "resistor", "a": "in", "b": "out", "value": "200k"},
            {"id": "CF", "type": "capacitor", "a": "in", "b": "out", "value": "4.7p"},
            {"id": "RL", "type": "load", "a": "out", "b": "0", "r": "2k", "c": "100p"}],
            "input": "PD1", "output": "voltage",
            "sweep": {"start": "1", "stop": "1M", "points_per_decade": 20}})");
    auto n = analyzeNoise(d);
    ASSERT_TRUE(n.ok()) << n.errorText();
    std::vector<std::string> labels;
    for (const NoiseContribution &c : n->contributions)
        labels.push_back(noiseSourceLabel(c));
    EXPECT_THAT(labels,
                ::testing::UnorderedElementsAre("PD1 r_parallel thermal", "RF thermal",
                                                "RL thermal", "PD1 shot", "U1 e_n",
                                                "U1 i_n at in_n"));
}
