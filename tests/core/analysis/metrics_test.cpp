// Gain margins, peaking, crossings beyond the sweep and the exact step response, checked
// against relations with a source named beside each check: the definition of gain margin,
// the second-order relations and the single-pole closed forms. The stability verdict is in
// analysis_test.cpp.

#include "loopsketch/analysis/analysis.h"
#include "loopsketch/analysis/trialmetrics.h"
#include "loopsketch/design/designfile.h"
#include "loopsketch/feedback/loopmodel.h"

#include "designs.h"
#include "followerdesign.h"
#include "numeric.h"

#include <gmock/gmock.h>
#include <gtest/gtest.h>

#include <cmath>
#include <complex>
#include <cstdio>
#include <numbers>
#include <sstream>
#include <string>
#include <vector>

using namespace loopsketch;
using namespace loopsketch::test;
using ::testing::HasSubstr;

namespace {

/// The follower's loop gain by hand: gain * prod(1 + s/z) / prod(1 + s/p), s = j 2 pi f.
std::complex<double> followerLoop(const Follower &f, double hz)
{
    const std::complex<double> s(0.0, hz);
    std::complex<double> t = f.gain;
    for (double z : f.zerosHz)
        t *= 1.0 + s / z;
    for (double p : f.polesHz)
        t /= 1.0 + s / p;
    return t;
}

template<typename F> double bisect(F fn, double lo, double hi)
{
    const bool lowNegative = fn(lo) < 0;
    for (int i = 0; i < 300 && hi / lo - 1 > 1e-15; ++i) {
        const double mid = std::sqrt(lo * hi);
        ((fn(mid) < 0) == lowNegative ? lo : hi) = mid;
    }
    return std::sqrt(lo * hi);
}

// A conditionally stable loop, constructed: three low poles (10, 20, 50 Hz) whose lag two
// zeros (200, 500 Hz) take back before the crossover near 49 kHz, and two high poles
// (200 kHz, 1 MHz). The phase passes -180 deg three times: twice below the crossover
// (|T| > 1 there: the gain may fall that far) and once above it.
Follower conditionallyStableFollower()
{
    Follower f;
    f.gain = 5e5;
    f.polesHz = {10.0, 20.0, 50.0, 200e3, 1e6};
    f.zerosHz = {200.0, 500.0};
    return f;
}

} // namespace

// The conditionally stable loop (conditionallyStableFollower()) reports every gain margin.
// Checked against the definition of gain margin (Ogata, Modern Control Engineering,
// frequency-response chapter, from memory): GM = -20 log10 |T(j w180)| at each frequency
// where arg T = -180 deg, those frequencies found here by bisection on the rational
// function; and the Nyquist criterion's consequence that scaling the loop by 10^(GM/20)
// puts a closed-loop pole on the imaginary axis at j w180.
TEST(GainMargins, ConditionallyStableLoopReportsEveryGainMargin)
{
    const Follower f = conditionallyStableFollower();
    const Analysis a = analyzeOrFail(f.design());
    EXPECT_TRUE(a.stable) << a.closedLoopReason;
    EXPECT_EQ(a.rhpPoles, 0);
    EXPECT_GT(valueOf(a.margins.phaseMarginDeg), 60.0);
    ASSERT_EQ(a.margins.gainMargins.size(), 3u);

    const auto phaseOffset = [&](double hz) {
        double sum = 0;
        for (double z : f.zerosHz)
            sum += std::atan(hz / z);
        for (double p : f.polesHz)
            sum -= std::atan(hz / p);
        return sum + kPi;
    };
    const double crossings[] = {bisect(phaseOffset, 20.0, 120.0), bisect(phaseOffset, 120.0, 1e3),
                                bisect(phaseOffset, 1e5, 1e7)};
    const double fc = valueOf(a.margins.crossoverHz);
    EXPECT_LT(a.margins.gainMargins[1].frequencyHz, fc);
    EXPECT_GT(a.margins.gainMargins[2].frequencyHz, fc);
    for (int i = 0; i < 3; ++i) {
        const GainMargin &g = a.margins.gainMargins[static_cast<std::size_t>(i)];
        EXPECT_LT(relErr(g.frequencyHz, crossings[i]), 1e-9) << i;
        EXPECT_NEAR(g.db, -20.0 * std::log10(std::abs(followerLoop(f, crossings[i]))), 1e-7) << i;
    }
    EXPECT_LT(a.margins.gainMargins[0].db, 0.0);
    EXPECT_LT(a.margins.gainMargins[1].db, 0.0);
    EXPECT_GT(a.margins.gainMargins[2].db, 0.0);
    // The headline is the least margin: the one nearest 0 dB.
    EXPECT_NEAR(valueOf(a.margins.gainMarginDb), a.margins.gainMargins[2].db, 1e-12);
    EXPECT_NEAR(valueOf(a.margins.phaseCrossoverHz), a.margins.gainMargins[2].frequencyHz, 1e-6);
    EXPECT_THAT(analysisToJson(a), HasSubstr("\"gain_margins_db\""));

    // Scaling the gain by 10^(GM/20) puts a pole pair on the jw axis at the crossing; 1 dB
    // further into the range where the moved crossover meets a phase below -180 deg (between
    // the two low crossings, or above the high one) makes the loop unstable.
    const double intoUnstable[] = {+1.0, -1.0, +1.0};
    for (std::size_t i = 0; i < 3; ++i) {
        const GainMargin &g = a.margins.gainMargins[i];
        Follower scaled = f;
        scaled.gain = f.gain * std::pow(10.0, g.db / 20.0);
        const Analysis onAxis = analyzeOrFail(scaled.design());
        double nearest = 1e300;
        for (const ClosedLoopPole &p : onAxis.poles)
            nearest = std::min(nearest,
                               std::abs(p.s - std::complex<double>(0, 2 * kPi * g.frequencyHz))
                                   / std::abs(p.s));
        EXPECT_LT(nearest, 1e-6) << g.db << " dB at " << g.frequencyHz << " Hz";
        scaled.gain = f.gain * std::pow(10.0, (g.db + intoUnstable[i]) / 20.0);
        EXPECT_FALSE(analyzeOrFail(scaled.design()).stable) << g.db;
    }
}

// The table a reviewer recomputes the margins from: T at 1/4 .. 4 times the crossover and at
// each phase crossing equals the follower's loop gain by hand (the rational function, 1e-9),
// and the definitions of the margins (Ogata, Modern Control Engineering, frequency-response
// chapter, from memory) applied to the table give the reported margins back.
TEST(GainMargins, LoopGainTableRecomputesTheMargins)
{
    const Follower f = conditionallyStableFollower();
    const Analysis a = analyzeOrFail(f.design());
    const std::vector<LoopGainSample> &table = a.margins.nearCrossover;
    ASSERT_EQ(table.size(), 5u + a.margins.gainMargins.size());
    const double fc = valueOf(a.margins.crossoverHz);
    int crossoverRows = 0, phaseCrossingRows = 0;
    for (std::size_t i = 0; i < table.size(); ++i) {
        const LoopGainSample &t = table[i];
        if (i > 0) {
            EXPECT_GT(t.frequencyHz, table[i - 1].frequencyHz);
        }
        const std::complex<double> byHand = followerLoop(f, t.frequencyHz);
        EXPECT_LT(relErr(t.magnitude, std::abs(byHand)), 1e-9) << t.frequencyHz;
        EXPECT_LT(std::abs(std::polar(1.0, t.phaseDeg * kPi / 180.0) - byHand / std::abs(byHand)),
                  1e-9)
            << t.frequencyHz;
        if (std::abs(t.frequencyHz / fc - 1.0) < 1e-12) {
            ++crossoverRows;
            EXPECT_NEAR(t.magnitude, 1.0, 1e-9);
            EXPECT_NEAR(180.0 + t.phaseDeg, valueOf(a.margins.phaseMarginDeg), 1e-9);
        }
        for (const GainMargin &g : a.margins.gainMargins) {
            if (std::abs(t.frequencyHz / g.frequencyHz - 1.0) < 1e-12) {
                ++phaseCrossingRows;
                EXPECT_NEAR(t.phaseDeg, -180.0, 1e-6);
                EXPECT_NEAR(-20.0 * std::log10(t.magnitude), g.db, 1e-9);
            }
        }
    }
    EXPECT_EQ(crossoverRows, 1);
    EXPECT_EQ(phaseCrossingRows, static_cast<int>(a.margins.gainMargins.size()));
    EXPECT_THAT(analysisToJson(a), HasSubstr("\"loop_gain_near_crossover\""));
    EXPECT_THAT(analysisToText(a), HasSubstr("T at "));
}

// Crossover and phase crossover lie above a sweep that stops at 100 kHz: they are found on
// the model all the same, equal to those of a sweep that covers them (the loop does not
// depend on the sweep), and the text says where they are.
TEST(GainMargins, CrossingsAboveTheSweepStopAreFoundOnTheModel)
{
    Follower f;
    f.polesHz = {100.0, 1e6, 5e6};
    const Analysis full = analyzeOrFail(f.design());
    f.stop = 1e5;
    const Analysis shortSweep = analyzeOrFail(f.design());
    ASSERT_GT(valueOf(full.margins.crossoverHz), 1e5);
    EXPECT_LT(relErr(valueOf(shortSweep.margins.crossoverHz), valueOf(full.margins.crossoverHz)),
              1e-9);
    EXPECT_NEAR(valueOf(shortSweep.margins.phaseMarginDeg), valueOf(full.margins.phaseMarginDeg),
                1e-7);
    EXPECT_NEAR(valueOf(shortSweep.margins.gainMarginDb), valueOf(full.margins.gainMarginDb), 1e-7);
    EXPECT_THAT(analysisToText(shortSweep), HasSubstr("(above the sweep stop)"));
    EXPECT_THAT(analysisToText(full), ::testing::Not(HasSubstr("(above the sweep stop)")));
}

// Peaking of the two-pole loop wn^2/(s (s + 2 zeta wn)) against the resonant peak
// Mr = 1/(2 zeta sqrt(1 - zeta^2)) at wr = wn sqrt(1 - 2 zeta^2) (Ogata, Modern Control
// Engineering, frequency-response chapter, from memory), to 0.01 dB on a sweep of only 20
// points per decade (the grid maximum alone under-reads by up to about 0.25 dB there).
TEST(Peaking, TwoPoleLoopMatchesTheResonantPeakOnACoarseGrid)
{
    for (double zeta : {0.2, 0.3, 0.42045, 0.5, 0.6}) {
        const double fn = 1e5, a0 = 1e8;
        Follower f;
        f.gain = a0;
        f.polesHz = {fn / (2 * zeta * a0), 2 * zeta * fn};
        f.pointsPerDecade = 20;
        const Analysis a = analyzeOrFail(f.design());
        const double mr = 1.0 / (2 * zeta * std::sqrt(1 - zeta * zeta));
        EXPECT_NEAR(valueOf(a.peakingDb), 20 * std::log10(mr), 0.01) << zeta;
        EXPECT_LT(relErr(valueOf(a.peakingHz), fn * std::sqrt(1 - 2 * zeta * zeta)), 1e-3) << zeta;
        EXPECT_FALSE(a.feedthroughDb.has_value());
    }
}

// The excitation-current driver example: its closed-loop current gain falls through -3 dB
// near 2 MHz and rises again towards high frequency through the load capacitance
// (feedthrough). Peaking is taken within the passband, so it no longer depends on the
// sweep stop; the rise is reported apart as feedthrough (common practice: peaking is a
// property of the passband).
TEST(Peaking, CurrentDriverPeakingDoesNotDependOnTheSweepStop)
{
    Design loaded = loadOrFail(kDesignsDir / "excitation-current-driver.loopsketch");
    std::vector<double> peaking, feedthrough;
    for (double stop : {1e7, 1e8, 1e9, 3e9}) {
        Design d = loaded;
        d.sweep.stop = Value{stop, {}};
        const Analysis a = analyzeOrFail(d);
        peaking.push_back(valueOf(a.peakingDb));
        feedthrough.push_back(valueOf(a.feedthroughDb));
    }
    for (std::size_t i = 0; i < peaking.size(); ++i) {
        EXPECT_NEAR(peaking[i], peaking[0], 0.01) << i;
        EXPECT_LT(peaking[i], 0.5) << i;
        EXPECT_NEAR(feedthrough[i], feedthrough[0], 0.01) << i;
        EXPECT_GT(feedthrough[i], 10.0) << i;
    }
}

// A single-pole closed loop G0 / (1 + s tau): y(t) = G0 (1 - e^(-t/tau)), so the 10-90 %
// rise time is tau ln 9 and the settling time to a band b is tau ln(1/b) (the first-order
// step response; reference-values.md section 5 gives t_r = ln 9 / (2 pi f_B)). Here
// G0 = a0/(1 + a0) and 1/tau = w1 (1 + a0). Root finding on the model gives them to 1e-9,
// not to the grid step; the response ends at the DC gain to 1e-9; and the band comes from
// the design's settling_band.
TEST(Step, SinglePoleRiseAndSettlingByRootFinding)
{
    for (const char *band : {"", "\"settling_band\": \"0.1%\", ", "\"settling_band\": 0.05, "}) {
        Follower f;
        f.gain = 1e3;
        f.polesHz = {1e3};
        f.extra = band;
        const Design d = f.design();
        const double b = d.settlingBandFraction();
        const Analysis a = analyzeOrFail(d);
        const double tau = 1.0 / (2 * kPi * 1e3 * (1 + 1e3));
        const double g0 = 1e3 / (1 + 1e3);
        EXPECT_LT(relErr(valueOf(a.step.riseTimeS), tau * std::log(9.0)), 1e-9);
        EXPECT_LT(relErr(valueOf(a.step.settlingTimeS), tau * std::log(1.0 / b)), 1e-9) << band;
        EXPECT_NEAR(valueOf(a.step.overshootPct), 0.0, 1e-9);
        EXPECT_NEAR(a.step.settlingBand, b, 1e-15);
        ASSERT_FALSE(a.step.response.empty());
        EXPECT_LT(relErr(a.step.response.back(), g0), 1e-9);
        EXPECT_LT(relErr(a.step.finalValue, g0), 1e-12);
    }
    Follower f;
    f.gain = 1e3;
    f.polesHz = {1e3};
    f.extra = "\"settling_band\": \"0.1%\", ";
    EXPECT_NEAR(f.design().settlingBandFraction(), 0.001, 1e-15);
    EXPECT_THAT(serializeDesign(f.design()), HasSubstr("\"settling_band\": \"0.1%\""));
}

// Overshoot of the two-pole loop against Mp = exp(-pi zeta / sqrt(1 - zeta^2)) (Ogata,
// Modern Control Engineering, transient-response chapter, from memory), the peak located
// where the slope of the exact response vanishes: to 1e-6 percentage points, far below
// what a grid read-off gives.
TEST(Step, TwoPoleOvershootAtTheExactPeak)
{
    for (double zeta : {0.3, 0.5, 0.7}) {
        const double fn = 1e5, a0 = 1e8;
        Follower f;
        f.gain = a0;
        f.polesHz = {fn / (2 * zeta * a0), 2 * zeta * fn};
        const Analysis a = analyzeOrFail(f.design());
        // The loop departs from the ideal two-pole form by ~1/(4 zeta^2 a0) < 3e-8.
        EXPECT_NEAR(valueOf(a.step.overshootPct),
                    100 * std::exp(-kPi * zeta / std::sqrt(1 - zeta * zeta)), 1e-5)
            << zeta;
    }
}
// ---------------------------------------------------------------------------------------

namespace {

/// Unity-gain follower around a gain block a0/((1 + s/w1)(1 + s/w2)) with a very low first
/// pole: for s >> w1 the loop is a0 w1 w2/(s (s + w2)) = wn^2/(s (s + 2 zeta wn)) with
/// w2 = 2 zeta wn and a0 w1 = wn/(2 zeta). The ideal ends (no r_in, r_out = 0) leave
/// nothing else in the loop. The relative departure from the ideal loop is ~w1/w2 =
/// 1/(4 zeta^2 a0) < 1e-7 here.
Design twoPoleFollower(double zeta, double fn, double a0)
{
    std::ostringstream s;
    s.precision(17);
    s << R"({"schema": "loopsketch.design/1", "title": "two-pole loop", "parts": [)"
      << R"({"id": "VS", "type": "vsource", "pos": "in", "neg": "0"},)"
      << R"({"id": "U1", "type": "gain_block", "in_p": "in", "in_n": "out", "out": "out", "gain": )"
      << a0 << R"(, "poles_hz": [)" << fn / (2 * zeta * a0) << ", " << 2 * zeta * fn << "]},"
      << R"({"id": "RL", "type": "load", "a": "out", "b": "0", "r": "10k"}],)"
      << R"("input": "VS", "output": "voltage", "sweep": {"start": 1, "stop": 1e9, "points_per_decade": 100}})";
    return parseOrFail(s.str());
}

struct SecondOrderRow
{
    double pmDeg, zeta, overshootPct, peakDb, bandwidthRatio, crossoverRatio;
};

double peakDbOnGrid(const std::vector<double> &f, double zeta, double fn)
{
    double peak = 0.0;
    for (double x : f) {
        const cd s(0.0, x / fn);
        peak = std::max(peak, 20.0 * std::log10(std::abs(1.0 / (s * s + 2.0 * zeta * s + 1.0))));
    }
    return peak;
}

} // namespace

class SecondOrder : public ::testing::TestWithParam<SecondOrderRow>
{
};

// Source: Ogata, Modern Control Engineering (transient-response and frequency-response
// chapters; formulas from memory): for L = wn^2/(s (s + 2 zeta wn)),
//   PM = atan(2 zeta / sqrt(sqrt(1 + 4 zeta^4) - 2 zeta^2)),
//   wc = wn sqrt(sqrt(1 + 4 zeta^4) - 2 zeta^2),
//   Mp = exp(-pi zeta / sqrt(1 - zeta^2)),
//   Mr = 1 / (2 zeta sqrt(1 - zeta^2)) for zeta < 1/sqrt 2, else 1,
//   wB = wn sqrt(1 - 2 zeta^2 + sqrt(4 zeta^4 - 4 zeta^2 + 2)).
// The table rows are reference-values.md section 5 (derived from these formulas).
// Tolerances: half a unit of the table's last printed digit, plus for the step overshoot
// the departure of the loop from the ideal two-pole form; the overshoot peak and the
// peaking are located on the model, not read off the time or frequency grid.
TEST_P(SecondOrder, PhaseMarginOvershootAndPeakingMatchTheTable)
{
    const SecondOrderRow row = GetParam();
    const double fn = 1e5;
    const Analysis a = analyzeOrFail(twoPoleFollower(row.zeta, fn, 1e8));
    EXPECT_NEAR(valueOf(a.margins.phaseMarginDeg), row.pmDeg, 0.005);
    EXPECT_NEAR(valueOf(a.margins.crossoverHz) / fn, row.crossoverRatio, 5e-5);
    EXPECT_NEAR(valueOf(a.step.overshootPct), row.overshootPct, 0.005 + 0.002);
    EXPECT_NEAR(valueOf(a.bandwidthHz) / fn, row.bandwidthRatio, 5e-5);
    const double mrDb = row.zeta < std::sqrt(0.5)
        ? 20.0 * std::log10(1.0 / (2 * row.zeta * std::sqrt(1 - row.zeta * row.zeta)))
        : 0.0;
    // The peak is refined on the model, so the grid's own maximum (computed here for the
    // message) no longer costs accuracy.
    const double gridLoss = mrDb - peakDbOnGrid(a.frequenciesHz, row.zeta, fn);
    EXPECT_NEAR(valueOf(a.peakingDb), row.peakDb, 0.0005) << "grid loss " << gridLoss;
    EXPECT_NEAR(valueOf(a.peakingDb), mrDb, 1e-6);

    // The same relations evaluated in double precision: far tighter.
    const double z = row.zeta, z2 = z * z;
    const double root = std::sqrt(std::sqrt(1 + 4 * z2 * z2) - 2 * z2);
    EXPECT_NEAR(valueOf(a.margins.phaseMarginDeg), std::atan(2 * z / root) * 180 / kPi, 1e-5);
    EXPECT_LT(relErr(valueOf(a.margins.crossoverHz), fn * root), 1e-6);
    EXPECT_LT(relErr(valueOf(a.bandwidthHz),
                     fn * std::sqrt(1 - 2 * z2 + std::sqrt(4 * z2 * z2 - 4 * z2 + 2))),
              1e-6);
    EXPECT_NEAR(valueOf(a.step.overshootPct), 100 * std::exp(-kPi * z / std::sqrt(1 - z2)), 1e-5);
    // The closed-loop poles: a pair at wn with damping zeta.
    ASSERT_EQ(a.poles.size(), 2u);
    for (const ClosedLoopPole &p : a.poles) {
        EXPECT_LT(relErr(p.naturalHz, fn), 1e-6);
        EXPECT_LT(relErr(p.damping, z), 1e-6);
        EXPECT_LT(relErr(p.q, 1 / (2 * z)), 1e-6);
    }
}

INSTANTIATE_TEST_SUITE_P(
    OgataTable, SecondOrder,
    ::testing::Values(SecondOrderRow{30, 0.26864, 41.64, 5.721, 1.4737, 0.9306},
                      SecondOrderRow{45, 0.42045, 23.32, 2.350, 1.3554, 0.8409},
                      SecondOrderRow{50, 0.47774, 18.12, 1.521, 1.2968, 0.8017},
                      SecondOrderRow{51.83, 0.5, 16.30, 1.249, 1.2720, 0.7862},
                      SecondOrderRow{60, 0.61237, 8.77, 0.280, 1.1317, 0.7071},
                      SecondOrderRow{65.53, 0.70711, 4.32, 0.000, 1.0000, 0.6436},
                      SecondOrderRow{70, 0.80340, 1.44, 0.0, 0.8663, 0.5848}),
    [](const ::testing::TestParamInfo<SecondOrderRow> &row) {
        return "PhaseMargin" + std::to_string(static_cast<int>(std::round(row.param.pmDeg * 100)))
            + "cdeg";
    });

// ---------------------------------------------------------------------------------------
// Margins refined on the model
// ---------------------------------------------------------------------------------------

namespace {

/// T(j 2 pi f) of the three-pole follower, by hand (common practice).
cd threePoleLoop(double f)
{
    const cd s(0.0, f);
    return 1e4 / ((1.0 + s / 100.0) * (1.0 + s / 1e6) * (1.0 + s / 5e6));
}

} // namespace

// The crossover and phase-crossover frequencies are refined by root finding on the model
// (core/README.md §4, Metrics): |T(fc)| = 1 and arg T(fpc) = -180 deg to 1e-9, better than any
// grid frequency, and equal to the roots of the rational loop gain found by hand.
TEST(FeedbackMargins, CrossingsAreRefinedOnTheModel)
{
    const Design d = loadReference("three-pole-follower.loopsketch");
    const Analysis a = analyzeOrFail(d);
    auto model = LoopModel::build(d);
    ASSERT_TRUE(model.ok()) << model.errorText();
    const auto at = [&](double hz) {
        return model->loopGainAt(cd(0.0, 2 * kPi * hz));
    };
    const double fc = valueOf(a.margins.crossoverHz);
    const double fpc = valueOf(a.margins.phaseCrossoverHz);
    EXPECT_NEAR(std::abs(at(fc)), 1.0, 1e-9);
    const cd tp = at(fpc);
    EXPECT_LT(tp.real(), 0.0);
    EXPECT_NEAR(std::abs(std::arg(tp)), kPi, 1e-9);
    double gridBestMag = 1e300, gridBestPhase = 1e300;
    for (double f : a.frequenciesHz) {
        gridBestMag = std::min(gridBestMag, std::abs(std::abs(at(f)) - 1.0));
        gridBestPhase = std::min(gridBestPhase, kPi - std::abs(std::arg(at(f))));
    }
    EXPECT_GT(gridBestMag, 1e-6) << "crossover on a grid point; pick other poles";
    EXPECT_GT(std::abs(gridBestPhase), 1e-6);

    // The rational loop gain by hand.
    const double fcHand
        = bisect([](double f) { return std::abs(threePoleLoop(f)) - 1.0; }, 1e3, 1e8);
    const double fpcHand = bisect(
        [](double f) {
            return std::atan(f / 100.0) + std::atan(f / 1e6) + std::atan(f / 5e6) - kPi;
        },
        1e3, 1e9);
    EXPECT_LT(relErr(fc, fcHand), 1e-9);
    EXPECT_LT(relErr(fpc, fpcHand), 1e-9);
    const double pmHand = 180.0
        - (std::atan(fcHand / 100.0) + std::atan(fcHand / 1e6) + std::atan(fcHand / 5e6)) * 180.0
            / kPi;
    EXPECT_NEAR(valueOf(a.margins.phaseMarginDeg), pmHand, 1e-7);
    EXPECT_NEAR(valueOf(a.margins.gainMarginDb),
                -20.0 * std::log10(std::abs(threePoleLoop(fpcHand))), 1e-7);
    std::printf("fc %.12g Hz (hand %.12g), fpc %.12g Hz (hand %.12g), PM %.9f deg, GM %.9f dB\n",
                fc, fcHand, fpc, fpcHand, valueOf(a.margins.phaseMarginDeg),
                valueOf(a.margins.gainMarginDb));
}

namespace {

Analysis analyzeFuzzFound(const std::string &name)
{
    auto d = loadDesign(std::string(LOOPSKETCH_TEST_DATA_DIR) + "/fuzz-found/" + name);
    EXPECT_TRUE(d.ok()) << d.errorText();
    if (!d.ok())
        return {};
    auto a = analyze(*d);
    EXPECT_TRUE(a.ok()) << a.errorText();
    return a.ok() ? *a : Analysis{};
}

} // namespace

// Common practice (no number may be shown that the model cannot back): on designs the
// fuzzer found, a stable loop's step response is either finite at every point with its
// metrics, or absent with the reason said. Before the fix the first showed NaN from its
// first point (a zero pivot Eigen's condition estimate reads as 1, in a higher-index
// circuit), the second ran off to -9e26 and NaN after 1 s (the matrix exponential of a loop
// with modes from 0.6 to 1.6e11 rad/s), the third NaN from its 110th point; the metrics
// beside them read "overshoot 0 %, settled at 0 s".
TEST(StepFuzzFound, ResponseIsFiniteOrAbsentWithAReason)
{
    for (const char *name :
         {"step-capacitance-across-ideal-source.loopsketch",
          "step-stiff-over-long-times.loopsketch", "step-swing-beyond-resolution.loopsketch",
          "metrics-step-response-not-finite.loopsketch"}) {
        SCOPED_TRACE(name);
        const Analysis a = analyzeFuzzFound(name);
        ASSERT_TRUE(a.stable);
        const StepResult &s = a.step;
        if (s.response.empty()) {
            EXPECT_FALSE(s.problem.empty());
            EXPECT_FALSE(s.riseTimeS || s.overshootPct || s.settlingTimeS);
            continue;
        }
        EXPECT_TRUE(s.problem.empty()) << s.problem;
        for (std::size_t i = 0; i < s.response.size(); ++i)
            ASSERT_TRUE(std::isfinite(s.response[i]) && std::isfinite(s.timeS[i])) << i;
    }
    // A capacitance straight across the ideal source: said so in the designer's words, with
    // the part and field (the design's c_in of U1 lies between in_p on ground and in_n, which
    // the ideal source SIG holds), and no internal term.
    const std::string why
        = analyzeFuzzFound("step-capacitance-across-ideal-source.loopsketch").step.problem;
    EXPECT_THAT(why, HasSubstr("U1 c_in sits straight across an ideal voltage source"));
    EXPECT_THAT(why, HasSubstr("r_series"));
    EXPECT_THAT(why, ::testing::Not(HasSubstr("index")));
}

// Definition of the natural frequencies (common practice): the step model's modes are the
// closed-loop poles, which analyze() finds apart from it (generalized eigenvalues of the
// loop's pencil). The design is the fuzzer's seed 381: modes from 1.3e5 to 5.2e11 rad/s.
// Before the fix the step model mixed states of every scale in one rotation and put the
// complex pair at -115113 ± j1.0668e7 rad/s against the poles' -125987 ± j1.0669e7 (9 %).
TEST(StepFuzzFound, StiffStepModelKeepsTheClosedLoopPoles)
{
    auto d = loadDesign(std::string(LOOPSKETCH_TEST_DATA_DIR)
                        + "/fuzz-found/step-swing-beyond-resolution.loopsketch");
    ASSERT_TRUE(d.ok()) << d.errorText();
    auto model = LoopModel::build(*d);
    ASSERT_TRUE(model.ok()) << model.errorText();
    auto step = model->stepModel();
    ASSERT_TRUE(step.ok()) << step.errorText();
    const std::vector<std::complex<double>> poles = model->closedLoopPoles();
    const std::vector<std::complex<double>> modes = step->modes();
    ASSERT_EQ(modes.size(), poles.size());
    for (const std::complex<double> &p : poles) {
        double nearest = INFINITY;
        for (const std::complex<double> &m : modes)
            nearest = std::min(nearest, std::abs(m - p) / std::abs(p));
        EXPECT_LT(nearest, 1e-6) << p;
    }
}

// ---- closure: A_ol, inv_beta and the rate of closure ----------------------------------------

namespace {

/// A non-inverting stage: R1 from the output to the feedback node, R2 from there to ground,
/// so beta = R2 / (R1 + R2) exactly (no r_in, r_out = 0).
Design nonInverting(const std::string &poles, const std::string &r1, const std::string &r2)
{
    return parseOrFail(R"({"schema": "loopsketch.design/1", "parts": [
  {"id": "SIG", "type": "vsource", "pos": "in", "neg": "0"},
  {"id": "U1", "type": "gain_block", "in_p": "in", "in_n": "fb", "out": "out", "gain": "1e5",
   "poles_hz": )" + poles
                       + R"(},
  {"id": "R1", "type": "resistor", "a": "out", "b": "fb", "value": ")"
                       + r1 + R"("},
  {"id": "R2", "type": "resistor", "a": "fb", "b": "0", "value": ")"
                       + r2 + R"("},
  {"id": "RL", "type": "load", "a": "out", "b": "0", "r": "10k"}],
 "input": "SIG", "output": "voltage", "sweep": {"start": "1", "stop": "100M"}})");
}

} // namespace

TEST(Closure, InvBetaIsOneOverBetaAndItsDistanceToAolIsT)
{
    // beta = R2/(R1 + R2) = 0.1 for an ideal divider (voltage-divider rule, common practice):
    // 1/beta = 10 at every frequency, and |A_ol| / |inv_beta| = |T| by definition.
    const Analysis a = analyzeOrFail(nonInverting(R"(["10"])", "9k", "1k"));
    const LoopCurves &c = a.curves;
    ASSERT_EQ(c.invBeta.size(), a.frequenciesHz.size());
    for (std::size_t i = 0; i < a.frequenciesHz.size(); i += 37) {
        EXPECT_LT(relErr(std::abs(c.invBeta[i]), 10.0), 1e-9) << a.frequenciesHz[i];
        EXPECT_LT(
            relErr(std::abs(c.openLoopGain[i]) / std::abs(c.invBeta[i]), std::abs(c.loopGain[i])),
            1e-12);
        // A_ol of a single pole: 1e5 / (1 + j f / 10 Hz) (the gain block's definition).
        const cd expected = 1e5 / (1.0 + cd(0, a.frequenciesHz[i] / 10.0));
        EXPECT_LT(relErr(c.openLoopGain[i], expected), 1e-12);
    }
}

TEST(Closure, SinglePoleWithResistiveFeedbackClosesAt20dBPerDecade)
{
    // |A_ol| falls at 20 dB/decade above its pole, 1/beta is flat: the closure is 20 dB/decade
    // (rate-of-closure rule, common practice). At 100 kHz, four decades above the 10 Hz pole,
    // the local slope is 20 f^2/(f^2 + fp^2) = 20 within 1e-7.
    const Analysis a = analyzeOrFail(nonInverting(R"(["10"])", "9k", "1k"));
    ASSERT_TRUE(a.margins.crossoverHz && a.margins.rateOfClosureDbPerDecade);
    EXPECT_NEAR(*a.margins.crossoverHz, 1e5, 1e3);
    EXPECT_NEAR(*a.margins.rateOfClosureDbPerDecade, 20.0, 0.01);
    EXPECT_FALSE(a.margins.steepClosure);
}

TEST(Closure, TwoPoleBlockPastItsSecondPoleClosesAt40dBPerDecade)
{
    // Poles at 10 Hz and 10 kHz, 1/beta = 2: |A_ol| meets 1/beta near 70 kHz, seven times the
    // second pole, where A_ol falls at nearly 40 dB/decade (rate-of-closure rule, common
    // practice). The local slope there is 20 + 20 f^2/(f^2 + (10 kHz)^2), about 39.6.
    const Analysis a = analyzeOrFail(nonInverting(R"(["10", "10k"])", "1k", "1k"));
    ASSERT_TRUE(a.margins.crossoverHz && a.margins.rateOfClosureDbPerDecade);
    EXPECT_GT(*a.margins.crossoverHz, 5e4);
    const double f = *a.margins.crossoverHz, fp = 1e4;
    const double expected = 20.0 * (f * f / (f * f + 100.0)) + 20.0 * (f * f / (f * f + fp * fp));
    EXPECT_NEAR(*a.margins.rateOfClosureDbPerDecade, expected, 1e-3);
    EXPECT_NEAR(*a.margins.rateOfClosureDbPerDecade, 40.0, 1.0);
    EXPECT_TRUE(a.margins.steepClosure);
}

namespace {

/// A transimpedance stage: an ideal current source with Cd across it into the inverting
/// input, RF || CF feedback, a gain block of 1e5 with one pole at 10 Hz, r_out = 0.
Design twoPoleTia(double cf)
{
    std::ostringstream s;
    s.precision(17);
    s << R"({"schema": "loopsketch.design/1", "parts": [
  {"id": "PD", "type": "isource", "to": "in", "from": "0", "c_parallel": "20p"},
  {"id": "U1", "type": "gain_block", "in_p": "0", "in_n": "in", "out": "out", "gain": "1e5",
   "poles_hz": ["10"]},
  {"id": "RF", "type": "resistor", "a": "in", "b": "out", "value": "1M"},
  {"id": "CF", "type": "capacitor", "a": "in", "b": "out", "value": )"
      << cf << R"(},
  {"id": "RL", "type": "load", "a": "out", "b": "0", "r": "10k"}],
 "input": "PD", "output": "voltage", "sweep": {"start": "1", "stop": "1G"}})";
    return parseOrFail(s.str());
}

} // namespace

class TiaPhaseMargin : public ::testing::TestWithParam<double>
{
};

TEST_P(TiaPhaseMargin, MatchesTheClosedFormOfTheTwoPoleLoop)
{
    // The loop of a transimpedance stage is T(s) = A0/(1 + s/wa) * (1 + s a)/(1 + s b), with
    // a = RF CF and b = RF (CF + Cd): two poles and the zero of the feedback capacitor
    // (Franco, Design with Operational Amplifiers and Analog Integrated Circuits, 3rd ed.,
    // ch. 8, stability of the transimpedance loop; from memory). |T(jw)| = 1 is a quadratic
    // in x = w^2: (b^2/wa^2) x^2 + (1/wa^2 + b^2 - A0^2 a^2) x + 1 - A0^2 = 0, and
    // PM = 180 - atan(wc/wa) - atan(wc b) + atan(wc a).
    const double cf = GetParam(), cd = 20e-12, rf = 1e6, a0 = 1e5, wa = 2 * kPi * 10.0;
    const double a = rf * cf, b = rf * (cf + cd);
    const double qa = b * b / (wa * wa), qb = 1 / (wa * wa) + b * b - a0 * a0 * a * a,
                 qc = 1 - a0 * a0;
    const double x = (-qb + std::sqrt(qb * qb - 4 * qa * qc)) / (2 * qa);
    const double wc = std::sqrt(x);
    const double pm
        = 180.0 - (std::atan(wc / wa) + std::atan(wc * b) - std::atan(wc * a)) * 180.0 / kPi;

    const Analysis an = analyzeOrFail(twoPoleTia(cf));
    ASSERT_TRUE(an.margins.phaseMarginDeg && an.margins.crossoverHz);
    EXPECT_LT(relErr(*an.margins.crossoverHz, wc / (2 * kPi)), 1e-9);
    EXPECT_NEAR(*an.margins.phaseMarginDeg, pm, 1e-6) << "CF = " << cf;
}

INSTANTIATE_TEST_SUITE_P(CfFrom0p1To4p7, TiaPhaseMargin,
                         ::testing::Values(0.1e-12, 0.47e-12, 1e-12, 2.2e-12, 4.7e-12));

// A loop that leads at its crossover: a follower (beta = 1, no loading) around a gain block
// of 0.01 with a zero at 1 Hz and a pole at 1 MHz, so T(jf) = 0.01 (1 + jf/1)/(1 + jf/1e6)
// rises through |T| = 1 near 100 Hz with the phase near +89.4 degrees. |T| = 1 solves
// 1e-4 (1 + f^2) = 1 + f^2/1e12 (by hand). The margin is the angle left to the -1 point,
// reached here by leading to +180: 180 - phase (the margin as the distance of T from -1 on
// the unit circle; common practice). 180 + phase read 269.4 degrees (unstable fuzz designs
// with zeros showed 241 and 269.7).
TEST(PhaseMargin, LoopLeadingAtItsCrossoverHasTheAngleLeftToPlus180)
{
    const Design d = parseOrFail(R"({"schema": "loopsketch.design/1", "parts": [
  {"id": "SIG", "type": "vsource", "pos": "in", "neg": "0"},
  {"id": "U1", "type": "gain_block", "in_p": "in", "in_n": "out", "out": "out", "gain": "0.01",
   "zeros_hz": ["1"], "poles_hz": ["1e6"]},
  {"id": "RL", "type": "load", "a": "out", "b": "0", "r": "10k"}],
 "input": "SIG", "output": "voltage", "sweep": {"start": "0.01", "stop": "100M"}})");
    const double fc = std::sqrt((1.0 - 1e-4) / (1e-4 - 1e-12));
    const double phase = (std::atan(fc) - std::atan(fc / 1e6)) * 180.0 / kPi;
    const Analysis a = analyzeOrFail(d);
    ASSERT_TRUE(a.margins.phaseMarginDeg && a.margins.crossoverHz && a.margins.crossoverPhaseDeg);
    EXPECT_LT(relErr(*a.margins.crossoverHz, fc), 1e-9);
    EXPECT_NEAR(*a.margins.crossoverPhaseDeg, phase, 1e-6);
    EXPECT_NEAR(*a.margins.phaseMarginDeg, 180.0 - phase, 1e-6);
    // The lean trial of suggest and the spread reads it alike.
    const auto t = evaluateTrial(d, coarseGrid(d.sweep, 20));
    ASSERT_TRUE(t.ok() && t->phaseMarginDeg) << t.errorText();
    EXPECT_NEAR(*t->phaseMarginDeg, 180.0 - phase, 1e-6);
}
