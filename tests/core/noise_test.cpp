// Noise of the closed loop: Johnson-Nyquist densities, a transimpedance stage's feedback
// resistor, the gain block's voltage noise times the noise gain, the equivalent noise
// bandwidth of a single-pole roll-off, the adjoint solve against one forward solve per
// source, and the per-source contributions adding in power.

#include "loopsketch/analysis.h"
#include "loopsketch/circuit.h"
#include "loopsketch/designfile.h"
#include "loopsketch/loopcircuit.h"
#include "loopsketch/noise.h"

#include <gmock/gmock.h>
#include <gtest/gtest.h>

#include <cmath>
#include <filesystem>
#include <numbers>
#include <string>
#include <vector>

using namespace loopsketch;
using ::testing::HasSubstr;

namespace {

constexpr double kPi = std::numbers::pi;

double relErr(double value, double expected)
{
    return std::abs(value - expected) / std::abs(expected);
}

Design parse(const std::string &text)
{
    auto d = parseDesign(text, "test.loopsketch");
    EXPECT_TRUE(d.ok()) << d.errorText();
    return d.ok() ? *d : Design{};
}

std::string designText(const std::string &parts, const std::string &input,
                       const std::string &extra = {},
                       const std::string &sweep = R"({"start": "1", "stop": "1M",
                                                          "points_per_decade": 20})")
{
    return R"({"schema": "loopsketch.design/1", "title": "t", "parts": [)" + parts
        + R"(], "input": ")" + input + R"(", "output": "voltage", "sweep": )" + sweep + extra + "}";
}

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
    const Design d = parse(designText(
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
        const Design d = parse(designText(parts, "V1"));
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
    const Design d = parse(designText(
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
    auto loaded = loadDesign(std::string(LOOPSKETCH_DESIGNS_DIR) + "/demo.loopsketch");
    ASSERT_TRUE(loaded.ok()) << loaded.errorText();
    const Design &d = *loaded;
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
    const Design d = parse(designText(
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
            power += c.rms * c.rms;
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
    const Design plain = parse(designText(parts, "V1"));
    EXPECT_FALSE(plain.temperature);
    EXPECT_NEAR(plain.temperatureK(), 298.15, 1e-12);
    const Part *u1 = plain.findPart("U1");
    ASSERT_NE(u1, nullptr);
    EXPECT_NEAR(u1->number("en"), 4.5e-9, 1e-21);
    EXPECT_NEAR(u1->number("in"), 0.5e-12, 1e-24);
    EXPECT_NEAR(u1->number("en_corner_hz"), 0.0, 1e-300);

    const Design celsius = parse(designText(parts, "V1", R"(, "temperature": "25 °C")"));
    EXPECT_NEAR(celsius.temperatureK(), 298.15, 1e-12);
    const std::string saved = serializeDesign(celsius);
    EXPECT_THAT(saved, HasSubstr(R"("temperature": "25 °C")"));
    EXPECT_THAT(saved, HasSubstr(R"("en": "4n5")"));
    auto again = parseDesign(saved);
    ASSERT_TRUE(again.ok()) << again.errorText();
    EXPECT_EQ(serializeDesign(*again), saved);
    EXPECT_NEAR(parse(designText(parts, "V1", R"(, "temperature": "77K")")).temperatureK(), 77.0,
                1e-12);
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
    auto loaded = loadDesign(std::string(LOOPSKETCH_DESIGNS_DIR) + "/demo.loopsketch");
    ASSERT_TRUE(loaded.ok()) << loaded.errorText();
    auto a = analyze(*loaded);
    ASSERT_TRUE(a.ok()) << a.errorText();
    const std::string json = analysisToJson(*a);
    EXPECT_THAT(json, HasSubstr("\"noise\": {"));
    EXPECT_THAT(json, HasSubstr("\"output_rms\""));
    EXPECT_THAT(json, HasSubstr("\"contributions\""));
    const std::string csv = sweepToCsv(*a);
    const std::string header = csv.substr(0, csv.find('\n'));
    // units in the names as the other columns: the demo is V out per A in
    EXPECT_THAT(header, HasSubstr(",output_noise_v_per_rthz,input_noise_a_per_rthz"));
}

// A band beyond the sweep is integrated on the circuit model: the same figure as with a
// sweep that covers it (common practice: one computation reached two ways must agree).
TEST(Noise, BandBeyondTheSweepIsIntegratedOnTheModel)
{
    auto loaded = loadDesign(std::string(LOOPSKETCH_DESIGNS_DIR) + "/demo.loopsketch");
    ASSERT_TRUE(loaded.ok()) << loaded.errorText();
    NoiseOptions o;
    o.bandLowHz = 0.01;
    o.bandHighHz = 1e3;
    auto n = analyzeNoise(*loaded, o);
    ASSERT_TRUE(n.ok()) << n.errorText();
    Design wide = *loaded;
    wide.sweep.start = {0.001, "1m"};
    wide.sweep.stop = {1e4, "10k"};
    auto w = analyzeNoise(wide, o);
    ASSERT_TRUE(w.ok()) << w.errorText();
    ASSERT_TRUE(n->outputRms && w->outputRms);
    EXPECT_LT(relErr(*n->outputRms, *w->outputRms), 1e-9);
    EXPECT_GT(*n->outputRms, 0.0);

    o.bandLowHz = 1e3;
    o.bandHighHz = 10.0;
    auto bad = analyzeNoise(*loaded, o);
    ASSERT_FALSE(bad.ok());
    EXPECT_THAT(bad.errorText(), HasSubstr("noise band must be two frequencies above zero"));
}

// The noise analysis inside analyze() runs over the grid the loop model was swept on; the
// standalone analyzeNoise() computes the design's grid itself. Given the same closed-loop
// bandwidth both describe the same circuit at the same frequencies (common practice: one
// computation reached two ways must agree).
TEST(Noise, AnalysisNoiseMatchesTheStandaloneNoiseAnalysis)
{
    auto loaded = loadDesign(std::string(LOOPSKETCH_DESIGNS_DIR) + "/demo.loopsketch");
    ASSERT_TRUE(loaded.ok()) << loaded.errorText();
    auto a = analyze(*loaded);
    ASSERT_TRUE(a.ok()) << a.errorText();
    ASSERT_TRUE(a->noise.has_value()) << a->noiseProblem;
    NoiseOptions o;
    o.closedLoopBandwidthHz = a->bandwidthHz;
    auto alone = analyzeNoise(*loaded, o);
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
        EXPECT_LT(relErr(inside.contributions[k].rms, alone->contributions[k].rms), 1e-12)
            << inside.contributions[k].name;
}
