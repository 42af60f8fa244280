// Noise of the closed loop: Johnson-Nyquist densities, a transimpedance stage's feedback
// resistor, the gain block's voltage noise times the noise gain, the equivalent noise
// bandwidth of a single-pole roll-off, the adjoint solve against one forward solve per
// source, and the per-source contributions adding in power.

#include "loopsketch/analysis/analysis.h"
#include "loopsketch/analysis/noise.h"
#include "loopsketch/circuit/circuit.h"
#include "loopsketch/circuit/loopcircuit.h"
#include "loopsketch/design/designfile.h"
#include "loopsketch/report/noisenames.h"

#include "designs.h"
#include "noisedesigns.h"
#include "numeric.h"
#include "textchecks.h"

#include <gmock/gmock.h>
#include <gtest/gtest.h>

#include <cmath>
#include <complex>
#include <cstdio>
#include <filesystem>
#include <numbers>
#include <string>
#include <vector>

using namespace loopsketch;
using namespace loopsketch::test;
using ::testing::HasSubstr;

namespace {

const NoiseContribution *find(const NoiseAnalysis &n, const std::string &name)
{
    for (const NoiseContribution &c : n.contributions) {
        if (c.name == name)
            return &c;
    }
    return nullptr;
}

} // namespace

// English Wikipedia "Johnson-Nyquist noise": 1 kOhm at 300 K gives about 4.07 nV/sqrt(Hz);
// k_B = 1.380649e-23 J/K exact by the 2019 SI definition. The digits 4.070355 are derived
// from that formula (reference-values.md section 6, [C]).
TEST(Noise, ThermalNoiseOfOneKiloOhmAtRoomTemperature)
{
    EXPECT_NEAR(kBoltzmann, 1.380649e-23, 1e-30);
    EXPECT_NEAR(thermalNoiseVoltage(1e3, 300.0), 4.07e-9, 0.005e-9);
    EXPECT_LT(relErr(thermalNoiseVoltage(1e3, 300.0), 4.070355e-9), 1e-6);
    EXPECT_LT(relErr(thermalNoiseCurrent(1e3, 300.0), 4.070355e-12), 1e-6);
    // derived from the same formula: 290 K and 25 degC
    EXPECT_LT(relErr(thermalNoiseVoltage(1e3, 290.0), 4.001941e-9), 1e-6);
    EXPECT_LT(relErr(thermalNoiseVoltage(1e3, 298.15), 4.057785e-9), 1e-6);
    // Wikipedia's rule of thumb, 0.13 sqrt(R) nV/sqrt(Hz) at room temperature
    EXPECT_NEAR(thermalNoiseVoltage(1e4, 300.0) / std::sqrt(1e4), 0.13e-9, 0.005e-9);
}

// Transimpedance stage: current source into the inverting node, RF from there to the
// output. RF's noise current 4kT/RF flows through RF into the virtual ground, so the output
// density from RF alone is sqrt(4kT RF) at low frequency (Johnson-Nyquist, Wikipedia, with
// the ideal transimpedance relation v_out = -i RF). 100 kOhm at 300 K is 40.703548
// nV/sqrt(Hz), derived from Wikipedia's formula.
TEST(Noise, TransimpedanceFeedbackResistorAtLowFrequency)
{
    const Design d = parseOrFail(designText(
        R"({"id": "I1", "type": "isource", "to": "n", "from": "0"},
           {"id": "U1", "type": "gain_block", "in_p": "0", "in_n": "n", "out": "out",
            "gain": "1e7", "gbw": "100M"},
           {"id": "RF", "type": "resistor", "a": "n", "b": "out", "value": "100k"},
           {"id": "RL", "type": "load", "a": "out", "b": "0", "r": "10k"})",
        "I1", R"(, "temperature": "300 K")"));
    EXPECT_NEAR(d.temperatureK(), 300.0, 1e-12);
    auto n = analyzeNoise(d);
    ASSERT_TRUE(n.ok()) << n.errorText();
    const NoiseContribution *rf = find(*n, "RF");
    ASSERT_NE(rf, nullptr);
    EXPECT_EQ(rf->partId, "RF");
    EXPECT_LT(relErr(std::sqrt(rf->outputPsd.front()), 40.703548e-9), 1e-5);
    EXPECT_LT(relErr(std::sqrt(rf->outputPsd.front()), std::sqrt(4 * kBoltzmann * 300.0 * 1e5)),
              1e-5);
    // RF is the only resistor that reaches the output (the load sits on an ideal source)
    EXPECT_LT(relErr(n->outputDensity.front(), 40.703548e-9), 1e-5);
    // input-referred: sqrt(4kT/RF), the current density of RF
    EXPECT_LT(relErr(n->inputDensity.front(), thermalNoiseCurrent(1e5, 300.0)), 1e-5);
}

// The gain block's en reaches the output times the noise gain 1 + Z_F / Z_in, for the
// non-inverting and the inverting stage alike (textbook op-amp noise relation, from memory;
// with an ideal source the source end of RG is AC ground in both). RF = 9 kOhm, RG = 1 kOhm:
// noise gain 10. With a 1/f corner fc the density is en sqrt(1 + fc/f) (issue 7's model).
TEST(Noise, VoltageNoiseTimesNoiseGain)
{
    const std::string amp = R"({"id": "U1", "type": "gain_block", "in_p": "P", "in_n": "m",
        "out": "out", "gain": "1e7", "en": "10n", "en_corner_hz": "100"},
        {"id": "RF", "type": "resistor", "a": "m", "b": "out", "value": "9k"},
        {"id": "RL", "type": "load", "a": "out", "b": "0", "r": "10k"},)";
    const std::string nonInverting
        = amp + R"({"id": "V1", "type": "vsource", "pos": "in", "neg": "0"},
                   {"id": "RG", "type": "resistor", "a": "m", "b": "0", "value": "1k"},
                   {"id": "RB", "type": "resistor", "a": "in", "b": "P", "value": "1"})";
    const std::string inverting = amp + R"({"id": "V1", "type": "vsource", "pos": "in", "neg": "0"},
                   {"id": "RG", "type": "resistor", "a": "in", "b": "m", "value": "1k"},
                   {"id": "RB", "type": "resistor", "a": "P", "b": "0", "value": "1"})";
    for (const std::string &parts : {nonInverting, inverting}) {
        const Design d = parseOrFail(designText(parts, "V1"));
        auto n = analyzeNoise(d);
        ASSERT_TRUE(n.ok()) << n.errorText();
        const NoiseContribution *en = find(*n, "U1:en");
        ASSERT_NE(en, nullptr);
        for (std::size_t i = 0; i < n->frequenciesHz.size(); i += 20) {
            const double f = n->frequenciesHz[i];
            EXPECT_LT(relErr(n->noiseGain[i], 10.0), 1e-5) << f;
            const double expected = 10e-9 * 10.0 * std::sqrt(1.0 + 100.0 / f);
            EXPECT_LT(relErr(std::sqrt(en->outputPsd[i]), expected), 1e-5) << f;
        }
    }
}

// White noise through a single-pole roll-off: integral of 1 / (1 + (f/fc)^2) from 0 to
// infinity is pi/2 fc (the equivalent noise bandwidth pi/2 f_-3dB; common practice, and
// elementary calculus). The source's own 10 kOhm into 1.6 nF, buffered by a follower: the
// whole-sweep integral of the output density against the default brick-wall band.
TEST(Noise, SinglePoleEquivalentNoiseBandwidth)
{
    const double r = 10e3, c = 1.6e-9;
    const double fc = 1.0 / (2 * kPi * r * c);
    const Design d = parseOrFail(designText(
        R"({"id": "V1", "type": "vsource", "pos": "P", "neg": "0", "r_series": "10k"},
           {"id": "C1", "type": "capacitor", "a": "P", "b": "0", "value": "1.6n"},
           {"id": "U1", "type": "gain_block", "in_p": "P", "in_n": "out", "out": "out",
            "gain": "1e7"},
           {"id": "RL", "type": "load", "a": "out", "b": "0", "r": "10k"})",
        "V1", R"(, "temperature": 300)",
        R"({"start": "0.1", "stop": "1G", "points_per_decade": 200})"));
    const double white = 4 * kBoltzmann * 300.0 * r;

    NoiseOptions whole;
    whole.bandLowHz = d.sweep.start.si;
    whole.bandHighHz = d.sweep.stop.si;
    auto n = analyzeNoise(d, whole);
    ASSERT_TRUE(n.ok()) << n.errorText();
    EXPECT_EQ(n->bandKind, NoiseBandKind::Given);
    ASSERT_TRUE(n->outputRms);
    // the band misses 0..0.1 Hz and 1 GHz..inf: both below 1e-5 of pi/2 fc (fc ~ 9.9 kHz)
    EXPECT_LT(relErr(*n->outputRms * *n->outputRms, white * kPi / 2 * fc), 2e-5);

    // The default band: from the sweep start until the power left above is under 0.1 %.
    auto a = analyze(d);
    ASSERT_TRUE(a.ok()) << a.errorText();
    ASSERT_TRUE(a->bandwidthHz);
    EXPECT_LT(relErr(*a->bandwidthHz, fc), 1e-4);
    ASSERT_TRUE(a->noise);
    EXPECT_EQ(a->noise->bandKind, NoiseBandKind::Converged);
    ASSERT_TRUE(a->noise->outputRms);
    const double power = *a->noise->outputRms * *a->noise->outputRms;
    EXPECT_LT(power, white * kPi / 2 * fc);
    EXPECT_GT(power, (1 - 1.1e-3) * white * kPi / 2 * fc);
    // the brick-wall equivalent of a single pole is the same figure
    ASSERT_TRUE(a->noise->brickWall && a->noise->brickWall->outputRms);
    EXPECT_LT(relErr(a->noise->brickWall->highHz, kPi / 2 * *a->bandwidthHz), 1e-12);
    EXPECT_LT(relErr(*a->noise->brickWall->outputRms, std::sqrt(white * kPi / 2 * fc)), 2e-4);
}

// The adjoint solve against the plain way: for each resistor a current source across it,
// one forward solve of the loop netlist (solveDense), |H|^2 4kT/R at the output.
TEST(Noise, AdjointMatchesOneForwardSolvePerSource)
{
    Design loaded = loadOrFail(kDesignsDir / "demo.loopsketch");
    const Design &d = loaded;
    auto n = analyzeNoise(d);
    ASSERT_TRUE(n.ok()) << n.errorText();
    Netlist base = buildLoopNetlist(d);
    // The gain block's r_in and r_out are noiseless (issue 17): no entry of their own.
    EXPECT_EQ(find(*n, "U1:r_in"), nullptr);
    EXPECT_EQ(find(*n, "U1:r_out"), nullptr);
    std::erase_if(base.elements, [](const NetlistElement &e) {
        return e.name == "U1:r_in" || e.name == "U1:r_out";
    });
    const Netlist circuit = buildLoopNetlist(d);
    const std::vector<std::size_t> picks
        = {0, n->frequenciesHz.size() / 2, n->frequenciesHz.size() - 1};
    std::vector<double> hz;
    for (std::size_t i : picks)
        hz.push_back(n->frequenciesHz[i]);
    int checked = 0;
    for (const NetlistElement &e : base.elements) {
        if (e.kind != NetlistElement::Kind::Resistor)
            continue;
        Netlist probe = circuit;
        probe.addCurrentSource("probe", e.a, e.b, probe.addInput());
        auto sys = assembleSystem(probe);
        ASSERT_TRUE(sys.ok()) << sys.errorText();
        auto h = solveDense(*sys, hz);
        ASSERT_TRUE(h.ok()) << h.errorText();
        const NoiseContribution *c = find(*n, e.name);
        ASSERT_NE(c, nullptr) << e.name;
        for (std::size_t k = 0; k < picks.size(); ++k) {
            const double forward = std::norm((*h)[k](loopio::kOutput, probe.inputCount - 1)) * 4
                * kBoltzmann * d.temperatureK() / e.value;
            EXPECT_NEAR(c->outputPsd[picks[k]], forward, 1e-9 * forward + 1e-40)
                << e.name << " at " << hz[k] << " Hz";
        }
        ++checked;
    }
    EXPECT_EQ(checked, 3); // PD1:r_parallel, RF, RL
}

// Uncorrelated sources add in power (the basic rule of noise analysis, common practice).
TEST(Noise, ContributionsAddInPower)
{
    const Design d = parseOrFail(designText(
        R"({"id": "V1", "type": "vsource", "pos": "in", "neg": "0", "r_series": "600"},
           {"id": "U1", "type": "gain_block", "in_p": "in", "in_n": "m", "out": "out",
            "gain": "100dB", "gbw": "10M", "r_in": "10M", "r_out": "75",
            "en": "5n", "en_corner_hz": "200", "in": "2p", "in_corner_hz": "1k"},
           {"id": "RF", "type": "resistor", "a": "m", "b": "out", "value": "47k"},
           {"id": "RG", "type": "resistor", "a": "m", "b": "0", "value": "1k"},
           {"id": "RL", "type": "load", "a": "out", "b": "0", "r": "2k"})",
        "V1"));
    for (bool userBand : {false, true}) {
        NoiseOptions o;
        if (userBand) {
            o.bandLowHz = 10.0;
            o.bandHighHz = 20e3;
        }
        auto n = analyzeNoise(d, o);
        ASSERT_TRUE(n.ok()) << n.errorText();
        // four resistors (V1:r_series, RF, RG, RL; r_in and r_out are noiseless), en, in at
        // each input
        EXPECT_EQ(n->contributions.size(), 7u);
        for (std::size_t i = 0; i < n->frequenciesHz.size(); ++i) {
            double sum = 0;
            for (const NoiseContribution &c : n->contributions)
                sum += c.outputPsd[i];
            EXPECT_LT(relErr(sum, n->outputDensity[i] * n->outputDensity[i]), 1e-12);
        }
        ASSERT_TRUE(n->outputRms);
        double power = 0;
        for (const NoiseContribution &c : n->contributions)
            power += c.rms.value() * c.rms.value();
        EXPECT_LT(relErr(power, *n->outputRms * *n->outputRms), 1e-12) << userBand;
        EXPECT_GT(*n->outputRms, 0.0);
    }
}

TEST(Noise, DesignFileTemperatureAndNoiseFields)
{
    const std::string parts = R"({"id": "V1", "type": "vsource", "pos": "in", "neg": "0"},
             {"id": "U1", "type": "gain_block", "in_p": "in", "in_n": "out", "out": "out",
              "gain": "1e5", "en": "4n5", "in_corner_hz": "1k", "in": "0.5p"},
             {"id": "RL", "type": "load", "a": "out", "b": "0", "r": "1k"})";
    const Design plain = parseOrFail(designText(parts, "V1"));
    EXPECT_FALSE(plain.temperature);
    EXPECT_NEAR(plain.temperatureK(), 298.15, 1e-12);
    const Part *u1 = plain.findPart("U1");
    ASSERT_NE(u1, nullptr);
    EXPECT_NEAR(u1->number("en"), 4.5e-9, 1e-21);
    EXPECT_NEAR(u1->number("in"), 0.5e-12, 1e-24);
    EXPECT_NEAR(u1->number("en_corner_hz"), 0.0, 1e-300);

    const Design celsius = parseOrFail(designText(parts, "V1", R"(, "temperature": "25 °C")"));
    EXPECT_NEAR(celsius.temperatureK(), 298.15, 1e-12);
    const std::string saved = serializeDesign(celsius);
    EXPECT_THAT(saved, HasSubstr(R"("temperature": "25 °C")"));
    EXPECT_THAT(saved, HasSubstr(R"("en": "4n5")"));
    auto again = parseDesign(saved);
    ASSERT_TRUE(again.ok()) << again.errorText();
    EXPECT_EQ(serializeDesign(*again), saved);
    EXPECT_NEAR(parseOrFail(designText(parts, "V1", R"(, "temperature": "77K")")).temperatureK(),
                77.0, 1e-12);
    // the old files carry no temperature line
    EXPECT_THAT(serializeDesign(plain), ::testing::Not(HasSubstr("temperature")));

    for (const auto &[extra, message] :
         {std::pair{R"(, "temperature": "-300 K")", "above absolute zero"},
          std::pair{R"(, "temperature": "warm")", "is not a temperature"},
          std::pair{R"(, "temperature": true)", "expected a number of kelvin"}}) {
        auto bad = parseDesign(designText(parts, "V1", extra), "bad.loopsketch");
        ASSERT_FALSE(bad.ok()) << extra;
        EXPECT_THAT(bad.errorText(), HasSubstr("bad.loopsketch")) << extra;
        EXPECT_THAT(bad.errorText(), HasSubstr("temperature")) << extra;
        EXPECT_THAT(bad.errorText(), HasSubstr(message)) << extra;
    }
    std::string negative = parts;
    negative.replace(negative.find("\"4n5\""), 5, "\"-4n\"");
    auto bad = parseDesign(designText(negative, "V1"), "bad.loopsketch");
    ASSERT_FALSE(bad.ok());
    EXPECT_THAT(bad.errorText(), HasSubstr("part U1, field en"));
    EXPECT_THAT(bad.errorText(), HasSubstr("must not be negative"));
}

TEST(Noise, AnalysisJsonAndCsvCarryNoise)
{
    const Analysis a = analyzeFileOrFail(kDesignsDir / "demo.loopsketch");
    const std::string json = analysisToJson(a);
    expectContainsEach(json,
                       {"\"noise\": {", "\"output_rms\"", "\"contributions\"",
                        // the band and the method stated (issue 12): the demo has no noise_band
                        "\"kind\": \"converged\"",
                        "until the power left above is under 0.1 % of the total",
                        "\"input_rms_gain_at_hz\"", "\"brick_wall_equivalent\": {"});
    const std::string text = analysisToText(a);
    EXPECT_THAT(text, HasSubstr("band method"));
    EXPECT_THAT(text, HasSubstr("brick-wall equivalent"));
    const std::string csv = sweepToCsv(a);
    const std::string header = csv.substr(0, csv.find('\n'));
    // units in the names as the other columns: the demo is V out per A in
    EXPECT_THAT(header, HasSubstr(",output_noise_v_per_rthz,input_noise_a_per_rthz"));
}

// A band beyond the sweep is integrated on the circuit model: the same figure as with a
// sweep that covers it (common practice: one computation reached two ways must agree).
TEST(Noise, BandBeyondTheSweepIsIntegratedOnTheModel)
{
    Design loaded = loadOrFail(kDesignsDir / "demo.loopsketch");
    NoiseOptions o;
    o.bandLowHz = 0.01;
    o.bandHighHz = 1e3;
    auto n = analyzeNoise(loaded, o);
    ASSERT_TRUE(n.ok()) << n.errorText();
    Design wide = loaded;
    wide.sweep.start = {0.001, "1m"};
    wide.sweep.stop = {1e4, "10k"};
    auto w = analyzeNoise(wide, o);
    ASSERT_TRUE(w.ok()) << w.errorText();
    ASSERT_TRUE(n->outputRms && w->outputRms);
    EXPECT_LT(relErr(*n->outputRms, *w->outputRms), 1e-9);
    EXPECT_GT(*n->outputRms, 0.0);

    o.bandLowHz = 1e3;
    o.bandHighHz = 10.0;
    auto bad = analyzeNoise(loaded, o);
    ASSERT_FALSE(bad.ok());
    EXPECT_THAT(bad.errorText(), HasSubstr("noise band must be two frequencies above zero"));
}

// The noise analysis inside analyze() runs over the grid the loop model was swept on; the
// standalone analyzeNoise() computes the design's grid itself. Given the same closed-loop
// bandwidth both describe the same circuit at the same frequencies (common practice: one
// computation reached two ways must agree).
TEST(Noise, AnalysisNoiseMatchesTheStandaloneNoiseAnalysis)
{
    Design loaded = loadOrFail(kDesignsDir / "demo.loopsketch");
    auto a = analyze(loaded);
    ASSERT_TRUE(a.ok()) << a.errorText();
    ASSERT_TRUE(a->noise.has_value()) << a->noiseProblem;
    NoiseOptions o;
    o.closedLoopBandwidthHz = a->bandwidthHz;
    auto alone = analyzeNoise(loaded, o);
    ASSERT_TRUE(alone.ok()) << alone.errorText();
    const NoiseAnalysis &inside = *a->noise;
    ASSERT_EQ(inside.frequenciesHz.size(), alone->frequenciesHz.size());
    ASSERT_EQ(inside.frequenciesHz.size(), a->frequenciesHz.size());
    for (std::size_t i = 0; i < inside.frequenciesHz.size(); i += 50) {
        EXPECT_LT(relErr(inside.frequenciesHz[i], alone->frequenciesHz[i]), 1e-15) << i;
        EXPECT_LT(relErr(inside.outputDensity[i], alone->outputDensity[i]), 1e-12) << i;
        EXPECT_LT(relErr(inside.noiseGain[i], alone->noiseGain[i]), 1e-12) << i;
    }
    ASSERT_TRUE(inside.outputRms && alone->outputRms);
    EXPECT_LT(relErr(*inside.outputRms, *alone->outputRms), 1e-12);
    EXPECT_NEAR(inside.bandHighHz, alone->bandHighHz, 1e-9 * alone->bandHighHz);
    ASSERT_EQ(inside.contributions.size(), alone->contributions.size());
    for (std::size_t k = 0; k < inside.contributions.size(); ++k)
        EXPECT_LT(relErr(inside.contributions[k].rms.value(), alone->contributions[k].rms.value()),
                  1e-12)
            << inside.contributions[k].name;
}

namespace {

// 1 Hz and 10 Hz: grid points of a sweep from 1 Hz with 20 points per decade.
constexpr std::size_t kAt1Hz = 0, kAt10Hz = 20;

} // namespace

// Issue 17: the gain block's r_in and r_out are small-signal values, not resistors; with
// en = in = 0 the TIA's output density at low frequency is that of RF and the shunt alone,
// sqrt(4kT RF + 4kT RF^2 / R_sh) (common practice; k from CODATA 2018, exact SI value),
// whatever r_in is (it loads the inverting node, which the loop holds at virtual ground).
TEST(Noise, GainBlockResistancesAreNoiseless)
{
    const double k = 1.380649e-23, t = 298.15, rf = 200e3, rsh = 1e9;
    const double expected = std::sqrt(4 * k * t * rf + 4 * k * t * rf * rf / rsh);
    for (const char *rIn : {"1M", "1T"}) {
        const Design d
            = parseOrFail(designText(tiaParts(std::string(R"(, "r_in": ")") + rIn + "\""), "PD1"));
        auto n = analyzeNoise(d);
        ASSERT_TRUE(n.ok()) << n.errorText();
        for (const NoiseContribution &c : n->contributions) {
            EXPECT_NE(c.name, "U1:r_in") << rIn;
            EXPECT_NE(c.name, "U1:r_out") << rIn;
            EXPECT_EQ(c.kind, NoiseSourceKind::Resistor) << c.name;
        }
        EXPECT_EQ(n->contributions.size(), 3u) << rIn; // PD1:r_parallel, RF, RL
        EXPECT_LT(relErr(n->outputDensity[kAt1Hz], expected), 1e-3) << rIn;
        EXPECT_LT(relErr(n->outputDensity[kAt10Hz], expected), 1e-3) << rIn;
    }
}

// 2qI (Schottky's shot noise formula, common practice), q = 1.602176634e-19 C (CODATA
// 2018, exact SI value): 5 uA gives 1.266 pA/sqrt(Hz); the digits 1.2657712 derived from it.
TEST(Noise, ShotNoiseOfADirectCurrent)
{
    EXPECT_NEAR(kElementaryCharge, 1.602176634e-19, 1e-30);
    EXPECT_NEAR(shotNoiseCurrent(5e-6), 1.266e-12, 0.0005e-12);
    EXPECT_LT(relErr(shotNoiseCurrent(5e-6), 1.2657712e-12), 1e-7);
    EXPECT_LT(relErr(shotNoiseCurrent(-5e-6), 1.2657712e-12), 1e-7); // |i_dc|
    EXPECT_NEAR(shotNoiseCurrent(0.0), 0.0, 1e-300);

    // In the TIA the shot noise current flows through RF: 1.2658 pA x 200 kOhm at low
    // frequency (the ideal transimpedance relation, common practice), named "PD1 shot".
    const Design d = parseOrFail(designText(tiaParts("", R"(, "i_dc": "5u")"), "PD1"));
    auto n = analyzeNoise(d);
    ASSERT_TRUE(n.ok()) << n.errorText();
    const NoiseContribution *shot = find(*n, "PD1:shot");
    ASSERT_NE(shot, nullptr);
    EXPECT_EQ(shot->kind, NoiseSourceKind::Shot);
    EXPECT_EQ(noiseSourceLabel(*shot), "PD1 shot");
    EXPECT_LT(relErr(std::sqrt(shot->outputPsd[kAt1Hz]), 1.2657712e-12 * 200e3), 1e-3);
}

// Issue 18: the TIA's density at low frequency against the closed form
//   sqrt(4kT RF + 4kT RF^2/R_sh + (i_n RF)^2 + 2q i_dc RF^2 + (e_n,f (1 + RF/R_sh))^2),
// e_n,f = e_n sqrt(1 + f_c/f) (common practice: RF's and the shunt's thermal noise, the
// current noises through RF, e_n times the noise gain 1 + RF/R_sh; k and q CODATA 2018).
TEST(Noise, TransimpedanceDensityAgainstTheClosedForm)
{
    const double k = 1.380649e-23, q = 1.602176634e-19, t = 298.15;
    const double rf = 200e3, rsh = 1e9, en = 6e-9, fc = 100, in = 1e-15, idc = 2e-9;
    const Design d = parseOrFail(
        designText(tiaParts(R"(, "c_in": "5p", "en": "6n", "en_corner_hz": "100", "in": "1f")",
                            R"(, "i_dc": "2n")"),
                   "PD1"));
    auto n = analyzeNoise(d);
    ASSERT_TRUE(n.ok()) << n.errorText();
    for (std::size_t i : {kAt1Hz, kAt10Hz}) {
        const double f = n->frequenciesHz[i];
        const double enf = en * std::sqrt(1 + fc / f);
        const double expected
            = std::sqrt(4 * k * t * rf + 4 * k * t * rf * rf / rsh + (in * rf) * (in * rf)
                        + 2 * q * idc * rf * rf + std::pow(enf * (1 + rf / rsh), 2));
        EXPECT_LT(relErr(n->outputDensity[i], expected), 1e-3) << f << " Hz";
    }
}

// Issue 18: en sits in series with in_p, the input capacitances on the pins, so c_in and
// c_cm count in en's noise gain. With r_out = 0 and no r_in the noise gain is exactly
// a / (1 + a beta), beta = 1 / (1 + Z_F Y_in), Y_in = 1/R_sh + s (C_D + c_in + c_cm), Z_F =
// RF || CF (the textbook non-inverting noise gain with finite open-loop gain, common
// practice).
TEST(Noise, InputCapacitancesCountInTheVoltageNoiseGain)
{
    const double rf = 200e3, cf = 4.7e-12, rsh = 1e9, cd = 15e-12, a0 = 1e6;
    struct Case
    {
        double cin, ccm;
        const char *text;
    };
    for (const Case &c : {Case{0.0, 0.0, R"("c_in": "0", "c_cm": "0")"},
                          Case{5e-12, 0.0, R"("c_in": "5p", "c_cm": "0")"},
                          Case{0.0, 3e-12, R"("c_in": "0", "c_cm": "3p")"},
                          Case{5e-12, 3e-12, R"("c_in": "5p", "c_cm": "3p")"}}) {
        const double cin = c.cin, ccm = c.ccm;
        const std::string extra = std::string(R"(, "en": "6n", )") + c.text;
        const Design d = parseOrFail(designText(tiaParts(extra, {}, "0"), "PD1"));
        auto n = analyzeNoise(d);
        ASSERT_TRUE(n.ok()) << n.errorText();
        for (std::size_t i = 0; i < n->frequenciesHz.size(); i += 20) {
            const double f = n->frequenciesHz[i];
            const std::complex<double> s(0.0, 2 * kPi * f);
            const std::complex<double> a
                = a0 / ((1.0 + s / (2 * kPi * 10e6 / a0)) * (1.0 + s / (2 * kPi * 60e6)));
            const std::complex<double> zf = rf / (1.0 + s * rf * cf);
            const std::complex<double> yin = 1.0 / rsh + s * (cd + cin + ccm);
            const std::complex<double> beta = 1.0 / (1.0 + zf * yin);
            EXPECT_LT(relErr(n->noiseGain[i], std::abs(a / (1.0 + a * beta))), 1e-9)
                << f << " Hz, c_in " << cin << ", c_cm " << ccm;
        }
    }
}

// c_cm is part of the circuit, not only of the noise: from each input pin to ground, so in
// a non-inverting stage it loads the source (common practice). A 10 kOhm source into a
// follower with c_cm = 1 nF: the input pin's node is a single pole at 1 / (2 pi 10k 1n).
TEST(Noise, CommonModeCapacitanceLoadsTheCircuit)
{
    const Design d = parseOrFail(designText(
        R"({"id": "V1", "type": "vsource", "pos": "P", "neg": "0", "r_series": "10k"},
           {"id": "U1", "type": "gain_block", "in_p": "P", "in_n": "out", "out": "out",
            "gain": "1e7", "c_cm": "1n"},
           {"id": "RL", "type": "load", "a": "out", "b": "0", "r": "10k"})",
        "V1"));
    auto a = analyze(d);
    ASSERT_TRUE(a.ok()) << a.errorText();
    ASSERT_TRUE(a->bandwidthHz);
    // c_cm at in_n sits on the follower's output, driven by an ideal source: no effect
    EXPECT_LT(relErr(*a->bandwidthHz, 1.0 / (2 * kPi * 10e3 * 1e-9)), 1e-4);
}

// Issue 12: the default band's figure does not move with the sweep stop (the integral
// converges on the model, beyond the sweep where needed). The demo with en = 50 nV/sqrt(Hz),
// stops from 100 kHz to 10 GHz; the integral to convergence within 0.1 % (common practice:
// a figure of the circuit cannot depend on how far the plot is drawn).
TEST(Noise, DefaultBandDoesNotMoveWithTheSweepStop)
{
    Design loaded = loadOrFail(kDesignsDir / "demo.loopsketch");
    Design d = loaded;
    d.findPart("U1")->fields["en"] = {50e-9, "50n"};
    std::vector<double> rms;
    for (const auto &[stop, text] : {std::pair{1e8, "100M"}, std::pair{1e10, "10G"},
                                     std::pair{1e9, "1G"}, std::pair{1e5, "100k"}}) {
        d.sweep.stop = {stop, text};
        auto n = analyzeNoise(d);
        ASSERT_TRUE(n.ok()) << n.errorText();
        EXPECT_EQ(n->bandKind, NoiseBandKind::Converged) << text;
        EXPECT_THAT(n->bandMethod, HasSubstr("under 0.1 % of the total")) << text;
        ASSERT_TRUE(n->outputRms);
        rms.push_back(*n->outputRms);
    }
    for (double r : rms)
        EXPECT_LT(relErr(r, rms.front()), 1e-3);
}

// Where the density stays flat above the sweep (a resistive divider at the output with no
// capacitance: feedthrough of the load's and the source's thermal noise), the integral does
// not converge; the band then ends at the sweep stop and says so (issue 12).
TEST(Noise, FlatDensityEndsTheBandAtTheSweepStop)
{
    const Design d = parseOrFail(designText(
        R"({"id": "V1", "type": "vsource", "pos": "P", "neg": "0", "r_series": "1k"},
           {"id": "U1", "type": "gain_block", "in_p": "P", "in_n": "out", "out": "out",
            "gain": "1e5", "gbw": "1M", "r_out": "100"},
           {"id": "RL", "type": "load", "a": "out", "b": "0", "r": "1k"})",
        "V1"));
    auto n = analyzeNoise(d);
    ASSERT_TRUE(n.ok()) << n.errorText();
    EXPECT_EQ(n->bandKind, NoiseBandKind::SweepStop);
    EXPECT_NEAR(n->bandHighHz, 1e6, 1e-6);
    EXPECT_THAT(n->bandMethod, HasSubstr("does not fall fast enough"));
    ASSERT_TRUE(n->outputRms);
    // the sweep's own integral of the same density (trapezoid in ln f on the grid)
    std::vector<double> psd(n->outputDensity.size());
    for (std::size_t i = 0; i < psd.size(); ++i)
        psd[i] = n->outputDensity[i] * n->outputDensity[i];
    EXPECT_LT(relErr(*n->outputRms * *n->outputRms, integratePsd(n->frequenciesHz, psd, 1.0, 1e6)),
              1e-3);
}

// The design's noise_band sets the band; the file keeps noise_band, c_cm and i_dc.
TEST(Noise, DesignFileNoiseBandCommonModeCapacitanceAndDcCurrent)
{
    const std::string text = designText(tiaParts(R"(, "c_cm": "2p")", R"(, "i_dc": "5.002uA")"),
                                        "PD1", R"(, "noise_band": ["1", "1M"])");
    const Design d = parseOrFail(text);
    ASSERT_TRUE(d.noiseBand);
    EXPECT_NEAR(d.noiseBand->low.si, 1.0, 1e-12);
    EXPECT_NEAR(d.noiseBand->high.si, 1e6, 1e-6);
    EXPECT_NEAR(d.findPart("PD1")->number("i_dc"), 5.002e-6, 1e-18);
    EXPECT_NEAR(d.findPart("U1")->number("c_cm"), 2e-12, 1e-24);
    const std::string saved = serializeDesign(d);
    EXPECT_THAT(saved, HasSubstr(R"("noise_band": ["1", "1M"])"));
    EXPECT_THAT(saved, HasSubstr(R"("i_dc": "5.002uA")"));
    EXPECT_THAT(saved, HasSubstr(R"("c_cm": "2p")"));
    auto again = parseDesign(saved);
    ASSERT_TRUE(again.ok()) << again.errorText();
    EXPECT_EQ(serializeDesign(*again), saved);

    auto n = analyzeNoise(d);
    ASSERT_TRUE(n.ok()) << n.errorText();
    EXPECT_EQ(n->bandKind, NoiseBandKind::Given);
    EXPECT_NEAR(n->bandLowHz, 1.0, 1e-12);
    EXPECT_NEAR(n->bandHighHz, 1e6, 1e-6);
    EXPECT_THAT(n->bandMethod, HasSubstr("noise_band"));
    // input-referred: the output figure over |gain| at the band's low end, stated
    ASSERT_TRUE(n->outputRms && n->inputRms);
    EXPECT_NEAR(n->inputGainHz, 1.0, 1e-12);
    EXPECT_LT(relErr(*n->inputRms, *n->outputRms / std::abs(n->gain.front())), 1e-6);
    EXPECT_THAT(n->bandMethod, HasSubstr("|gain| at 1 Hz"));
}

// With in_p on ground, c_cm at in_n and c_in both sit from the inverting node to ground
// (common practice): 3 pF of c_cm gives the same circuit as 3 pF more of c_in, in the exact
// gain, in the two-port estimate's input loading and in en's noise gain.
TEST(Noise, CommonModeCapacitanceAtAGroundedInputActsLikeInputCapacitance)
{
    const Design cm
        = parseOrFail(designText(tiaParts(R"(, "en": "6n", "c_in": "5p", "c_cm": "3p")"), "PD1"));
    const Design diff = parseOrFail(designText(tiaParts(R"(, "en": "6n", "c_in": "8p")"), "PD1"));
    auto a = analyze(cm);
    auto b = analyze(diff);
    ASSERT_TRUE(a.ok()) << a.errorText();
    ASSERT_TRUE(b.ok()) << b.errorText();
    ASSERT_TRUE(a->noise && b->noise);
    ASSERT_EQ(a->frequenciesHz.size(), b->frequenciesHz.size());
    ASSERT_EQ(a->curves.inputLoading.size(), a->frequenciesHz.size());
    for (std::size_t i = 0; i < a->frequenciesHz.size(); i += 10) {
        EXPECT_LT(std::abs(a->curves.gainExact[i] - b->curves.gainExact[i]),
                  1e-9 * std::abs(b->curves.gainExact[i]))
            << a->frequenciesHz[i];
        EXPECT_LT(std::abs(a->curves.inputLoading[i] - b->curves.inputLoading[i]),
                  1e-9 * std::abs(b->curves.inputLoading[i]))
            << a->frequenciesHz[i];
        EXPECT_LT(relErr(a->noise->noiseGain[i], b->noise->noiseGain[i]), 1e-9)
            << a->frequenciesHz[i];
    }
    // and 3 pF more does change the loading at high frequency (the check can fail)
    const Design less = parseOrFail(designText(tiaParts(R"(, "en": "6n", "c_in": "5p")"), "PD1"));
    auto c = analyze(less);
    ASSERT_TRUE(c.ok()) << c.errorText();
    const std::size_t top = c->frequenciesHz.size() - 1;
    EXPECT_GT(std::abs(c->curves.inputLoading[top] - b->curves.inputLoading[top]),
              1e-3 * std::abs(b->curves.inputLoading[top]));
}

// Definition of input-referred noise (output density over |gain|, common practice): where
// the signal never reaches the output the gain is zero and there is nothing to refer the
// noise to. Two designs of the fuzzer whose gain is zero in truth and round-off in the
// solve: seed 260 (a current source whose load current has no return) and seed 374 (the
// output held at 0 V by a gain block following ground). Before the fix the input-referred
// density was NaN at the sweep frequencies where the round-off happened to be an exact 0
// and up to 1e25 V/sqrt(Hz) elsewhere, and an input-referred rms was formed from it.
TEST(NoiseFuzzFound, ZeroGainHasNoInputReferredNoise)
{
    for (const char *name : {"noise-input-density-not-finite.loopsketch",
                             "noise-zero-gain-from-an-ideal-follower-of-ground.loopsketch"}) {
        SCOPED_TRACE(name);
        auto d = loadDesign(std::string(LOOPSKETCH_TEST_DATA_DIR) + "/fuzz-found/" + name);
        ASSERT_TRUE(d.ok()) << d.errorText();
        auto a = analyze(*d);
        ASSERT_TRUE(a.ok()) << a.errorText();
        ASSERT_TRUE(a->noise.has_value()) << a->noiseProblem;
        const NoiseAnalysis &n = *a->noise;
        EXPECT_THAT(n.inputProblem, HasSubstr("does not reach the output"));
        EXPECT_FALSE(n.inputRms.has_value());
        for (std::size_t i = 0; i < n.inputDensity.size(); ++i) {
            EXPECT_TRUE(std::isnan(n.inputDensity[i])) << n.frequenciesHz[i];
            EXPECT_TRUE(std::isfinite(n.outputDensity[i])) << n.frequenciesHz[i];
        }
        const std::string json = analysisToJson(*a);
        EXPECT_THAT(json, HasSubstr("\"input_problem\": \"the closed-loop gain is zero"));
        if (a->stable) { // an unstable loop's text says "none (unstable)" instead
            EXPECT_THAT(analysisToText(*a), HasSubstr("no input-referred noise"));
        }
    }
}

// Common practice: an ordinary loop (the demo) has its input-referred figures and no reason
// against them.
TEST(NoiseFuzzFound, OrdinaryLoopKeepsItsInputReferredNoise)
{
    Design d = loadOrFail(kDesignsDir / "demo.loopsketch");
    auto a = analyze(d);
    ASSERT_TRUE(a.ok() && a->noise) << a.errorText();
    EXPECT_TRUE(a->noise->inputProblem.empty()) << a->noise->inputProblem;
    EXPECT_TRUE(a->noise->inputRms.has_value());
    for (double v : a->noise->inputDensity)
        EXPECT_TRUE(std::isfinite(v) && v > 0);
}
