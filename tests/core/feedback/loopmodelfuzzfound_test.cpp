// Cases the analysis fuzzer found in the loop model (tests/fuzz/): each failed before its fix.
// The source of every expected value is named beside its check.

#include "loopsketch/analysis/analysis.h"
#include "loopsketch/design/designfile.h"
#include "loopsketch/feedback/loopmodel.h"

#include "designs.h"
#include "numeric.h"

#include <gmock/gmock.h>
#include <gtest/gtest.h>

#include <algorithm>
#include <cmath>
#include <complex>
#include <limits>
#include <string>

using namespace loopsketch;
using namespace loopsketch::test;
using ::testing::HasSubstr;

// ---------------------------------------------------------------------------------------
// Cases the analysis fuzzer found (tests/fuzz/): each failed before its fix
// ---------------------------------------------------------------------------------------

namespace {

std::string designText(const std::string &parts, const std::string &input = "VS")
{
    return R"({"schema": "loopsketch.design/1", "title": "case", "parts": [)" + parts
        + R"(], "input": ")" + input
        + R"(", "output": "voltage", "sweep": {"start": "1", "stop": "1M", "points_per_decade": 10}})";
}

/// A value that exists: neither part NaN nor infinite.
bool finiteValue(std::complex<double> v)
{
    return std::isfinite(v.real()) && std::isfinite(v.imag());
}

} // namespace

// Derived from Franco (3rd ed.), example 1.9(b)'s circuit (the follower: a = 2e5, rd = 2M,
// ro = 75, the 1 TOhm stand-in load): the network is a bare wire, beta = 1. By hand, the A
// circuit holds in_n at ground, so A = a RL/(RL + ro), gain A/(1 + A), z_in = rd (1 + A),
// z_out = ro/(1 + A): 0.999995, 400.0 GOhm, 375 uOhm as in the book. Before the fix A was 0
// (the split input floated) and the estimate NaN.
TEST(FeedbackFuzzFound, FollowerTwoPortEstimateWithABareWireNetwork)
{
    const Analysis a = analyzeOrFail(loadReference("franco-1-9b-follower.loopsketch"));
    ASSERT_TRUE(a.twoPort.has_value()) << a.twoPortProblem << a.topologyReason;
    const double bigA = 2e5 * 1e12 / (1e12 + 75.0);
    EXPECT_LT(relErr(valueOf(a.twoPort->a), bigA), 1e-9);
    EXPECT_LT(relErr(valueOf(a.twoPort->beta), 1.0), 1e-12);
    EXPECT_LT(relErr(valueOf(a.twoPort->gain), bigA / (1.0 + bigA)), 1e-12);
    EXPECT_LT(relErr(valueOf(a.twoPort->zIn), 2e6 * (1.0 + bigA)), 1e-6);
    EXPECT_LT(relErr(valueOf(a.twoPort->zOut), 75.0 / (1.0 + bigA)), 1e-6);
    for (std::size_t i = 0; i < a.frequenciesHz.size(); ++i)
        ASSERT_TRUE(std::isfinite(std::abs(a.curves.gainTwoPort[i]))) << a.frequenciesHz[i];
}

// Common practice: a series output resistor between the gain block and the load, with the
// feedback taken at the load, belongs to the amplifier, not to the network; the
// transimpedance tends to -RF. Before the fix RO was counted in the network, which cut the
// gain block off from the load in the A circuit (A = 0, estimate NaN).
TEST(FeedbackFuzzFound, SeriesOutputResistorStaysInTheAmplifier)
{
    const Design d = parseOrFail(designText(
        R"({"id": "IS", "type": "isource", "to": "in", "from": "0", "r_parallel": "10M"},
           {"id": "U1", "type": "gain_block", "in_p": "0", "in_n": "in", "out": "out", "gain": 1e7, "r_out": "50"},
           {"id": "RO", "type": "resistor", "a": "out", "b": "hot", "value": "100"},
           {"id": "RF", "type": "resistor", "a": "hot", "b": "in", "value": "10k"},
           {"id": "RL", "type": "load", "a": "hot", "b": "0", "r": "1k"})",
        "IS"));
    const Analysis a = analyzeOrFail(d);
    ASSERT_TRUE(a.topology.has_value()) << a.topologyReason;
    EXPECT_EQ(a.topology->name(), "shunt-shunt");
    EXPECT_EQ(a.topology->networkParts, std::vector<std::string>{"RF"});
    ASSERT_TRUE(a.twoPort.has_value()) << a.twoPortProblem;
    // |T| ~ 1e7 * 1k/(1k + 150) ~ 8.7e6: both methods are within ~1e-6 of -RF.
    EXPECT_LT(relErr(valueOf(a.twoPort->gain), -10e3), 1e-5);
    EXPECT_LT(relErr(valueOf(a.twoPort->gain), valueOf(a.exact.gain)), 1e-5);
}

// Common practice: a bias resistor from the non-inverting input to ground sits across the
// source (a divider RB/(RS + RB) = 1/2 ahead of the gain 1 + R2/R1 = 11), outside the loop.
// Before the fix the two-port estimate left it out of the source and tended to 11, not 5.5.
TEST(FeedbackFuzzFound, BiasResistorAtSeriesMixingInputCountsOnTheSourceSide)
{
    const Design d = parseOrFail(designText(
        R"({"id": "VS", "type": "vsource", "pos": "in", "neg": "0", "r_series": "1k"},
           {"id": "RB", "type": "resistor", "a": "in", "b": "0", "value": "1k"},
           {"id": "U1", "type": "gain_block", "in_p": "in", "in_n": "fb", "out": "out", "gain": 1e7},
           {"id": "R2", "type": "resistor", "a": "out", "b": "fb", "value": "10k"},
           {"id": "R1", "type": "resistor", "a": "fb", "b": "0", "value": "1k"},
           {"id": "RL", "type": "load", "a": "out", "b": "0", "r": "10k"})"));
    const Analysis a = analyzeOrFail(d);
    ASSERT_TRUE(a.topology.has_value()) << a.topologyReason;
    EXPECT_EQ(a.topology->name(), "series-shunt");
    ASSERT_TRUE(a.twoPort.has_value()) << a.twoPortProblem;
    EXPECT_LT(relErr(valueOf(a.exact.gain), 5.5), 1e-5);
    EXPECT_LT(relErr(valueOf(a.twoPort->gain), 5.5), 1e-5);
    // The input draws no current (no r_in, no c_in): the source sees RB alone.
    EXPECT_LT(relErr(valueOf(a.exact.zIn), 1e3), 1e-9);
    EXPECT_LT(relErr(valueOf(a.twoPort->zIn), 1e3), 1e-9);
}

// Common practice: with no loop (nothing from the output back to an input) T = 0 and the
// asymptotic gain model reduces to its direct term, G_0 = the open-loop gain 1000 * RL/(RL +
// r_out). Before the fix G_inf (infinite at T = 0) made that curve NaN everywhere.
TEST(FeedbackFuzzFound, AsymptoticGainModelWithoutALoopIsTheDirectGain)
{
    const Design d = parseOrFail(designText(
        R"({"id": "VS", "type": "vsource", "pos": "in", "neg": "0"},
           {"id": "U1", "type": "gain_block", "in_p": "in", "in_n": "0", "out": "out", "gain": 1000, "r_out": "100"},
           {"id": "RL", "type": "load", "a": "out", "b": "0", "r": "900"})"));
    const Analysis a = analyzeOrFail(d);
    EXPECT_NEAR(valueOf(a.exact.gain), 900.0, 1e-9);
    for (std::size_t i = 0; i < a.frequenciesHz.size(); ++i) {
        EXPECT_EQ(std::abs(a.curves.loopGain[i]), 0.0);
        EXPECT_LT(relErr(a.curves.gainReturnRatio[i], a.curves.gainExact[i]), 1e-12)
            << a.frequenciesHz[i];
    }
}

// Common practice: a network that is one resistor from the output to the inverting input,
// with nothing from there to ground, draws no current at port 2 (h22 = 0): no output
// loading, 0 dB. Before the fix h22 = 0 was inverted (infinity / infinity, NaN).
TEST(FeedbackFuzzFound, OpenPortTwoGivesNoOutputLoading)
{
    const Design d = parseOrFail(designText(
        R"({"id": "VS", "type": "vsource", "pos": "in", "neg": "0", "r_series": "1k"},
           {"id": "U1", "type": "gain_block", "in_p": "in", "in_n": "fb", "out": "out", "gain": 1e5, "r_in": "1M", "r_out": "100"},
           {"id": "RF", "type": "resistor", "a": "out", "b": "fb", "value": "10k"},
           {"id": "RL", "type": "load", "a": "out", "b": "0", "r": "1k"})"));
    const Analysis a = analyzeOrFail(d);
    ASSERT_TRUE(a.twoPort.has_value()) << a.twoPortProblem << a.topologyReason;
    EXPECT_NEAR(valueOf(a.twoPort->outputLoadingDb), 0.0, 1e-12);
    for (const cd v : a.curves.outputLoading)
        EXPECT_LT(std::abs(v - 1.0), 1e-12);
}

// Common practice: a source that drives both gain-block inputs (here through RA to the
// inverting input and RB to the non-inverting one) is a differential drive, not one mixing
// port. Before the fix it was taken as shunt mixing, with a two-port loop gain of the wrong
// sign.
TEST(FeedbackFuzzFound, SourceDrivingBothInputsHasNoTwoPortForm)
{
    const Design d = parseOrFail(designText(
        R"({"id": "VS", "type": "vsource", "pos": "in", "neg": "0", "r_series": "100"},
           {"id": "RA", "type": "resistor", "a": "in", "b": "inn", "value": "10k"},
           {"id": "RB", "type": "resistor", "a": "in", "b": "inp", "value": "10k"},
           {"id": "RG", "type": "resistor", "a": "inp", "b": "0", "value": "10k"},
           {"id": "U1", "type": "gain_block", "in_p": "inp", "in_n": "inn", "out": "out", "gain": 1e5},
           {"id": "RF", "type": "resistor", "a": "out", "b": "inn", "value": "100k"},
           {"id": "RL", "type": "load", "a": "out", "b": "0", "r": "10k"})"));
    const Analysis a = analyzeOrFail(d);
    EXPECT_FALSE(a.topology.has_value());
    EXPECT_NE(a.topologyReason.find("both gain-block inputs"), std::string::npos)
        << a.topologyReason;
    EXPECT_FALSE(a.twoPort.has_value());
}

// Kirchhoff's current law (common practice): a feedback network that touches ground nowhere
// (here RF alone, from the load's return to the inverting input) cannot return a port
// current, so its z parameters are infinite and the two-port estimate does not exist. Before
// the fix the parameters came out of a nearly singular solve as round-off (about -2.7e20 Ω
// for such a network), and every curve of the estimate was NaN beside a DC summary.
TEST(FeedbackFuzzFound, NetworkWithoutGroundHasNoTwoPortEstimate)
{
    const Part rf = [] {
        auto d = parseDesign(designText(
                                 R"({"id": "VS", "type": "vsource", "pos": "in", "neg": "0"},
           {"id": "U1", "type": "gain_block", "in_p": "in", "in_n": "fb", "out": "out", "gain": 1e4, "r_out": "100"},
           {"id": "LD", "type": "load", "a": "out", "b": "ret", "r": "1k"},
           {"id": "RF", "type": "resistor", "a": "ret", "b": "fb", "value": "100G"})"),
                             "generated");
        EXPECT_TRUE(d.ok()) << d.errorText();
        return d.ok() ? *d->findPart("RF") : Part{};
    }();
    auto network = TwoPortNetwork::build({rf}, "fb", "ret", ParameterSet::Z);
    ASSERT_FALSE(network.ok());
    EXPECT_THAT(network.errorText(), HasSubstr("no path to ground"));

    const Design d = parseOrFail(designText(
        R"({"id": "VS", "type": "vsource", "pos": "in", "neg": "0"},
           {"id": "U1", "type": "gain_block", "in_p": "in", "in_n": "fb", "out": "out", "gain": 1e4, "r_out": "100"},
           {"id": "LD", "type": "load", "a": "out", "b": "ret", "r": "1k"},
           {"id": "RF", "type": "resistor", "a": "ret", "b": "fb", "value": "100G"})"));
    const Analysis a = analyzeOrFail(d);
    ASSERT_TRUE(a.topology.has_value()) << a.topologyReason;
    EXPECT_EQ(a.topology->name(), "series-series");
    EXPECT_FALSE(a.twoPort.has_value());
    EXPECT_THAT(a.twoPortProblem, HasSubstr("no path to ground"));
    for (const cd v : a.curves.a)
        EXPECT_TRUE(std::isnan(v.real()));
}

// Kirchhoff's current law (common practice): a current source that reaches the gain block
// only through a chain of series capacitors and resistors into an ideal input (no r_in, c_in
// or c_cm) drives no current into the chain: z_in is infinite at every frequency. The design
// is the fuzzer's seed 91 (tests/data/fuzz-found). Before the fix the input's system, singular
// at every frequency, was solved anyway: z_in read about 1e20 Ω at some frequencies and NaN
// at 47 of 124.
TEST(FeedbackFuzzFound, InputLeadingOnlyIntoAnIdealInputHasNoFiniteImpedance)
{
    auto d = loadDesign(std::string(LOOPSKETCH_TEST_DATA_DIR)
                        + "/fuzz-found/z-in-round-off-for-open-input.loopsketch");
    ASSERT_TRUE(d.ok()) << d.errorText();
    const Analysis a = analyzeOrFail(*d);
    EXPECT_TRUE(!a.exact.zIn || (std::isinf(*a.exact.zIn) && *a.exact.zIn > 0));
    const auto infinite = [](cd v) {
        return std::isinf(v.real()) && v.real() > 0;
    };
    const auto missing = [](cd v) {
        return std::isnan(v.real());
    };
    const auto &z = a.curves.zInExact;
    EXPECT_TRUE(std::all_of(z.begin(), z.end(), infinite)
                || std::all_of(z.begin(), z.end(), missing));
    const auto &zr = a.curves.zInReturnRatio;
    EXPECT_TRUE(std::all_of(zr.begin(), zr.end(), infinite)
                || std::all_of(zr.begin(), zr.end(), missing));
}

// Thevenin's theorem (common practice): series mixing reads the source as a voltage behind
// an impedance, and an ideal current source with nothing to ground on its side (fuzz seed
// 17012: SIG into in_p through C1 alone) has no such form, its impedance being infinite at
// every frequency. Before the fix the estimate divided rounding by rounding: `a` and every
// two-port curve after it were NaN at 14 of 20 points and finite at 6, with no reason. Now
// the family is missing as a whole with the reason naming the source and its fields; with
// r_parallel given (1 MOhm) the same circuit has the estimate at every point.
TEST(FeedbackFuzzFound, IdealCurrentSourceThroughSeriesPartsHasNoSeriesMixingEstimate)
{
    const std::string path = std::string(LOOPSKETCH_TEST_DATA_DIR)
        + "/fuzz-found/two-port-a-partly-missing-source-through-capacitor.loopsketch";
    const Design ideal = loadOrFail(path);
    const Analysis a = analyzeOrFail(ideal);
    ASSERT_TRUE(a.topology.has_value());
    EXPECT_FALSE(a.twoPort.has_value());
    EXPECT_THAT(a.twoPortProblem, HasSubstr("SIG is a current source with no r_parallel"));
    const auto missing = [](cd v) {
        return std::isnan(v.real()) && std::isnan(v.imag());
    };
    for (const auto *curve : {&a.curves.a, &a.curves.loopGainTwoPort, &a.curves.gainTwoPort,
                              &a.curves.zInTwoPort, &a.curves.zOutTwoPort})
        EXPECT_TRUE(std::all_of(curve->begin(), curve->end(), missing));

    Design shunted = ideal;
    for (Part &p : shunted.parts)
        if (p.id == "SIG")
            p.fields["r_parallel"] = Value{1e6, "1M"};
    const Analysis b = analyzeOrFail(shunted);
    ASSERT_TRUE(b.twoPort.has_value()) << b.twoPortProblem;
    for (const auto *curve : {&b.curves.a, &b.curves.loopGainTwoPort, &b.curves.gainTwoPort,
                              &b.curves.zInTwoPort, &b.curves.zOutTwoPort})
        EXPECT_TRUE(std::all_of(curve->begin(), curve->end(), finiteValue));
}

// Fuzz seed 880188 (series-shunt, 49 parts, a gain near -500 dB): the asymptotic-gain curve
// (G0 + a b / (1 + T), the return-ratio system's feedthrough and cross terms) was off the
// exact gain by up to 9e-5 at 7-700 Hz, between the accuracy check's probes and with no
// warning, while the exact gain itself was right to 1e-10 against a 50-digit nodal model
// run by hand. Relation checked: the asymptotic gain model equals the exact closed-loop
// gain (an identity of the return-ratio method, common practice); with no accuracy
// warning, every point must hold it to the product's promise.
TEST(FeedbackFuzzFound, ReturnRatioTermsAreCheckedAtEveryPoint)
{
    const Design d = loadOrFail(std::string(LOOPSKETCH_TEST_DATA_DIR)
                                + "/fuzz-found/return-ratio-terms-off-between-probes.loopsketch");
    const Analysis a = analyzeOrFail(d);
    for (const Diagnostic &w : a.warnings)
        ASSERT_EQ(w.message.find("accuracy cannot be assured"), std::string::npos)
            << "an accuracy warning exempts the design: " << w.part << "." << w.field << ": "
            << w.message;
    double worst = 0;
    for (std::size_t i = 0; i < a.frequenciesHz.size(); ++i)
        worst = std::max(worst, relErr(a.curves.gainReturnRatio[i], a.curves.gainExact[i]));
    EXPECT_LT(worst, 1e-8);
}

// Fuzz seed 1 (a free design: a follower with eight poles from 1.5 Hz to 3 GHz): at 2.23 MHz the
// per-point estimate sends the exact gain to the full system, whose careful solve bounds its own
// error at 1.1e-7 of the value; the 50-digit nodal reference (tests/fuzz/mpmath_reference.py, run
// by hand) finds the gain off by 3.8e-8 there. Such a point cannot be assured to the outputs' 1e-8,
// so it must warn, naming the quantity and the frequency, as the probes do.
TEST(FeedbackFuzzFound, DoubtfulPointBeyondTheCarefulSolveWarns)
{
    const Design d
        = loadOrFail(std::string(LOOPSKETCH_TEST_DATA_DIR)
                     + "/fuzz-found/doubtful-point-beyond-careful-solve-seed-1.loopsketch");
    const Analysis a = analyzeOrFail(d);
    const auto warns = [&](const std::string &quantity) {
        return std::any_of(a.warnings.begin(), a.warnings.end(), [&](const Diagnostic &w) {
            return w.message.find("accuracy cannot be assured: " + quantity + " at 2.")
                != std::string::npos
                && w.message.find("MHz") != std::string::npos && !w.part.empty();
        });
    };
    EXPECT_TRUE(warns("the gain"));
}

// Fuzz seeds 86, 138 and 102: a loop gain far below one (1e-26 at 26.6 MHz; below 3e-21 at every
// point; 2.7e-25 at 27.2 MHz, a value of margins.loop_gain_near_crossover) that the 50-digit
// nodal reference (tests/fuzz/mpmath_reference.py, run by hand) finds off by 0.55, 1.03e-6 and
// 4.8e-7 of its value, with no warning before. Rounding this deep cannot be assured to 1e-8, so
// the loop gain must carry an accuracy warning naming a part.
TEST(FeedbackFuzzFound, TinyLoopGainOffByRoundingWarns)
{
    for (const char *file :
         {"tiny-loop-gain-off-warned-seed-86", "loop-gain-off-1e-6-warned-seed-138",
          "tiny-loop-gain-off-near-crossover-seed-102"}) {
        SCOPED_TRACE(file);
        const Design d = loadOrFail(std::string(LOOPSKETCH_TEST_DATA_DIR) + "/fuzz-found/" + file
                                    + ".loopsketch");
        const Analysis a = analyzeOrFail(d);
        EXPECT_TRUE(std::any_of(a.warnings.begin(), a.warnings.end(), [](const Diagnostic &w) {
            return w.message.rfind("accuracy cannot be assured: the loop gain at", 0) == 0
                && !w.part.empty();
        }));
    }
}

// Fuzz seed 9426: shunt-shunt, 53 parts, a gain block rising through six zeros to |A_ol| near
// 1e37 at a few GHz. The careful solve of the whole matrix called it singular at 8 of 215
// points (pivots of the equilibrated matrix near 1e-35 under a fixed floor of 1e-30), so the
// loop gain and every return-ratio curve were NaN there between finite neighbours. The
// 50-digit nodal reference (tests/fuzz/mpmath_reference.py, run by hand) finds no unwarned
// value off by more than 1e-8 once those points are solved.
TEST(FeedbackFuzzFound, ExtremeGainAtGigahertzIsSolvedNotCalledSingular)
{
    const Design d
        = loadOrFail(std::string(LOOPSKETCH_TEST_DATA_DIR)
                     + "/fuzz-found/open/loop-gain-nan-at-8-points-seed-9426.loopsketch");
    const Analysis a = analyzeOrFail(d);
    ASSERT_FALSE(a.curves.loopGain.empty());
    // The two-port estimate's `a` and gain were NaN at 38 points.
    for (const auto *curve :
         {&a.curves.loopGain, &a.curves.gainReturnRatio, &a.curves.zInReturnRatio,
          &a.curves.zOutReturnRatio, &a.curves.a, &a.curves.gainTwoPort})
        EXPECT_TRUE(std::all_of(curve->begin(), curve->end(), finiteValue));
}
