// analyze()'s stability verdict, checked against the closed-loop poles found by hand and by
// the Routh-Hurwitz criterion (source beside each check): an unstable loop keeps its loop
// gain and poles but has no closed-loop quantities and fails every spec; the lean trial
// metrics carry the same verdict.

#include "loopsketch/analysis/analysis.h"
#include "loopsketch/analysis/trialmetrics.h"
#include "loopsketch/design/designfile.h"

#include "designs.h"
#include "followerdesign.h"
#include "numeric.h"
#include "textchecks.h"

#include <gmock/gmock.h>
#include <gtest/gtest.h>

#include <cmath>
#include <complex>
#include <optional>
#include <string>
#include <vector>

using namespace loopsketch;
using namespace loopsketch::test;
using ::testing::HasSubstr;

namespace {

/// Coefficients (highest power first) of prod (1 + s/w_k) for poles in Hz.
std::vector<double> productOfSections(const std::vector<double> &hz)
{
    std::vector<double> p{1.0};
    for (double f : hz) {
        const double tau = 1.0 / (2 * kPi * f);
        std::vector<double> next(p.size() + 1, 0.0);
        for (std::size_t i = 0; i < p.size(); ++i) {
            next[i] += p[i] * tau;
            next[i + 1] += p[i];
        }
        p = next;
    }
    return p;
}

/// Number of roots in the right half-plane by the Routh-Hurwitz criterion: the sign
/// changes in the first column of the Routh array (Ogata, Modern Control Engineering,
/// stability-analysis section; from memory). No zero may appear in the first column.
int routhRightHalfPlaneRoots(const std::vector<double> &c)
{
    std::vector<std::vector<double>> rows(2);
    for (std::size_t i = 0; i < c.size(); ++i)
        rows[i % 2].push_back(c[i]);
    rows[1].resize(rows[0].size(), 0.0);
    while (rows.size() < c.size()) {
        const auto &a = rows[rows.size() - 2];
        const auto &b = rows[rows.size() - 1];
        std::vector<double> next(a.size(), 0.0);
        for (std::size_t j = 0; j + 1 < a.size(); ++j)
            next[j] = (b[0] * a[j + 1] - a[0] * b[j + 1]) / b[0];
        EXPECT_NE(next[0], 0.0) << "special case of the Routh array";
        rows.push_back(next);
    }
    int changes = 0;
    for (std::size_t i = 0; i + 1 < rows.size(); ++i)
        changes += (rows[i][0] < 0) != (rows[i + 1][0] < 0);
    return changes;
}

void expectNoClosedLoopQuantities(const Analysis &a)
{
    EXPECT_FALSE(a.stable);
    EXPECT_FALSE(a.bandwidthHz.has_value());
    EXPECT_FALSE(a.peakingDb.has_value());
    EXPECT_FALSE(a.step.riseTimeS.has_value());
    EXPECT_FALSE(a.step.overshootPct.has_value());
    EXPECT_FALSE(a.step.settlingTimeS.has_value());
    EXPECT_TRUE(a.step.timeS.empty());
    ASSERT_TRUE(a.noise.has_value()) << a.noiseProblem;
    EXPECT_FALSE(a.noise->outputRms.has_value());
    EXPECT_FALSE(a.noise->inputRms.has_value());
    EXPECT_THAT(a.closedLoopReason, HasSubstr("right half-plane"));
    const std::string json = analysisToJson(a);
    expectContainsEach(json,
                       {"\"stable\": false", "\"bandwidth_hz\": null", "\"peaking_db\": null",
                        "\"settling_time_s\": null", "\"output_rms\": null"});
    EXPECT_THAT(json, HasSubstr("\"rhp_poles\": " + std::to_string(a.rhpPoles)));
    const std::string text = analysisToText(a);
    EXPECT_THAT(text, HasSubstr("UNSTABLE"));
    EXPECT_THAT(text, HasSubstr("right-half-plane pole"));
    EXPECT_THAT(text, ::testing::Not(HasSubstr("overshoot                 0")));
    // Every spec fails, with the reason.
    Specs specs;
    specs.gainMin = Value{0.5, "0.5"};
    specs.bandwidthMin = Value{1.0, "1"};
    specs.phaseMarginMinDeg = -1000.0;
    const SpecCheck check = checkSpecs(specs, Sweep{}, trialMetricsOf(a));
    EXPECT_FALSE(check.gain);
    EXPECT_FALSE(check.bandwidth);
    EXPECT_FALSE(check.phaseMargin);
    EXPECT_FALSE(check.all());
    EXPECT_EQ(check.reason, "unstable");
}

int rhpCount(const Analysis &a)
{
    int n = 0;
    for (const ClosedLoopPole &p : a.poles)
        n += p.s.real() > 0;
    return n;
}

} // namespace

// Positive feedback around a single-pole gain block: 1 - a0/(1 + s/w1) = 0 puts one real
// pole at s = w1 (a0 - 1) (the characteristic equation solved by hand; common practice).
TEST(Stability, PositiveFeedbackHasOneRealRightHalfPlanePole)
{
    Follower f;
    f.gain = 1e4;
    f.polesHz = {100.0};
    f.positive = true;
    const Analysis a = analyzeOrFail(f.design());
    expectNoClosedLoopQuantities(a);
    EXPECT_EQ(a.rhpPoles, 1);
    ASSERT_EQ(rhpCount(a), 1);
    for (const ClosedLoopPole &p : a.poles)
        if (p.s.real() > 0) {
            EXPECT_LT(relErr(p.s.real(), 2 * kPi * 100.0 * (1e4 - 1)), 1e-9);
            EXPECT_NEAR(p.s.imag(), 0.0, 1e-9 * p.s.real());
        }
    // The loop gain is still there: negative at DC, so its phase starts at -180 degrees.
    ASSERT_TRUE(a.returnRatio.loopGain.has_value());
    EXPECT_LT(*a.returnRatio.loopGain, 0.0);
    EXPECT_FALSE(a.curves.loopGain.empty());
}

// A three-pole follower with too much gain: negative phase margin. The number of right
// half-plane roots of (1 + s/w1)(1 + s/w2)(1 + s/w3) + a0 by the Routh-Hurwitz criterion.
TEST(Stability, NegativePhaseMarginLoopIsUnstableWithThePolesRouthCounts)
{
    Follower f;
    f.gain = 1e5;
    f.polesHz = {1e3, 1e5, 3e5};
    const Analysis a = analyzeOrFail(f.design());
    EXPECT_LT(valueOf(a.margins.phaseMarginDeg), 0.0);
    std::vector<double> characteristic = productOfSections(f.polesHz);
    characteristic.back() += f.gain;
    const int expected = routhRightHalfPlaneRoots(characteristic);
    EXPECT_EQ(expected, 2);
    EXPECT_EQ(a.rhpPoles, expected);
    EXPECT_EQ(rhpCount(a), expected);
    expectNoClosedLoopQuantities(a);
}

// 400 dB of gain (1e20) around two poles and the pole of r_out with the load capacitance:
// the poles lie near 3 THz, where a test of the generalized eigenvalues relative to their
// size once discarded them all. Routh-Hurwitz on the characteristic cubic
// (1 + s/w1)(1 + s/w2)(R + r_out + s r_out R C) + a0 R (node equation at the output, by
// hand) gives the count.
TEST(Stability, FourHundredDecibelLoopReportsItsRightHalfPlanePoles)
{
    Follower f;
    f.gain = 1e20;
    f.polesHz = {100.0, 3e6};
    f.rOut = 13.0;
    f.loadC = 10e-12;
    const Analysis a = analyzeOrFail(f.design());
    const double r = 10e3;
    std::vector<double> sections = productOfSections(f.polesHz);
    std::vector<double> characteristic(sections.size() + 1, 0.0);
    for (std::size_t i = 0; i < sections.size(); ++i) {
        characteristic[i] += sections[i] * f.rOut * r * f.loadC;
        characteristic[i + 1] += sections[i] * (r + f.rOut);
    }
    characteristic.back() += f.gain * r;
    EXPECT_EQ(routhRightHalfPlaneRoots(characteristic), 2);
    EXPECT_EQ(a.poles.size(), 3u);
    EXPECT_EQ(a.rhpPoles, 2);
    expectNoClosedLoopQuantities(a);
}

// A gain of 1e300 (6000 dB) in the demo: the circuit equations span more than double
// precision can resolve, the pole search counts closed-loop poles it cannot locate, and
// without them there is no verdict (common practice: stability is decided by every
// closed-loop pole, none may be missing). Before, the empty pole list read "stable" and the
// loop got a bandwidth, a noise rms and passing specs.
TEST(Stability, PolesThatCannotBeLocatedLeaveTheStabilityUnknown)
{
    Design d = loadOrFail(kDesignsDir / "demo.loopsketch");
    Part *u1 = d.findPart("U1");
    ASSERT_NE(u1, nullptr);
    u1->fields["gain"] = Value{1e300, "1e300"};
    const Analysis a = analyzeOrFail(d);
    EXPECT_FALSE(a.stabilityKnown);
    EXPECT_FALSE(a.stable);
    EXPECT_EQ(a.rhpPoles, 0);
    EXPECT_THAT(a.closedLoopReason, HasSubstr("stability unknown"));
    EXPECT_THAT(a.closedLoopReason, HasSubstr("could not be located"));
    EXPECT_THAT(a.closedLoopReason, HasSubstr("gain of U1"));
    bool warnsOfGain = false;
    for (const Diagnostic &w : a.warnings)
        warnsOfGain = warnsOfGain
            || (w.part == "U1" && w.field == "gain"
                && w.message.find("not located") != std::string::npos);
    EXPECT_TRUE(warnsOfGain);
    // Nothing that needs a stable loop, as for an unstable one.
    EXPECT_FALSE(a.bandwidthHz.has_value());
    EXPECT_FALSE(a.peakingDb.has_value());
    EXPECT_FALSE(a.step.riseTimeS.has_value());
    EXPECT_FALSE(a.step.overshootPct.has_value());
    EXPECT_FALSE(a.step.settlingTimeS.has_value());
    ASSERT_TRUE(a.noise.has_value());
    EXPECT_FALSE(a.noise->outputRms.has_value());
    EXPECT_FALSE(a.noise->inputRms.has_value());
    const std::string json = analysisToJson(a);
    expectContainsEach(json,
                       {"\"stable\": null", "\"bandwidth_hz\": null", "\"output_rms\": null"});
    const std::string text = analysisToText(a);
    EXPECT_THAT(text, HasSubstr("STABILITY UNKNOWN"));
    EXPECT_THAT(text, ::testing::Not(HasSubstr("  closed loop               stable")));
    EXPECT_THAT(text, ::testing::Not(HasSubstr("UNSTABLE")));
    // Every spec of the demo fails, for that reason.
    ASSERT_FALSE(a.specs.empty());
    for (const SpecVerdict &v : a.specs) {
        EXPECT_FALSE(v.pass) << v.name;
        EXPECT_EQ(v.reason, "stability unknown") << v.name;
    }
}

// The lean trial metrics of the spread and suggest searches see the same verdict, and an
// unstable trial fails every spec.
TEST(Stability, TrialMetricsCarryTheVerdict)
{
    Follower f;
    f.gain = 1e5;
    f.polesHz = {1e3, 1e5, 3e5};
    const Design d = f.design();
    auto m = evaluateTrial(d, coarseGrid(d.sweep, 20));
    ASSERT_TRUE(m.ok()) << m.errorText();
    EXPECT_FALSE(m->stable);
    Specs none;
    EXPECT_FALSE(checkSpecs(none, d.sweep, *m).all());
    f.gain = 10;
    const Design stableDesign = f.design();
    auto s = evaluateTrial(stableDesign, coarseGrid(stableDesign.sweep, 20));
    ASSERT_TRUE(s.ok()) << s.errorText();
    EXPECT_TRUE(s->stable);
    EXPECT_TRUE(checkSpecs(none, stableDesign.sweep, *s).all());
}

// ---------------------------------------------------------------------------------------
// Second-order relations

// The window shows the main curves first and adds the noise afterwards (ui/README.md §3):
// addNoiseAnalysis() on a result made without noise must give what the full analyze() gives,
// every figure of the analysis JSON and every density (the full analyze() is the reference;
// its noise figures are checked against textbook values in noise_test.cpp).
TEST(LazyNoise, AddedAfterwardsEqualsTheFullAnalysis)
{
    for (const std::string &name : exampleDesigns()) {
        SCOPED_TRACE(name);
        const Design design = loadOrFail(kDesignsDir / name);
        const auto full = analyze(design);
        ASSERT_TRUE(full) << full.errorText();
        AnalysisOptions without;
        without.noise = false;
        auto first = analyze(design, {}, without);
        ASSERT_TRUE(first) << first.errorText();
        std::optional<Analysis> lazy = std::move(first).value();
        EXPECT_FALSE(lazy->noise.has_value());
        addNoiseAnalysis(design, *lazy);
        ASSERT_EQ(full->noise.has_value(), lazy->noise.has_value()) << full->noiseProblem;
        EXPECT_EQ(full->noiseProblem, lazy->noiseProblem);
        if (!full->noise)
            continue;
        const NoiseAnalysis &a = *full->noise, &b = *lazy->noise;
        ASSERT_EQ(a.outputDensity.size(), b.outputDensity.size());
        for (std::size_t i = 0; i < a.outputDensity.size(); ++i)
            EXPECT_LE(relErr(b.outputDensity[i], a.outputDensity[i]), 1e-12) << i;
        ASSERT_EQ(a.cumulativeRms.size(), b.cumulativeRms.size());
        for (std::size_t i = 0; i < a.cumulativeRms.size(); ++i)
            EXPECT_LE(relErr(b.cumulativeRms[i], a.cumulativeRms[i]), 1e-12) << i;
        ASSERT_TRUE(a.outputRms && b.outputRms);
        EXPECT_LE(relErr(*b.outputRms, *a.outputRms), 1e-12);
        EXPECT_EQ(a.contributions.size(), b.contributions.size());
        EXPECT_EQ(full->specs.size(), lazy->specs.size());
        EXPECT_EQ(analysisToJson(*full), analysisToJson(*lazy));
    }
}

// An unstable loop's noise has densities but no band power, added afterwards as in one run
// (the same loop as PositiveFeedbackHasOneRealRightHalfPlanePole: common practice).
TEST(LazyNoise, UnstableLoopGetsDensitiesWithoutBandPower)
{
    Design design = loadOrFail(kDesignsDir / "demo.loopsketch");
    for (Part &p : design.parts) {
        if (p.type == PartType::GainBlock)
            std::swap(p.nodes.at(0), p.nodes.at(1)); // in_p and in_n
    }
    const auto full = analyze(design);
    ASSERT_TRUE(full) << full.errorText();
    ASSERT_FALSE(full->stable);
    AnalysisOptions without;
    without.noise = false;
    auto first = analyze(design, {}, without);
    ASSERT_TRUE(first) << first.errorText();
    std::optional<Analysis> lazy = std::move(first).value();
    addNoiseAnalysis(design, *lazy);
    ASSERT_TRUE(lazy->noise.has_value()) << lazy->noiseProblem;
    EXPECT_FALSE(lazy->noise->outputRms.has_value());
    EXPECT_EQ(analysisToJson(*full), analysisToJson(*lazy));
}
