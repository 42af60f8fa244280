#include "loopsketch/analysis/suggest.h"
#include "loopsketch/design/designfile.h"

#include "designs.h"
#include "ratiostage.h"

#include <gmock/gmock.h>
#include <gtest/gtest.h>

#include <cmath>
#include <string>

using namespace loopsketch;
using test::parseOrFail;
using ::testing::HasSubstr;
using ::testing::Not;

namespace {

// Invented test circuit: non-inverting stage 1 + R2/R1 around a 180 dB gain block with one
// pole at 1 Hz (loop gain error about 3e-9), both resistors in E12, starting off target.
std::string nonInverting(const std::string &specs)
{
    return test::nonInvertingStageText("x", R"("value": "12k")", "3.9k", specs);
}

double valueOf(const Suggestion &s, const std::string &id)
{
    for (const auto &[part, v] : s.values)
        if (part == id)
            return v;
    return std::nan("");
}

SuggestOptions twoResistors()
{
    SuggestOptions o;
    o.parts = {"R2", "R1"};
    o.ranges = {{"R1", {1e3, 10e3}}, {"R2", {1e3, 100e3}}};
    return o;
}

} // namespace

TEST(Suggest, FindsExactSeriesRatio)
{
    // 10 / 4.7: both values are in the IEC 60063 E12 table, so 1 + 10k/4.7k hits the
    // window centre 1 + 10/4.7 = 3.12766 exactly (up to the loop gain error).
    const Design d = parseOrFail(nonInverting(R"({"gain": ["3.11202", "3.14330"]})"));
    auto r = suggestValues(d, twoResistors());
    ASSERT_TRUE(r.ok()) << r.errorText();
    EXPECT_TRUE(r->targetsMet);
    EXPECT_EQ(r->combinations, 13u * 25u); // E12: 1k..10k is 13 values, 1k..100k is 25
    ASSERT_FALSE(r->suggestions.empty());
    const Suggestion &best = r->suggestions.front();
    EXPECT_NEAR(valueOf(best, "R2") / valueOf(best, "R1"), 10.0 / 4.7, 1e-9);
    ASSERT_TRUE(best.gainErrorPct);
    EXPECT_NEAR(*best.gainErrorPct, 0.0, 1e-4);
    EXPECT_TRUE(best.meetsSpecs);
}

TEST(Suggest, BestPairWhenNoRatioIsExact)
{
    // Gain 3 needs R2/R1 = 2, which no E12 pair gives. From the IEC 60063 E12 table, the
    // ratios four steps apart are 2.2, 2.25, 2.2, 2.167, 2.136, 2.074, 2.061 (6.8/3.3),
    // 2.103, 2.128, 2.143, 2.206, 2.195 and three steps apart at most 1.833: the nearest is
    // 6.8/3.3 = 2.0606 (derived by hand from the IEC 60063 table), a gain error of +2.02 %.
    const Design d = parseOrFail(nonInverting(R"({"gain": ["2.9", "3.1"]})"));
    auto r = suggestValues(d, twoResistors());
    ASSERT_TRUE(r.ok()) << r.errorText();
    ASSERT_FALSE(r->suggestions.empty());
    const Suggestion &best = r->suggestions.front();
    EXPECT_NEAR(valueOf(best, "R2") / valueOf(best, "R1"), 6.8 / 3.3, 1e-9);
    ASSERT_TRUE(best.gainErrorPct);
    EXPECT_NEAR(*best.gainErrorPct, (1.0 + 6.8 / 3.3 - 3.0) / 3.0 * 100.0, 1e-4);
}

TEST(Suggest, UnreachableTargetsAreFlagged)
{
    const Design far = parseOrFail(nonInverting(R"({"gain": ["999", "1001"]})"));
    auto r = suggestValues(far, twoResistors());
    ASSERT_TRUE(r.ok()) << r.errorText();
    EXPECT_FALSE(r->targetsMet);
    EXPECT_THAT(r->unmet, HasSubstr("no combination meets the gain window"));
    ASSERT_FALSE(r->suggestions.empty()); // still the best attempts: 100k / 1k
    EXPECT_NEAR(valueOf(r->suggestions.front(), "R2") / valueOf(r->suggestions.front(), "R1"),
                100.0, 1e-9);

    // A one-pole loop has about 90 degrees of phase margin: 120 is out of reach.
    const Design margin
        = parseOrFail(nonInverting(R"({"gain": ["2.9", "3.2"], "phase_margin_min_deg": 120})"));
    auto m = suggestValues(margin, twoResistors());
    ASSERT_TRUE(m.ok()) << m.errorText();
    EXPECT_FALSE(m->targetsMet);
    EXPECT_THAT(m->unmet,
                HasSubstr("no combination within the gain window meets the minimum phase margin"));
}

TEST(Suggest, ClearErrors)
{
    const Design d = parseOrFail(nonInverting(R"({"gain": ["2.9", "3.1"]})"));
    SuggestOptions o = twoResistors();
    o.parts = {"R9"};
    auto unknown = suggestValues(d, o, "t.loopsketch");
    ASSERT_FALSE(unknown.ok());
    EXPECT_THAT(unknown.errorText(), HasSubstr("t.loopsketch: part R9"));
    EXPECT_THAT(unknown.errorText(), HasSubstr("no part named \"R9\""));

    o.parts = {"U1"};
    EXPECT_THAT(suggestValues(d, o).errorText(), HasSubstr("has no value to choose"));

    o.parts = {"R1"};
    o.ranges = {{"R1", {4.8e3, 5.5e3}}}; // E12 has 4.7k and 5.6k, nothing between
    auto empty = suggestValues(d, o);
    ASSERT_FALSE(empty.ok());
    EXPECT_THAT(empty.errorText(), HasSubstr("empty range: no E12 value between"));

    o.ranges.clear();
    o.parts = {"RL"};
    EXPECT_THAT(suggestValues(d, o).errorText(), HasSubstr("gives no series"));

    o.parts = {};
    EXPECT_THAT(suggestValues(d, o).errorText(), HasSubstr("at least one part"));

    const Design noWindow = parseOrFail(nonInverting(R"({"bandwidth_min": "1k"})"));
    EXPECT_THAT(suggestValues(noWindow, twoResistors()).errorText(),
                HasSubstr("needs the specs' gain window"));
}

namespace {

// Invented x101 preamp: R2 / R1 = 100k / 1k in E96 with a given tolerance, a 160 dB gain block
// (loop gain error about 1e-6), the gain window 101 +- 1 %.
std::string preamp(const std::string &tolerance, const std::string &r1 = "1k",
                   const std::string &r2 = "100k")
{
    return R"({"schema": "loopsketch.design/1", "title": "x", "parts": [
      {"id": "VS", "type": "vsource", "pos": "in", "neg": "0", "r_series": "10k"},
      {"id": "U1", "type": "gain_block", "in_p": "in", "in_n": "fb", "out": "out",
       "gain": "160dB", "gbw": "100M"},
      {"id": "R2", "type": "resistor", "a": "out", "b": "fb", "value": ")"
        + r2 + R"(", "series": "E96", "tolerance": ")" + tolerance + R"("},
      {"id": "R1", "type": "resistor", "a": "fb", "b": "0", "value": ")"
        + r1 + R"(", "series": "E96", "tolerance": ")" + tolerance + R"("},
      {"id": "RL", "type": "load", "a": "out", "b": "0", "r": "10k"}],
      "input": "VS", "output": "voltage",
      "sweep": {"start": "1", "stop": "100M", "points_per_decade": 10},
      "specs": {"gain": ["99.99", "102.01"]}})";
}

/// A search of the preamp's R2 and R1 with R1 from `r1Lo` to `r1Hi` ohms and R2 over a range
/// 100 times that, listing `best` rows with `yieldTrials` trials each.
SuggestOptions preampSearch(double r1Lo = 900, double r1Hi = 1100, int best = 5,
                            int yieldTrials = 100)
{
    SuggestOptions o;
    o.parts = {"R2", "R1"};
    o.ranges = {{"R1", {r1Lo, r1Hi}}, {"R2", {100 * r1Lo, 100 * r1Hi}}};
    o.best = best;
    o.yieldTrials = yieldTrials;
    return o;
}

} // namespace

// Issue 18: with 1 % resistors the x101 gain moves by up to about +-2 % (1 + R2 (1 + t) /
// (R1 (1 - t)), common practice), wider than the +-1 % window: rows meet the window at nominal
// but none at the worst case, and each says so with a yield below 1. With 0.1 % parts (+-0.2
// %) the exact-ratio rows meet it at every corner and in every trial.
TEST(Suggest, WorstCaseOverTheTolerances)
{
    auto loose = suggestValues(parseOrFail(preamp("1%")), preampSearch());
    ASSERT_TRUE(loose.ok()) << loose.errorText();
    EXPECT_TRUE(loose->targetsMet);
    EXPECT_FALSE(loose->worstCaseMet);
    ASSERT_FALSE(loose->suggestions.empty());
    for (const Suggestion &s : loose->suggestions) {
        EXPECT_FALSE(s.worstCasePass);
        EXPECT_TRUE(s.toleranced);
        EXPECT_LT(s.yield, 1.0);
    }
    EXPECT_TRUE(loose->suggestions.front().meetsSpecs);
    EXPECT_GT(loose->suggestions.front().yield, 0.3);
    EXPECT_THAT(suggestToText(*loose, "V/V"), HasSubstr("at nominal only"));
    EXPECT_THAT(suggestToJson(*loose, "V/V"), HasSubstr(R"("worst_case_pass": false)"));

    auto tight = suggestValues(parseOrFail(preamp("0.1%")), preampSearch());
    ASSERT_TRUE(tight.ok()) << tight.errorText();
    EXPECT_TRUE(tight->worstCaseMet);
    const Suggestion &best = tight->suggestions.front();
    EXPECT_TRUE(best.worstCasePass);
    EXPECT_NEAR(best.yield, 1.0, 1e-12);
    EXPECT_NEAR(valueOf(best, "R2") / valueOf(best, "R1"), 100.0, 1e-9);
    const std::string json = suggestToJson(*tight, "V/V");
    EXPECT_THAT(json, HasSubstr(R"("worst_case_pass": true)"));
    EXPECT_THAT(json, HasSubstr(R"("yield": 1.0)"));
    EXPECT_THAT(json, HasSubstr(R"("yield_trials": 100)"));
}

// The ranking's order, one key at a time (issue 18): specs met at the worst case, then yield,
// then the objective, then decades from the current values, then the values in the order of the
// parts; objectives within 1e-9 relative tie.
TEST(Suggest, RankingOrderAndTieBreak)
{
    Suggestion a, b;
    a.values = {{"R2", 100e3}, {"R1", 1e3}};
    b.values = {{"R2", 120e3}, {"R1", 1.2e3}};
    a.objective = b.objective = 1e-3;
    EXPECT_TRUE(ranksBefore(a, b)); // values: 100k before 120k
    EXPECT_FALSE(ranksBefore(b, a));
    b.decadesFromCurrent = 0.0;
    a.decadesFromCurrent = 0.1;
    EXPECT_TRUE(ranksBefore(b, a)); // fewer decades
    a.objective = 0.5e-3;
    EXPECT_TRUE(ranksBefore(a, b)); // lower objective
    b.objective = 0.5e-3 * (1 + 1e-12);
    EXPECT_TRUE(ranksBefore(b, a)); // a tie in the objective: decades again
    b.yield = 0.9;
    a.yield = 0.95;
    EXPECT_TRUE(ranksBefore(a, b)); // higher yield
    b.specsMetWorstCase = 1;
    EXPECT_TRUE(ranksBefore(b, a)); // more specs at the worst case

    // On the preamp with 0.1 % parts, every exact 100:1 pair has the same metrics, yield and
    // objective: between the two pairs as far from the current values at their geometric
    // mean (E96 1.07k and 1.10k, IEC 60063), the smaller comes first.
    auto r = suggestValues(parseOrFail(preamp("0.1%", "1.08489630840924k", "108.489630840924k")),
                           preampSearch(800, 1500, 2, 20));
    ASSERT_TRUE(r.ok()) << r.errorText();
    ASSERT_EQ(r->suggestions.size(), 2u);
    EXPECT_NEAR(valueOf(r->suggestions[0], "R2"), 107e3, 1e-6);
    EXPECT_NEAR(valueOf(r->suggestions[0], "R1"), 1.07e3, 1e-9);
    EXPECT_NEAR(valueOf(r->suggestions[1], "R2"), 110e3, 1e-6);
    EXPECT_NEAR(valueOf(r->suggestions[1], "R1"), 1.10e3, 1e-9);
    EXPECT_NEAR(r->suggestions[0].decadesFromCurrent, r->suggestions[1].decadesFromCurrent, 1e-4);
}

// A yield of 0 % on every row is said, never left to read as a figure (issue 18). Two ways
// to it: the Monte Carlo run refused by the work budget (kMaxWorkOperations; a million trials
// of each row of the demo, about 1e11 operations), where the rows have no yield at all and
// each says why; and a target no trial can meet (a bandwidth of 1 THz from a gain block of
// 100 MHz gbw), where every trial was run.
TEST(Suggest, YieldZeroOnEveryRowIsSaid)
{
    SuggestOptions o;
    o.parts = {"RF", "CF"};
    o.decades = 0.5;
    o.best = 2;
    o.shortlist = 2;
    o.yieldTrials = kMaxTrials;
    auto refused = suggestValues(test::loadOrFail(test::kDesignsDir / "demo.loopsketch"), o);
    ASSERT_TRUE(refused.ok()) << refused.errorText();
    ASSERT_FALSE(refused->suggestions.empty());
    for (const Suggestion &s : refused->suggestions)
        EXPECT_THAT(s.yieldProblem, HasSubstr("over the budget"));
    EXPECT_THAT(refused->yieldNote, HasSubstr("no yield computed"));
    EXPECT_THAT(refused->yieldNote, HasSubstr("reduce the trials"));
    const std::string text = suggestToText(*refused, "V/A");
    EXPECT_THAT(text, HasSubstr("Note: no yield computed"));
    EXPECT_THAT(text, HasSubstr("yield not computed"));
    EXPECT_THAT(text, Not(HasSubstr("yield 0.0 %")));
    const std::string json = suggestToJson(*refused, "V/A");
    EXPECT_THAT(json, HasSubstr(R"("yield": null)"));
    EXPECT_THAT(json, HasSubstr(R"("yield_problem": "the Monte Carlo run)"));
    EXPECT_THAT(json, HasSubstr(R"("yield_note": "no yield computed)"));

    o = preampSearch();
    o.best = 2;
    o.shortlist = 2;
    std::string unreachable = preamp("1%");
    const std::string window = R"("specs": {"gain": ["99.99", "102.01"]})";
    unreachable.replace(unreachable.find(window), window.size(),
                        R"("specs": {"gain": ["99.99", "102.01"], "bandwidth_min": "1T"})");
    o.yieldTrials = 20;
    auto none = suggestValues(parseOrFail(unreachable), o);
    ASSERT_TRUE(none.ok()) << none.errorText();
    ASSERT_FALSE(none->suggestions.empty());
    for (const Suggestion &s : none->suggestions) {
        EXPECT_TRUE(s.yieldProblem.empty()) << s.yieldProblem;
        EXPECT_LT(s.yield, 1e-12);
    }
    EXPECT_THAT(none->yieldNote, HasSubstr("yield 0 % on every row"));
    EXPECT_THAT(suggestToJson(*none, "V/V"), HasSubstr(R"("yield": 0.0)"));
    EXPECT_THAT(suggestToText(*none, "V/V"), HasSubstr("Note: yield 0 % on every row"));

    // Rows with some yield carry no note.
    auto some = suggestValues(parseOrFail(preamp("1%")), preampSearch());
    ASSERT_TRUE(some.ok()) << some.errorText();
    EXPECT_TRUE(some->yieldNote.empty()) << some->yieldNote;
    EXPECT_THAT(suggestToJson(*some, "V/V"), HasSubstr(R"("yield_note": null)"));
}
