// The pruned suggest search (core/src/analysis/gainwindowsearch.h) against the search that
// computes every combination: the same rows in the same order, the same counts, on several
// invented designs and targets, including one whose gain is not monotone in a resistor and
// must be computed whole there; and the combination cap counting the DC gains computed.

#include "loopsketch/analysis/suggest.h"
#include "loopsketch/design/designfile.h"

#include "bridgestage.h"
#include "designs.h"

#include <gmock/gmock.h>
#include <gtest/gtest.h>

#include <cmath>
#include <map>
#include <optional>
#include <ostream>
#include <string>
#include <vector>

using namespace loopsketch;
using test::parseOrFail;
using ::testing::HasSubstr;

namespace {

// Invented: a gain block of DC gain A = 10 (20 dB) whose output is fed back to its
// non-inverting input through RF, the source reaching that input through RS. The node
// equation at in_p gives G = A RF / (RF - (A - 1) RS) (derived by hand from the circuit):
// a pole at RF = 9 RS, so the gain is not monotone over an RF range holding 9 RS, and at
// RS = 2k, RF = 18k (both in the IEC 60063 E24 table) the circuit has no DC solution. CP
// across RF is open at DC.
const char *kPositiveFeedback = R"({"schema": "loopsketch.design/1", "title": "x", "parts": [
  {"id": "VS", "type": "vsource", "pos": "src", "neg": "0"},
  {"id": "RS", "type": "resistor", "a": "src", "b": "p", "value": "1k", "series": "E24"},
  {"id": "U1", "type": "gain_block", "in_p": "p", "in_n": "0", "out": "out", "gain": "20dB",
   "poles_hz": ["1k"]},
  {"id": "RF", "type": "resistor", "a": "out", "b": "p", "value": "27k", "series": "E24"},
  {"id": "CP", "type": "capacitor", "a": "out", "b": "p", "value": "10p", "series": "E6"},
  {"id": "RL", "type": "load", "a": "out", "b": "0", "r": "10k"}],
  "input": "VS", "output": "voltage",
  "sweep": {"start": "1", "stop": "10M", "points_per_decade": 10},
  "specs": {"gain": ["15", "25"]}})";

struct Case
{
    const char *name;
    std::string design;
    std::vector<std::string> parts;
    std::map<std::string, std::pair<double, double>> ranges;
    std::optional<ESeries> series; ///< for every searched part
};

std::ostream &operator<<(std::ostream &os, const Case &c)
{
    return os << c.name;
}

Design designOf(const Case &c)
{
    Design d = parseOrFail(c.design);
    if (c.series)
        for (const std::string &id : c.parts)
            if (Part *p = d.findPart(id))
                p->series = c.series;
    return d;
}

SuggestOptions optionsOf(const Case &c, bool prune)
{
    SuggestOptions o;
    o.parts = c.parts;
    o.ranges = c.ranges;
    o.yieldTrials = 20;
    o.prune = prune;
    return o;
}

const std::map<std::string, std::pair<double, double>> kBridgeRanges{
    {"RF", {10e3, 100e3}}, {"RG", {1e3, 10e3}}, {"CF", {1e-12, 10e-12}}};

std::vector<Case> cases()
{
    const std::string gasCell = [] {
        Design d = test::loadOrFail(test::kDesignsDir / "gas-cell-current-amplifier.loopsketch");
        return serializeDesign(d);
    }();
    return {
        {"BridgeThreeParts",
         test::bridgeStageText(),
         {"RF", "RG", "CF"},
         kBridgeRanges,
         ESeries::E24},
        {"BridgeTwoResistors", test::bridgeStageText(), {"RG", "RF"}, kBridgeRanges, ESeries::E48},
        // a window no combination reaches: only the nearest outside it are ranked
        {"BridgeUnreachable",
         test::bridgeStageText(R"({"gain": ["999", "1001"]})"),
         {"RF", "RG", "CF"},
         kBridgeRanges,
         ESeries::E12},
        // and without CF, whose values would fill the nearest rows from one gain
        {"BridgeTwoResistorsAboveReach",
         test::bridgeStageText(R"({"gain": ["999", "1001"]})"),
         {"RG", "RF"},
         kBridgeRanges,
         ESeries::E48},
        {"BridgeTwoResistorsBelowReach",
         test::bridgeStageText(R"({"gain": ["1", "1.01"]})"),
         {"RG", "RF"},
         kBridgeRanges,
         ESeries::E48},
        // a bandwidth no row reaches: no row meets every spec, every row in the window runs
        {"BridgeBandwidthOutOfReach",
         test::bridgeStageText(R"({"gain": ["10.5", "11.5"], "bandwidth_min": "100M"})"),
         {"RF", "RG", "CF"},
         kBridgeRanges,
         ESeries::E12},
        // a wide window and a phase margin few rows reach: the rows meeting every spec are
        // scattered far down the order of the gain's distance from the centre
        {"BridgeWideWindowTightMargin",
         test::bridgeStageText(R"({"gain": ["8", "14"], "phase_margin_min_deg": 128})"),
         {"RF", "RG", "CF"},
         kBridgeRanges,
         ESeries::E12},
        // a noise spec: the objective is the noise rms, so every row in the window runs
        {"BridgeNoiseObjective",
         test::bridgeStageText(R"({"gain": ["10.78", "11.22"], "output_noise_max": "1m"})",
                               R"(, "en": "8n")"),
         {"RF", "RG", "CF"},
         kBridgeRanges,
         ESeries::E6},
        // decreasing in the searched resistor (inverting T network), a load's r searched
        {"GasCellTNetwork",
         gasCell,
         {"R1", "R2", "RL"},
         {{"R1", {3e3, 30e3}}, {"R2", {30, 300}}, {"RL", {300, 3e3}}},
         ESeries::E24},
        {"DemoFeedbackPair",
         serializeDesign(test::loadOrFail(test::kDesignsDir / "demo.loopsketch")),
         {"RF", "CF"},
         {{"RF", {1e5, 1e7}}, {"CF", {1e-13, 1e-11}}},
         ESeries::E24},
        // with CP searched too: the combinations without a solution counted for all its values
        {"PositiveFeedback",
         kPositiveFeedback,
         {"RF", "RS", "CP"},
         {{"RF", {1e3, 100e3}}, {"RS", {100, 10e3}}, {"CP", {1e-12, 10e-12}}},
         std::nullopt},
    };
}

class PrunedSearch : public ::testing::TestWithParam<Case>
{
};

} // namespace

// The outside reference here is the full enumeration: every combination's DC gain and
// every trial computed. The pruned search must give the same JSON, byte for byte: the same
// rows in the same order with the same metrics, and the same counts.
TEST_P(PrunedSearch, GivesTheEnumeratedRows)
{
    const Case &c = GetParam();
    const Design d = designOf(c);
    auto pruned = suggestValues(d, optionsOf(c, true));
    auto full = suggestValues(d, optionsOf(c, false));
    ASSERT_TRUE(pruned.ok()) << pruned.errorText();
    ASSERT_TRUE(full.ok()) << full.errorText();
    EXPECT_EQ(full->computed, full->combinations);
    EXPECT_EQ(pruned->evaluated, pruned->combinations);
    EXPECT_LE(pruned->computed, full->computed);
    ASSERT_FALSE(full->suggestions.empty());
    EXPECT_EQ(suggestToJson(*pruned, "V/V"), suggestToJson(*full, "V/V"));
    EXPECT_EQ(suggestToText(*pruned, "V/V"), suggestToText(*full, "V/V"));
}

INSTANTIATE_TEST_SUITE_P(Designs, PrunedSearch, ::testing::ValuesIn(cases()),
                         [](const auto &param) { return std::string(param.param.name); });

TEST(PrunedSearchCounts, CapacitorsAndBisectionLeaveFewGains)
{
    // 96 E96 values a decade (IEC 60063): 96^3 combinations, of which the DC gain needs at
    // most RG's 96 lines, each bisected over RF's 96 values (about 2 log2 96 + 3 probes, the
    // window and 5 a side): under 96 * 40 gains.
    const Design d = parseOrFail(test::bridgeStageText());
    SuggestOptions o;
    o.parts = {"RF", "RG", "CF"};
    o.ranges = {{"RF", {10e3, 99e3}}, {"RG", {1e3, 9.9e3}}, {"CF", {1e-12, 9.9e-12}}};
    o.yieldTrials = 20;
    auto r = suggestValues(d, o);
    ASSERT_TRUE(r.ok()) << r.errorText();
    EXPECT_EQ(r->combinations, 96u * 96u * 96u);
    EXPECT_EQ(r->evaluated, r->combinations);
    EXPECT_LT(r->computed, 96u * 40u);
    EXPECT_TRUE(r->targetsMet);
}

TEST(PrunedSearchCounts, NonMonotoneLinesAreComputedWhole)
{
    // RS from 100 to 10k in E24 (49 values, IEC 60063); the pole RF = 9 RS lies inside RF's
    // 1k..100k for RS from 120 to 10k / 9 = 1.11k: those RF lines (the E24 values 120 .. 1.1k,
    // 25 of them) cannot be bisected and take all 49 RF values each.
    const Design d = parseOrFail(kPositiveFeedback);
    SuggestOptions o;
    o.parts = {"RF", "RS"};
    o.ranges = {{"RF", {1e3, 100e3}}, {"RS", {100, 10e3}}};
    o.yieldTrials = 20;
    auto r = suggestValues(d, o);
    ASSERT_TRUE(r.ok()) << r.errorText();
    EXPECT_EQ(r->combinations, 49u * 49u);
    EXPECT_GE(r->computed, 25u * 49u);
    EXPECT_LT(r->computed, r->combinations);
    EXPECT_GE(r->failed, 1u); // RS = 2k, RF = 18k: no DC solution
}

TEST(PrunedSearchCounts, CapCountsTheGainsComputed)
{
    // E96 over two decades (193 values each, 1.00 to 100 times a decade, IEC 60063): 193^3 =
    // 7.2 million combinations, over the 1 million cap, but the pruned search computes a few
    // thousand DC gains.
    const Design d = parseOrFail(test::bridgeStageText());
    SuggestOptions o;
    o.parts = {"RF", "RG", "CF"};
    o.ranges = {{"RF", {1e3, 100e3}}, {"RG", {100, 10e3}}, {"CF", {0.1e-12, 10e-12}}};
    o.yieldTrials = 20;
    auto r = suggestValues(d, o);
    ASSERT_TRUE(r.ok()) << r.errorText();
    EXPECT_EQ(r->combinations, 193u * 193u * 193u);
    EXPECT_GT(r->combinations, kMaxCombinations);
    EXPECT_LT(r->computed, 193u * 40u);

    // computing every combination is still refused, naming the part and field
    o.prune = false;
    auto full = suggestValues(d, o, "bridge.loopsketch");
    ASSERT_FALSE(full.ok());
    EXPECT_THAT(full.errorText(), HasSubstr("bridge.loopsketch: part RF, field series"));
    EXPECT_THAT(full.errorText(), HasSubstr("more than 1000000 combinations to evaluate"));
}

TEST(PrunedSearchCounts, PlanOverTheCapIsRefusedBeforeAnyWork)
{
    // Two resistors and the load's r in E192 over two decades (385 values each, 1.00 to 100
    // times a decade, IEC 60063): 385^2 lines along the third, each needing at least 3 probes
    // and 2 bisections of 9 steps: 4.6 million DC gains, over the cap.
    Design d = parseOrFail(test::bridgeStageText());
    for (const char *id : {"RF", "RG", "RL"})
        d.findPart(id)->series = ESeries::E192;
    SuggestOptions o;
    o.parts = {"RF", "RG", "RL"};
    o.series = ESeries::E192;
    o.ranges = {{"RF", {1e3, 100e3}}, {"RG", {100, 10e3}}, {"RL", {1e3, 100e3}}};
    auto r = suggestValues(d, o, "bridge.loopsketch");
    ASSERT_FALSE(r.ok());
    EXPECT_THAT(r.errorText(), HasSubstr("bridge.loopsketch: part RF, field series"));
    EXPECT_THAT(r.errorText(), HasSubstr("more than 1000000 combinations to evaluate"));
}
