// Scans and maps of part values: each row is analyze() of the design with that value (the
// same core path, so equal to round-off), the map's feasibility is the one spec check, its
// stability the closed-loop verdict; the ranges and messages follow the issue's rules.

#include "loopsketch/analysis/scan.h"
#include "loopsketch/analysis/trialmetrics.h"
#include "loopsketch/base/eseries.h"

#include "designs.h"
#include "numeric.h"

#include <gmock/gmock.h>
#include <gtest/gtest.h>

#include <algorithm>
#include <atomic>
#include <sstream>
#include <string>

using namespace loopsketch;
using namespace loopsketch::test;
using ::testing::HasSubstr;

namespace {

Design demo()
{
    return loadOrFail(kDesignsDir / "demo.loopsketch");
}

ScanAxis axisOrFail(const Design &d, const std::string &text,
                    std::optional<ESeries> series = std::nullopt)
{
    auto target = parseScanTarget(text);
    EXPECT_TRUE(target.ok()) << target.errorText();
    if (!target)
        return {};
    auto axis = resolveScanAxis(d, *target, series, "test.loopsketch");
    EXPECT_TRUE(axis.ok()) << axis.errorText();
    return axis.ok() ? *axis : ScanAxis{};
}

/// Whether the rows must hold analyze()'s numbers bit for bit, or to 1e-12 relative.
enum class Match { RoundOff, Bits };

void expectSame(const OptionalNumber &scanned, const OptionalNumber &analysed, const char *what,
                double value, Match match = Match::RoundOff)
{
    ASSERT_EQ(scanned.has_value(), analysed.has_value()) << what << " at " << value;
    if (!scanned)
        return;
    if (std::isinf(*analysed) || match == Match::Bits) {
        // The same infinity (an open input), or the same bits.
        EXPECT_EQ(*scanned, *analysed) << what << " at " << value;
        return;
    }
    EXPECT_LT(relErr(*scanned, *analysed), 1e-12) << what << " at " << value;
}

/// Every metric of a scan row `m` equals analyze() of `with`, the design with the row's
/// values (1e-12 relative: the same core path); `v` names the row in messages.
void expectRowIsAnalysis(const ScanMetrics &m, const Design &with, double v,
                         Match match = Match::RoundOff)
{
    const Analysis a = analyzeOrFail(with);
    expectSame(m.gain, a.exact.gain, "gain", v, match);
    expectSame(m.bandwidthHz, a.bandwidthHz, "bandwidth", v, match);
    expectSame(m.phaseMarginDeg, a.margins.phaseMarginDeg, "phase margin", v, match);
    expectSame(m.gainMarginDb, a.margins.gainMarginDb, "gain margin", v, match);
    expectSame(m.peakingDb, a.peakingDb, "peaking", v, match);
    expectSame(m.overshootPct, a.step.overshootPct, "overshoot", v, match);
    expectSame(m.settlingTimeS, a.step.settlingTimeS, "settling", v, match);
    expectSame(m.outputNoiseRms, a.noise ? a.noise->outputRms : std::nullopt, "noise", v, match);
    expectSame(m.zIn, a.exact.zIn, "z_in", v, match);
    expectSame(m.zOut, a.exact.zOut, "z_out", v, match);
    ASSERT_TRUE(m.stable && m.specsPass);
    EXPECT_EQ(*m.stable, a.stable);
    EXPECT_EQ(*m.specsPass, checkSpecs(with.specs, with.sweep, trialMetricsOf(a)).all());
}

/// A non-inverting stage around a gain block with poles at 10 Hz and twice at 100 kHz:
/// stable at small loop gains (large R1/R2), unstable at large ones.
Design threePoleStage()
{
    return parseOrFail(R"({"schema": "loopsketch.design/1", "parts": [
  {"id": "SIG", "type": "vsource", "pos": "in", "neg": "0"},
  {"id": "U1", "type": "gain_block", "in_p": "in", "in_n": "fb", "out": "out", "gain": "1e5",
   "poles_hz": ["10", "100k", "100k"]},
  {"id": "R1", "type": "resistor", "a": "out", "b": "fb", "value": "10k", "series": "E6"},
  {"id": "R2", "type": "resistor", "a": "fb", "b": "0", "value": "1k", "series": "E6"},
  {"id": "RL", "type": "load", "a": "out", "b": "0", "r": "10k"}],
 "input": "SIG", "output": "voltage", "sweep": {"start": "1", "stop": "1G"},
 "specs": {"gain": [5, 200], "phase_margin_min_deg": 30}})");
}

} // namespace

TEST(ScanTarget, ParsesIdFieldAndRange)
{
    auto t = parseScanTarget("U1.gbw:1M:10M");
    ASSERT_TRUE(t.ok()) << t.errorText();
    EXPECT_EQ(t->part, "U1");
    EXPECT_EQ(t->field, "gbw");
    EXPECT_EQ(*t->from, "1M");
    EXPECT_EQ(*t->to, "10M");
    auto plain = parseScanTarget("CF");
    ASSERT_TRUE(plain.ok());
    EXPECT_TRUE(plain->field.empty());
    EXPECT_FALSE(plain->from.has_value());
    for (const char *bad : {"CF:1p", "CF:1p:", ".c", "RL.", "CF:1p:2p:3p", ""})
        EXPECT_FALSE(parseScanTarget(bad).ok()) << bad;
    EXPECT_THAT(parseScanTarget("CF:1p").errorText(), HasSubstr("both ends"));
}

TEST(ScanAxis, DefaultsToTwoDecadesOverThePartsSeries)
{
    // CF = 2.2 pF in E12: 0.22 pF to 22 pF holds 2 decades of E12 plus the end, 25 values
    // (IEC 60063, E12).
    const Design d = demo();
    const ScanAxis axis = axisOrFail(d, "CF");
    EXPECT_EQ(axis.field, "value");
    EXPECT_TRUE(axis.primary);
    EXPECT_EQ(axis.name(), "CF");
    EXPECT_EQ(axis.series, ESeries::E12);
    ASSERT_EQ(axis.values.size(), 25U);
    EXPECT_LT(relErr(axis.values.front(), 0.22e-12), 1e-9);
    EXPECT_LT(relErr(axis.values.back(), 22e-12), 1e-9);
    // A field other than the value, over E24 (the series applies to the value only).
    const ScanAxis c = axisOrFail(d, "RL.c:10p:100p");
    EXPECT_EQ(c.name(), "RL.c");
    EXPECT_EQ(c.series, ESeries::E24);
    EXPECT_EQ(c.values.size(), 25U); // 10p .. 100p in E24, both ends included
    // --series wins over the part's own.
    EXPECT_EQ(axisOrFail(d, "CF", ESeries::E3).values.size(), 7U);
}

TEST(ScanAxis, RefusalsNameFilePartAndField)
{
    const Design d = demo();
    const auto refusal = [&](const std::string &text) {
        auto t = parseScanTarget(text);
        EXPECT_TRUE(t.ok()) << text;
        auto axis = resolveScanAxis(d, *t, std::nullopt, "demo.loopsketch");
        EXPECT_FALSE(axis.ok()) << text;
        return axis.ok() ? std::string() : axis.diagnostics().front().toString();
    };
    EXPECT_THAT(refusal("CX"), HasSubstr("demo.loopsketch: part CX"));
    EXPECT_THAT(refusal("U1"), HasSubstr("part U1"));
    EXPECT_THAT(refusal("U1"), HasSubstr("gbw"));
    EXPECT_THAT(refusal("RL.colour"), HasSubstr("part RL, field colour"));
    EXPECT_THAT(refusal("U1.gbw"), HasSubstr("part U1, field gbw"));
    EXPECT_THAT(refusal("U1.gbw"), HasSubstr("U1.gbw:FROM:TO"));
    EXPECT_THAT(refusal("CF:1q:10p"), HasSubstr("part CF, field value"));
    EXPECT_THAT(refusal("CF:-1p:10p"), HasSubstr("one sign"));
    EXPECT_THAT(refusal("CF:1.3p:1.4p"), HasSubstr("no E12 value"));
}

TEST(Scan, EveryRowEqualsAnalyzeOfTheDesignWithThatValue)
{
    // The same core path (analyze()), so the rows agree to round-off (1e-12 relative).
    const Design d = demo();
    const ScanAxis axis = axisOrFail(d, "CF");
    auto scan = runScan(d, {axis});
    ASSERT_TRUE(scan.ok()) << scan.errorText();
    ASSERT_EQ(scan->rows.size(), axis.values.size());
    EXPECT_FALSE(scan->cancelled);
    for (const ScanRow &row : scan->rows) {
        ASSERT_TRUE(row.done);
        const double v = row.values[0];
        const Design with = withScanValue(d, axis, v);
        EXPECT_EQ(with.findPart("CF")->number("value"), v);
        expectRowIsAnalysis(row.metrics, with, v);
    }
    // The demo's own CF (2.2 pF, a row of the scan) passes every spec; 0.22 pF rings too much
    // for the 50 degree phase-margin spec: the scan shows both.
    EXPECT_FALSE(*scan->rows.front().metrics.specsPass);
}

TEST(Scan, EveryMapCellEqualsAnalyzeOfTheDesignWithThosePairOfValues)
{
    // A map re-stamps one loop model per worker from cell to cell (LoopModel::rebuilt()):
    // still the same numbers as analyze() of each design built afresh (1e-12 relative), on
    // one worker (every cell after the first re-stamped) and on two.
    const Design d = demo();
    const ScanAxis rf = axisOrFail(d, "RF:470k:2M2", ESeries::E6),
                   cf = axisOrFail(d, "CF:1p:10p", ESeries::E6);
    ASSERT_GE(rf.values.size() * cf.values.size(), 9u);
    for (const int threads : {1, 2}) {
        ScanOptions o;
        o.threads = threads;
        auto map = runScan(d, {rf, cf}, o);
        ASSERT_TRUE(map.ok()) << map.errorText();
        for (const ScanRow &row : map->rows) {
            ASSERT_TRUE(row.done);
            const Design with
                = withScanValue(withScanValue(d, rf, row.values[0]), cf, row.values[1]);
            // RF in megohms plus CF in picofarads, to name the cell in a message.
            expectRowIsAnalysis(row.metrics, with, row.values[0] * 1e-6 + row.values[1] * 1e12);
        }
    }
}

TEST(Scan, ReStampedCellsHoldAnalyzesNumbersBitForBit)
{
    // On one worker every cell after the first re-stamps the loop and noise models of the cell
    // before (the thermal noise of RF, R1 and R2 taken anew from the new value), so each
    // number must be the one analyze() computes for the design built afresh, to the last bit.
    // The three-pole stage has unstable cells, whose noise a row skips (no rms exists there)
    // and whose neighbours then re-stamp from an older noise model.
    ScanOptions one;
    one.threads = 1;
    const Design d = demo();
    const Design stage = threePoleStage();
    const std::vector<std::pair<Design, std::vector<ScanAxis>>> maps = {
        {d, {axisOrFail(d, "RF:470k:2M2", ESeries::E6), axisOrFail(d, "CF:1p:10p", ESeries::E6)}},
        {stage, {axisOrFail(stage, "R1"), axisOrFail(stage, "R2")}}};
    int unstable = 0;
    for (const auto &[design, axes] : maps) {
        auto map = runScan(design, axes, one);
        ASSERT_TRUE(map.ok()) << map.errorText();
        for (const ScanRow &row : map->rows) {
            ASSERT_TRUE(row.done);
            const Design with = withScanValue(withScanValue(design, axes[0], row.values[0]),
                                              axes[1], row.values[1]);
            expectRowIsAnalysis(row.metrics, with, row.values[0] + row.values[1] * 1e12,
                                Match::Bits);
            unstable += !row.metrics.stable.value_or(true);
        }
    }
    EXPECT_GT(unstable, 0);
}

TEST(Scan, AMapOfOneMetricHoldsTheNumbersOfAMapOfEveryMetric)
{
    // A map that shows one metric asks for it alone (ScanOptions::metrics) and skips the work
    // of the others, but not what the design's specs read: each metric asked for, the
    // stability verdict and the spec check must be those of the run of every metric, bit for
    // bit, and every other metric absent. The demo with a noise spec added (the spec check
    // then needs the noise whatever is asked) and the three-pole stage (unstable cells).
    Design noisy = demo();
    noisy.specs.outputNoiseMax = Value{1e-4, "100u"};
    const Design stage = threePoleStage();
    const std::vector<std::pair<Design, std::vector<std::string>>> maps
        = {{demo(), {"RF:470k:2M2", "CF:1p:10p"}},
           {noisy, {"RF:470k:2M2", "CF:1p:10p"}},
           {stage, {"R1", "R2"}}};
    int passing = 0, failing = 0;
    for (const auto &[design, targets] : maps) {
        const std::vector<ScanAxis> axes = {axisOrFail(design, targets[0], ESeries::E6),
                                            axisOrFail(design, targets[1], ESeries::E6)};
        ScanOptions o;
        o.threads = 1;
        auto every = runScan(design, axes, o);
        ASSERT_TRUE(every.ok()) << every.errorText();
        for (const ScanMetric asked : allScanMetrics()) {
            o.metrics = {asked};
            auto one = runScan(design, axes, o);
            ASSERT_TRUE(one.ok()) << one.errorText();
            ASSERT_EQ(one->rows.size(), every->rows.size());
            for (const ScanMetric m : allScanMetrics())
                EXPECT_EQ(one->computed(m), m == asked);
            for (std::size_t i = 0; i < one->rows.size(); ++i) {
                const ScanMetrics &a = one->rows[i].metrics, &b = every->rows[i].metrics;
                ASSERT_TRUE(a.problem.empty()) << a.problem;
                for (const ScanMetric m : allScanMetrics()) {
                    if (m != asked) {
                        EXPECT_FALSE((a.*m).has_value()) << i;
                        continue;
                    }
                    ASSERT_EQ((a.*m).has_value(), (b.*m).has_value()) << i;
                    if (b.*m) {
                        EXPECT_EQ(*(a.*m), *(b.*m)) << i; // the same bits
                    }
                }
                EXPECT_EQ(a.stable, b.stable) << i;
                EXPECT_EQ(a.specsPass, b.specsPass) << i;
                passing += a.specsPass.value_or(false);
                failing += !a.specsPass.value_or(true);
            }
        }
    }
    EXPECT_GT(passing, 0);
    EXPECT_GT(failing, 0);
}

TEST(Scan, MapFeasibilityAndStabilityMatchTheCheckCellByCell)
{
    // R1 x R2 over E6 takes the stage from a noise gain of about 2 (unstable: three poles, a
    // loop gain of 5e4) to about 100 (stable): both kinds of cell, and cells that pass and
    // fail the specs.
    const Design d = threePoleStage();
    const ScanAxis r1 = axisOrFail(d, "R1"), r2 = axisOrFail(d, "R2");
    auto map = runScan(d, {r1, r2});
    ASSERT_TRUE(map.ok()) << map.errorText();
    ASSERT_EQ(map->rows.size(), r1.values.size() * r2.values.size());
    int unstable = 0, passing = 0;
    for (std::size_t i = 0; i < map->rows.size(); ++i) {
        const ScanRow &row = map->rows[i];
        EXPECT_EQ(row.values[0], r1.values[i / r2.values.size()]);
        EXPECT_EQ(row.values[1], r2.values[i % r2.values.size()]);
        const Design with = withScanValue(withScanValue(d, r1, row.values[0]), r2, row.values[1]);
        const Analysis a = analyzeOrFail(with);
        ASSERT_TRUE(row.metrics.stable && row.metrics.specsPass);
        EXPECT_EQ(*row.metrics.stable, a.stable) << i;
        EXPECT_EQ(*row.metrics.specsPass,
                  checkSpecs(with.specs, with.sweep, trialMetricsOf(a)).all())
            << i;
        unstable += !a.stable;
        passing += *row.metrics.specsPass;
        if (!a.stable) { // an unstable loop has no bandwidth: an empty cell, not a number
            EXPECT_FALSE(row.metrics.bandwidthHz.has_value());
        }
    }
    EXPECT_GT(unstable, 0);
    EXPECT_GT(passing, 0);
    EXPECT_LT(passing + unstable, static_cast<int>(map->rows.size()));
}

TEST(Scan, RefusesTheSameFieldTwiceAndTooManyRows)
{
    const Design d = demo();
    const ScanAxis cf = axisOrFail(d, "CF");
    auto twice = runScan(d, {cf, cf}, {}, "demo.loopsketch");
    ASSERT_FALSE(twice.ok());
    EXPECT_THAT(twice.errorText(), HasSubstr("named twice"));
    const ScanAxis wide = axisOrFail(d, "RF:1:1T", ESeries::E192); // 12 decades of E192
    const ScanAxis wideC = axisOrFail(d, "CF:1f:1u", ESeries::E192);
    auto big = runScan(d, {wide, wideC}, {}, "demo.loopsketch");
    ASSERT_FALSE(big.ok());
    EXPECT_THAT(big.errorText(), HasSubstr("more than 40000"));
}

TEST(Scan, CancelStopsEarlyAndLeavesTheRestUndone)
{
    const Design d = demo();
    std::atomic<bool> cancel{true};
    ScanOptions options;
    options.cancel = &cancel;
    auto scan = runScan(d, {axisOrFail(d, "CF")}, options);
    ASSERT_TRUE(scan.ok());
    EXPECT_TRUE(scan->cancelled);
    EXPECT_EQ(scan->completed, 0U);
    // Only the header: rows a cancel left out are not written.
    const std::string csv = scanToCsv(*scan);
    EXPECT_EQ(std::count(csv.begin(), csv.end(), '\n'), 1);
}

TEST(ScanCsv, HeaderRowsAndEmptyCells)
{
    const Design d = threePoleStage();
    auto scan = runScan(d, {axisOrFail(d, "R2")});
    ASSERT_TRUE(scan.ok());
    const std::string csv = scanToCsv(*scan);
    std::istringstream in(csv);
    std::string header;
    std::getline(in, header);
    EXPECT_EQ(header,
              "R2,gain,bandwidth_hz,phase_margin_deg,gain_margin_db,peaking_db,"
              "overshoot_pct,settling_time_s,output_noise_rms,z_in,z_out,stable,"
              "specs_pass");
    std::size_t lines = 0;
    bool sawUnstable = false;
    for (std::string line; std::getline(in, line); ++lines) {
        EXPECT_EQ(std::count(line.begin(), line.end(), ','), 12) << line;
        if (line.ends_with(",0,0")) { // unstable: no bandwidth (the third cell is empty)
            sawUnstable = true;
            const auto first = line.find(',');
            const auto second = line.find(',', first + 1);
            EXPECT_EQ(line[second + 1], ',') << line;
        }
        EXPECT_EQ(line.find("nan"), std::string::npos) << line;
    }
    EXPECT_EQ(lines, scan->rows.size());
    EXPECT_TRUE(sawUnstable);
}
