#include "loopsketch/analysis/analysis.h"
#include "loopsketch/analysis/noise.h"
#include "loopsketch/analysis/spread.h"
#include "loopsketch/design/designfile.h"

#include "designs.h"

#include <gmock/gmock.h>
#include <gtest/gtest.h>

#include <cmath>
#include <string>

using namespace loopsketch;
using test::parseOrFail;
using ::testing::HasSubstr;

namespace {

// Invented test circuit: non-inverting stage, gain 1 + R2/R1, around a gain block of 1e9
// (180 dB) with one pole at 1 Hz, so the loop gain error (about 3e-9) is far below every
// tolerance checked here.
std::string nonInverting(const std::string &r1Extra, const std::string &r2Extra,
                         const std::string &specs = "")
{
    return R"({"schema": "loopsketch.design/1", "title": "x", "parts": [
      {"id": "VS", "type": "vsource", "pos": "in", "neg": "0"},
      {"id": "U1", "type": "gain_block", "in_p": "in", "in_n": "fb", "out": "out",
       "gain": "180dB", "poles_hz": ["1"]},
      {"id": "R2", "type": "resistor", "a": "out", "b": "fb", "value": "10k")"
        + r2Extra + R"(},
      {"id": "R1", "type": "resistor", "a": "fb", "b": "0", "value": "4.7k")"
        + r1Extra + R"(},
      {"id": "RL", "type": "load", "a": "out", "b": "0", "r": "1M"}],
      "input": "VS", "output": "voltage",
      "sweep": {"start": "1", "stop": "1G", "points_per_decade": 20})"
        + specs + "}";
}

constexpr double kRatio = 10.0 / 4.7;

} // namespace

TEST(WorstCase, NonInvertingGainMatchesClosedForm)
{
    // Common practice (worst-case analysis of 1 + R2/R1): the maximum takes R2 high and R1
    // low, the minimum the opposite.
    const Design d = parseOrFail(nonInverting(R"(, "tolerance": "1%")", R"(, "tolerance": "5%")"));
    auto r = worstCase(d, {});
    ASSERT_TRUE(r.ok()) << r.errorText();
    EXPECT_TRUE(r->exhaustive);
    EXPECT_EQ(r->corners, 4u);
    const double hi = 1.0 + kRatio * 1.05 / 0.99, lo = 1.0 + kRatio * 0.95 / 1.01;
    ASSERT_TRUE(r->gain.max && r->gain.min);
    EXPECT_NEAR(*r->gain.max, hi, hi * 1e-7);
    EXPECT_NEAR(*r->gain.min, lo, lo * 1e-7);
    EXPECT_EQ(r->gain.maxCorner, (std::vector<int>{1, -1})); // R2 +, R1 -
}

TEST(WorstCase, SensitivityCornersBeyondTwelveQuantities)
{
    // 13 series resistors of 1k (5 %) as R2: past the vertex limit. 1 + R2/R1 is monotonic
    // in every resistor, so the sensitivity corners hit the closed form (common practice).
    std::string chain;
    std::string text = nonInverting(R"(, "tolerance": "2%")", "");
    const std::string r2
        = R"({"id": "R2", "type": "resistor", "a": "out", "b": "fb", "value": "10k"},)";
    std::string parts;
    for (int i = 0; i < 13; ++i) {
        const std::string a = i == 0 ? "out" : "n" + std::to_string(i);
        const std::string b = i == 12 ? "fb" : "n" + std::to_string(i + 1);
        parts += R"({"id": "RS)" + std::to_string(i) + R"(", "type": "resistor", "a": ")" + a
            + R"(", "b": ")" + b + R"(", "value": "1k", "tolerance": "5%"},)";
    }
    text.replace(text.find(r2.substr(0, 20)),
                 text.find("{\"id\": \"R1\"") - text.find(r2.substr(0, 20)), parts);
    const Design d = parseOrFail(text);
    auto r = worstCase(d, {});
    ASSERT_TRUE(r.ok()) << r.errorText();
    EXPECT_FALSE(r->exhaustive);
    EXPECT_EQ(r->quantities.size(), 14u);
    const double hi = 1.0 + 13e3 * 1.05 / (4.7e3 * 0.98), lo = 1.0 + 13e3 * 0.95 / (4.7e3 * 1.02);
    ASSERT_TRUE(r->gain.max && r->gain.min);
    EXPECT_NEAR(*r->gain.max, hi, hi * 1e-7);
    EXPECT_NEAR(*r->gain.min, lo, lo * 1e-7);
}

TEST(MonteCarlo, UniformLinearCaseMatchesAnalyticMeanAndStd)
{
    // Only R2 varies, so G = 1 + kRatio f with f uniform on [0.95, 1.05]: mean 1 + kRatio,
    // std kRatio * 0.05 / sqrt(3) (uniform variance (b - a)^2 / 12, common practice).
    // Bounds: 5 standard errors; se(mean) = sigma / sqrt(N), se(std) = sigma
    // sqrt((kurtosis - 1) / (4 N)) with kurtosis 1.8 for the uniform law (common practice).
    const Design d = parseOrFail(nonInverting("", R"(, "tolerance": "5%")"));
    SpreadOptions o;
    o.trials = 10000;
    o.seed = 11;
    auto r = monteCarlo(d, o);
    ASSERT_TRUE(r.ok()) << r.errorText();
    const double n = o.trials, sigma = kRatio * 0.05 / std::sqrt(3.0);
    EXPECT_EQ(r->gain.count, 10000u);
    EXPECT_NEAR(r->gain.mean, 1.0 + kRatio, 5 * sigma / std::sqrt(n));
    EXPECT_NEAR(r->gain.std, sigma, 5 * sigma * std::sqrt(0.8 / (4 * n)));
    EXPECT_GE(r->gain.min, 1.0 + kRatio * 0.95 - 1e-6);
    EXPECT_LE(r->gain.max, 1.0 + kRatio * 1.05 + 1e-6);
}

TEST(MonteCarlo, NormalLinearCaseMatchesAnalyticMeanAndStd)
{
    // Tolerance = 3 sigma: std kRatio * 0.05 / 3; se(std) = sigma / sqrt(2 N) for the normal
    // law (common practice). Bounds: 5 standard errors.
    const Design d = parseOrFail(nonInverting("", R"(, "tolerance": "5%")"));
    SpreadOptions o;
    o.trials = 10000;
    o.seed = 5;
    o.distribution = SpreadDistribution::Normal;
    auto r = monteCarlo(d, o);
    ASSERT_TRUE(r.ok()) << r.errorText();
    const double n = o.trials, sigma = kRatio * 0.05 / 3.0;
    EXPECT_NEAR(r->gain.mean, 1.0 + kRatio, 5 * sigma / std::sqrt(n));
    EXPECT_NEAR(r->gain.std, sigma, 5 * sigma / std::sqrt(2 * n));
}

TEST(MonteCarlo, YieldAgainstGainWindow)
{
    // Window [1 + kRatio, +inf) catches half of a symmetric uniform spread; bound: 5 binomial
    // standard errors sqrt(p (1 - p) / N) (common practice).
    const Design d = parseOrFail(
        nonInverting("", R"(, "tolerance": "5%")", R"(, "specs": {"gain": ["3.12766", "100"]})"));
    SpreadOptions o;
    o.trials = 10000;
    auto r = monteCarlo(d, o);
    ASSERT_TRUE(r.ok()) << r.errorText();
    EXPECT_TRUE(r->hasSpecs);
    const double p = (1.0 + kRatio * 1.05 - 3.12766) / (kRatio * 0.1);
    EXPECT_NEAR(r->yield, p, 5 * std::sqrt(p * (1 - p) / 10000.0));
}

TEST(MonteCarlo, SameSeedSameNumbersForAnyThreadCount)
{
    const Design d = parseOrFail(nonInverting(R"(, "tolerance": "1%")", R"(, "tolerance": "5%")"));
    SpreadOptions o;
    o.trials = 3000;
    o.seed = 42;
    o.gainSpread = 0.5;
    o.threads = 1;
    auto a = monteCarlo(d, o);
    o.threads = 3;
    auto b = monteCarlo(d, o);
    o.seed = 43;
    auto c = monteCarlo(d, o);
    ASSERT_TRUE(a.ok() && b.ok() && c.ok());
    EXPECT_NEAR(a->gain.mean, b->gain.mean, 1e-15 * std::abs(a->gain.mean));
    EXPECT_NEAR(a->gain.std, b->gain.std, 1e-15 * a->gain.std);
    EXPECT_NEAR(a->phaseMarginDeg.mean, b->phaseMarginDeg.mean, 1e-12);
    EXPECT_EQ(a->gain.histogram, b->gain.histogram);
    EXPECT_GT(std::abs(a->gain.mean - c->gain.mean), 1e-9); // another seed, other draws
}

TEST(MonteCarlo, TrialMetricsAgreeWithFullAnalysis)
{
    // The lean per-trial evaluation against analyze() on the demo design (same model).
    Design d = test::loadOrFail(test::kDesignsDir / "demo.loopsketch");
    auto full = analyze(d);
    ASSERT_TRUE(full.ok());
    auto lean = evaluateTrial(d, coarseGrid(d.sweep, 10));
    ASSERT_TRUE(lean.ok());
    ASSERT_TRUE(lean->gain && lean->bandwidthHz && lean->phaseMarginDeg);
    EXPECT_NEAR(*lean->gain, *full->exact.gain, 1e-9 * std::abs(*full->exact.gain));
    EXPECT_NEAR(*lean->bandwidthHz, *full->bandwidthHz, 1e-6 * *full->bandwidthHz);
    EXPECT_NEAR(*lean->phaseMarginDeg, *full->margins.phaseMarginDeg, 1e-6);
}

TEST(MonteCarlo, CancelAndProgress)
{
    const Design d = parseOrFail(nonInverting("", R"(, "tolerance": "5%")"));
    SpreadOptions o;
    o.trials = 500;
    std::size_t last = 0, total = 0;
    o.progress = [&](std::size_t done, std::size_t all) {
        last = std::max(last, done);
        total = all;
    };
    auto r = monteCarlo(d, o);
    ASSERT_TRUE(r.ok());
    EXPECT_EQ(last, 500u);
    EXPECT_EQ(total, 500u);
    EXPECT_FALSE(r->cancelled);
    std::atomic<bool> cancel{true};
    o.cancel = &cancel;
    auto c = monteCarlo(d, o);
    ASSERT_TRUE(c.ok());
    EXPECT_TRUE(c->cancelled);
    EXPECT_EQ(c->completed, 0u);
}

TEST(Spread, ClearErrors)
{
    const Design plain = parseOrFail(nonInverting("", ""));
    auto none = monteCarlo(plain, {}, "plain.loopsketch");
    ASSERT_FALSE(none.ok());
    EXPECT_THAT(none.errorText(), HasSubstr("nothing to spread: no part has a tolerance"));
    EXPECT_THAT(none.errorText(), HasSubstr("plain.loopsketch"));
    EXPECT_FALSE(worstCase(plain, {}).ok());

    const Design d = parseOrFail(nonInverting("", R"(, "tolerance": "5%")"));
    SpreadOptions o;
    o.trials = 0;
    EXPECT_THAT(monteCarlo(d, o).errorText(), HasSubstr("trials must be between 1 and 1000000"));
    o.trials = 2'000'000;
    EXPECT_THAT(monteCarlo(d, o).errorText(), HasSubstr("trials must be between 1 and 1000000"));
    o.trials = 10;
    o.gbwSpread = 0.2;
    auto gbw = monteCarlo(d, o);
    ASSERT_FALSE(gbw.ok());
    EXPECT_EQ(gbw.diagnostics().front().part, "U1");
    EXPECT_THAT(gbw.errorText(), HasSubstr("gbw spread needs the gain block to give its gbw"));
    o.gbwSpread.reset();
    o.gainSpread = 1.5;
    EXPECT_THAT(monteCarlo(d, o).errorText(), HasSubstr("between 0 % and 100 %"));
}

TEST(Spread, MetricStatsOfKnownValues)
{
    // Sample mean and (n - 1) standard deviation of 1, 2, 3, 4: 2.5 and sqrt(5/3) (arithmetic).
    const auto s = metricStats({1, 2, std::nan(""), 3, 4}, 2);
    EXPECT_EQ(s.count, 4u);
    EXPECT_EQ(s.missing, 1u);
    EXPECT_NEAR(s.mean, 2.5, 1e-15);
    EXPECT_NEAR(s.std, std::sqrt(5.0 / 3.0), 1e-15);
    EXPECT_EQ(s.histogram, (std::vector<std::size_t>{2, 2}));
}

TEST(Spread, TextNamesTolerancesAsPercent)
{
    // A 0.1 % resistor is written "0.1%" as on the part (common practice), never with an
    // SI prefix on the percentage.
    const Design d
        = parseOrFail(nonInverting(R"(, "tolerance": "0.1%")", R"(, "tolerance": "5%")"));
    SpreadOptions options;
    options.trials = 10;
    auto worst = worstCase(d, options);
    auto mc = monteCarlo(d, options);
    ASSERT_TRUE(worst.ok() && mc.ok());
    const std::string text = spreadToText(*worst, *mc, "V/V");
    EXPECT_THAT(text, HasSubstr("R1 value +-0.1%"));
    EXPECT_THAT(text, HasSubstr("R2 value +-5%"));
    EXPECT_THAT(text, ::testing::Not(HasSubstr("m %")));
}

// The Monte Carlo run's noise figures (issue 18: the Spread panel shows them). With a noiseless
// gain block of 180 dB the stage's output noise density over 1 Hz .. 1 kHz (far below its
// closed-loop bandwidth of about 300 MHz) is that of the resistors alone:
// e_out^2 = 4 k T R2 (1 + R2 / R1) (common practice: R2's own noise plus R1's at the gain
// -R2/R1; k from CODATA 2018), so the rms over the band is e_out sqrt(999 Hz). Both resistors
// +-5 % uniform: every trial lies between the corners (R2 high, R1 low) and (R2 low, R1 high),
// and 2000 trials come within 2 % of each; the nominal trial to 1e-3.
TEST(MonteCarlo, OutputNoiseRangeWithANoiseSpec)
{
    const Design d = parseOrFail(nonInverting(
        R"(, "tolerance": "5%")", R"(, "tolerance": "5%")",
        R"(, "noise_band": ["1", "1k"], "specs": {"gain": ["2", "4"], "output_noise_max": "1m"})"));
    const double kT4 = 4.0 * kBoltzmann * d.temperatureK();
    const auto rms = [&](double r1, double r2) {
        return std::sqrt(kT4 * r2 * (1.0 + r2 / r1) * 999.0);
    };
    SpreadOptions o;
    o.trials = 2000;
    auto r = monteCarlo(d, o);
    ASSERT_TRUE(r.ok()) << r.errorText();
    EXPECT_TRUE(r->hasNoise);
    ASSERT_EQ(r->outputNoiseRms.count, 2000u);
    ASSERT_TRUE(r->nominal.outputNoiseRms);
    EXPECT_NEAR(*r->nominal.outputNoiseRms / rms(4.7e3, 10e3), 1.0, 1e-3);
    const double low = rms(4.7e3 * 1.05, 10e3 * 0.95), high = rms(4.7e3 * 0.95, 10e3 * 1.05);
    EXPECT_GE(r->outputNoiseRms.min, low * (1 - 1e-3));
    EXPECT_LE(r->outputNoiseRms.max, high * (1 + 1e-3));
    EXPECT_LT(r->outputNoiseRms.min, low * 1.02);
    EXPECT_GT(r->outputNoiseRms.max, high * 0.98);
    EXPECT_GT(r->outputNoiseRms.mean, low);
    EXPECT_LT(r->outputNoiseRms.mean, high);
    auto w = worstCase(d, o);
    ASSERT_TRUE(w.ok()) << w.errorText();
    const std::string json = spreadToJson(*w, *r, "V/V");
    EXPECT_THAT(json, HasSubstr(R"("output_noise_rms": {
      "count": 2000,)"));
    EXPECT_THAT(spreadToText(*w, *r, "V/V"), HasSubstr("output noise  min "));

    // Without a noise spec the trials compute no noise, and the run says so by null.
    const Design plain = parseOrFail(nonInverting(R"(, "tolerance": "5%")", ""));
    auto p = monteCarlo(plain, o);
    ASSERT_TRUE(p.ok()) << p.errorText();
    EXPECT_FALSE(p->hasNoise);
    EXPECT_EQ(p->outputNoiseRms.count, 0u);
    auto pw = worstCase(plain, o);
    ASSERT_TRUE(pw.ok()) << pw.errorText();
    EXPECT_THAT(spreadToJson(*pw, *p, "V/V"), HasSubstr(R"("output_noise_rms": null)"));
}
