#include "loopsketch/report/candidatecomparison.h"

#include "loopsketch/analysis/analysis.h"
#include "loopsketch/design/candidate.h"
#include "loopsketch/design/designfile.h"

#include <gmock/gmock.h>
#include <gtest/gtest.h>

#include <cmath>
#include <string>
#include <vector>

using namespace loopsketch;
using ::testing::HasSubstr;

namespace {

// Invented test circuit: a non-inverting stage, gain 1 + R2/R1, around a gain block of 100 dB
// with its first pole at 10 Hz (gain-bandwidth 1 MHz). The design has R2 = 4.7k (gain 5.7);
// candidate "low" R2 = 1k (gain 2), candidate "high" R2 = 10k (gain 11).
std::string stage(const std::string &specs)
{
    return R"({"schema": "loopsketch.design/1", "title": "comparison", "parts": [
      {"id": "VS", "type": "vsource", "pos": "in", "neg": "0", "r_series": "50"},
      {"id": "U1", "type": "gain_block", "in_p": "in", "in_n": "fb", "out": "out",
       "gain": "100dB", "poles_hz": ["10"], "en": "10n"},
      {"id": "R2", "type": "resistor", "a": "out", "b": "fb", "value": "4.7k"},
      {"id": "R1", "type": "resistor", "a": "fb", "b": "0", "value": "1k"},
      {"id": "RL", "type": "load", "a": "out", "b": "0", "r": "10k"}],
      "input": "VS", "output": "voltage", "noise_band": ["10", "10k"],
      "sweep": {"start": "1", "stop": "100M", "points_per_decade": 20},
      "candidates": [{"name": "low", "values": {"R2": "1k"}},
                     {"name": "high", "values": {"R2": "10k"}}])"
        + specs + "}";
}

struct Compared
{
    Design design;
    std::vector<Analysis> analyses; ///< current, low, high
    CandidateComparison table;
};

Compared compare(const std::string &specs)
{
    Compared c;
    auto d = parseDesign(stage(specs), "test.loopsketch");
    EXPECT_TRUE(d.ok()) << d.errorText();
    c.design = *d;
    auto current = analyze(c.design);
    EXPECT_TRUE(current.ok()) << current.errorText();
    c.analyses.push_back(*current);
    for (const Candidate &k : c.design.candidates) {
        auto applied = applyCandidate(c.design, k);
        EXPECT_TRUE(applied.ok());
        auto a = analyze(*applied);
        EXPECT_TRUE(a.ok()) << a.errorText();
        c.analyses.push_back(*a);
    }
    std::vector<ComparisonInput> inputs{{"current design", nullptr, &c.analyses[0], {}, {}}};
    for (std::size_t i = 0; i < c.design.candidates.size(); ++i)
        inputs.push_back({c.design.candidates[i].name,
                          &c.design.candidates[i],
                          &c.analyses[i + 1],
                          {},
                          ComparisonWorstCase{}});
    c.table = compareCandidates(c.design, inputs);
    return c;
}

std::vector<bool> bestMarks(const ComparisonRow &row)
{
    std::vector<bool> marks;
    for (const ComparisonCell &cell : row.cells)
        marks.push_back(cell.best);
    return marks;
}

const std::string kSpecs = R"(, "specs": {"gain": ["5", "6"], "bandwidth_min": "100k",
    "phase_margin_min_deg": 45})";

} // namespace

TEST(CandidateComparison, GainsAreTheNonInvertingClosedForm)
{
    // Common practice: a non-inverting stage's gain is 1 + R2/R1 when the loop gain is large
    // (here at least 1e5/11, so within 0.02 %).
    const Compared c = compare(kSpecs);
    ASSERT_EQ(c.table.columns, (std::vector<std::string>{"current design", "low", "high"}));
    const double expected[] = {5.7, 2.0, 11.0};
    const ComparisonRow *gain = c.table.row(ComparisonRowKind::Gain);
    ASSERT_NE(gain, nullptr);
    for (std::size_t i = 0; i < 3; ++i) {
        ASSERT_TRUE(c.analyses[i].exact.gain);
        EXPECT_NEAR(*c.analyses[i].exact.gain, expected[i], expected[i] * 2e-4);
        EXPECT_EQ(gain->cells[i].text, formatEngineering(*c.analyses[i].exact.gain, 4, "V/V"));
    }
    // The one part the candidates change is a row; the current design's value is its own.
    const ComparisonRow *part = c.table.row(ComparisonRowKind::PartValue);
    ASSERT_NE(part, nullptr);
    EXPECT_EQ(part->title, "R2");
    EXPECT_EQ(part->cells[0].text, "4.7 kΩ");
    EXPECT_EQ(part->cells[2].text, "10 kΩ");
}

TEST(CandidateComparison, BestMarksOnlyWhereASpecSetsTheDirection)
{
    const Compared c = compare(kSpecs);
    // Gain window 5 … 6: the design's 5.7 is closest to its centre.
    EXPECT_EQ(bestMarks(*c.table.row(ComparisonRowKind::Gain)),
              (std::vector<bool>{true, false, false}));
    // bandwidth_min: wider is better; the lowest gain has the widest bandwidth (about
    // gain-bandwidth / gain, common practice).
    EXPECT_EQ(bestMarks(*c.table.row(ComparisonRowKind::Bandwidth)),
              (std::vector<bool>{false, true, false}));
    // No spec speaks to peaking, impedance, desensitivity or noise: never marked.
    for (ComparisonRowKind kind :
         {ComparisonRowKind::Peaking, ComparisonRowKind::Desensitivity, ComparisonRowKind::ZIn,
          ComparisonRowKind::ZOut, ComparisonRowKind::OutputNoise, ComparisonRowKind::InputNoise,
          ComparisonRowKind::WorstCaseGain}) {
        const ComparisonRow *row = c.table.row(kind);
        ASSERT_NE(row, nullptr);
        EXPECT_TRUE(row->best.empty()) << row->title;
        EXPECT_EQ(bestMarks(*row), (std::vector<bool>{false, false, false})) << row->title;
    }

    // Without specs nothing is ranked, though the bandwidths still differ.
    const Compared free = compare("");
    for (const ComparisonRow &row : free.table.rows) {
        EXPECT_TRUE(row.best.empty()) << row.title;
        for (const ComparisonCell &cell : row.cells)
            EXPECT_FALSE(cell.best) << row.title;
    }
    EXPECT_NE(free.table.row(ComparisonRowKind::Bandwidth)->cells[1].text,
              free.table.row(ComparisonRowKind::Bandwidth)->cells[2].text);
}

TEST(CandidateComparison, SpecVerdictsFollowTheSpecCheck)
{
    const Compared c = compare(kSpecs);
    using V = ComparisonVerdict;
    const ComparisonRow *gain = c.table.row(ComparisonRowKind::SpecGain);
    const ComparisonRow *bandwidth = c.table.row(ComparisonRowKind::SpecBandwidth);
    ASSERT_NE(gain, nullptr);
    ASSERT_NE(bandwidth, nullptr);
    // Only the design's 5.7 lies in the window 5 … 6.
    EXPECT_EQ(gain->cells[0].verdict, V::Pass);
    EXPECT_EQ(gain->cells[1].verdict, V::Fail);
    EXPECT_EQ(gain->cells[2].verdict, V::Fail);
    // Gain 11 on 1 MHz gain-bandwidth gives about 90 kHz, under the 100 kHz minimum.
    ASSERT_TRUE(c.analyses[2].bandwidthHz);
    EXPECT_LT(*c.analyses[2].bandwidthHz, 100e3);
    EXPECT_EQ(bandwidth->cells[2].verdict, V::Fail);
    EXPECT_EQ(bandwidth->cells[1].verdict, V::Pass);
    EXPECT_EQ(bandwidth->cells[2].text, "✗ fail");
    const ComparisonRow *met = c.table.row(ComparisonRowKind::SpecsMet);
    ASSERT_NE(met, nullptr);
    EXPECT_EQ(met->cells[0].text, "3 of 3");
    EXPECT_EQ(met->cells[2].text, "1 of 3");
    EXPECT_EQ(bestMarks(*met), (std::vector<bool>{true, false, false}));
    // No spec rows for specs the design does not state.
    const Compared free = compare("");
    EXPECT_EQ(free.table.row(ComparisonRowKind::SpecGain), nullptr);
    EXPECT_EQ(free.table.row(ComparisonRowKind::SpecsMet)->cells[0].text, "—");
}

TEST(CandidateComparison, NoiseRowsCarryCoreRmsWithUnits)
{
    const Compared c = compare(kSpecs);
    const ComparisonRow *out = c.table.row(ComparisonRowKind::OutputNoise);
    const ComparisonRow *in = c.table.row(ComparisonRowKind::InputNoise);
    ASSERT_NE(out, nullptr);
    ASSERT_NE(in, nullptr);
    for (std::size_t i = 0; i < 3; ++i) {
        ASSERT_TRUE(c.analyses[i].noise && c.analyses[i].noise->outputRms);
        EXPECT_EQ(out->cells[i].text, formatEngineering(*c.analyses[i].noise->outputRms, 3, "V"));
        EXPECT_EQ(in->cells[i].text, formatEngineering(*c.analyses[i].noise->inputRms, 3, "V"));
        EXPECT_THAT(out->cells[i].note, HasSubstr("10 Hz"));
    }
    // en = 10 nV/√Hz dominates: over 10 Hz … 10 kHz the input-referred rms is at least
    // en·√(band) = 10n·√9990 ≈ 1.0 µV (common practice: white noise adds as √bandwidth), and
    // the output is the input-referred rms times the gain, so the high-gain column is larger.
    EXPECT_GT(*c.analyses[0].noise->inputRms, 0.99e-6);
    EXPECT_GT(*c.analyses[2].noise->outputRms, *c.analyses[1].noise->outputRms);
}

TEST(CandidateComparison, MissingAnalysisSaysWhy)
{
    const Compared c = compare(kSpecs);
    std::vector<ComparisonInput> inputs{
        {"current design", nullptr, &c.analyses[0], {}, {}},
        {"low", &c.design.candidates[0], nullptr, "being analysed", std::nullopt}};
    const CandidateComparison t = compareCandidates(c.design, inputs);
    for (const ComparisonRow &row : t.rows) {
        if (row.kind == ComparisonRowKind::PartValue)
            continue;
        EXPECT_EQ(row.cells[1].text, "—") << row.title;
        EXPECT_EQ(row.cells[1].note, "being analysed") << row.title;
        EXPECT_FALSE(row.cells[1].best) << row.title;
    }
    // The current design's worst case is still being computed.
    EXPECT_EQ(t.row(ComparisonRowKind::WorstCaseGain)->cells[0].text, "…");
}

// Issue 18: with output_noise_max and snr_min_db the noise rows are ranked (lower output and
// input-referred noise, higher SNR) and the noise specs get verdict rows; without them the noise
// rows carry no best mark. The SNR is 20 log10((peak / sqrt 2) / input-referred rms) (common
// practice). R2 = 1k: gain 2, the smallest output noise, and R1 || R2 = 500 Ohm the smallest
// thermal term, so the "low" column is best in all three.
TEST(CandidateComparison, NoiseSpecsRankTheNoiseRows)
{
    const Compared c = compare(R"(, "signal_level": "10m",
        "specs": {"output_noise_max": "100u", "snr_min_db": 60})");
    const ComparisonRow *out = c.table.row(ComparisonRowKind::OutputNoise);
    const ComparisonRow *in = c.table.row(ComparisonRowKind::InputNoise);
    const ComparisonRow *snr = c.table.row(ComparisonRowKind::Snr);
    ASSERT_TRUE(out && in && snr);
    EXPECT_EQ(bestMarks(*out), (std::vector<bool>{false, true, false}));
    EXPECT_EQ(bestMarks(*in), (std::vector<bool>{false, true, false}));
    EXPECT_EQ(bestMarks(*snr), (std::vector<bool>{false, true, false}));
    for (std::size_t i = 0; i < 3; ++i) {
        const double expected
            = 20 * std::log10(10e-3 / std::sqrt(2.0) / *c.analyses[i].noise->inputRms);
        EXPECT_NEAR(*c.analyses[i].noise->snrDb, expected, 1e-9);
    }
    const ComparisonRow *noiseSpec = c.table.row(ComparisonRowKind::SpecOutputNoise);
    const ComparisonRow *snrSpec = c.table.row(ComparisonRowKind::SpecSnr);
    ASSERT_TRUE(noiseSpec && snrSpec);
    EXPECT_THAT(noiseSpec->title, HasSubstr("100 µV"));
    EXPECT_EQ(c.table.row(ComparisonRowKind::SpecsMet)->cells[0].text.substr(1, 5), " of 2");

    const Compared free = compare(R"(, "signal_level": "10m")");
    EXPECT_EQ(bestMarks(*free.table.row(ComparisonRowKind::OutputNoise)),
              (std::vector<bool>{false, false, false}));
    EXPECT_EQ(bestMarks(*free.table.row(ComparisonRowKind::Snr)),
              (std::vector<bool>{false, false, false}));
    EXPECT_EQ(free.table.row(ComparisonRowKind::SpecOutputNoise), nullptr);
}
