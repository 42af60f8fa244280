// The command line's reports on the example designs, checked against the core analysis: the
// analysis text (every part, every field and number with its unit, the specs), the JSON (schema,
// units, spec verdicts) and the sweep CSV.

#include "loopsketch/analysis/analysis.h"
#include "loopsketch/analysis/trialmetrics.h"
#include "loopsketch/base/value.h"
#include "loopsketch/design/designfile.h"

#include "clitest.h"
#include "designs.h"
#include "files.h"
#include "numeric.h"

#include <gmock/gmock.h>
#include <gtest/gtest.h>
#include <nlohmann/json.hpp>

#include <algorithm>
#include <cctype>
#include <cmath>
#include <filesystem>
#include <limits>
#include <sstream>
#include <string>
#include <vector>

using namespace loopsketch;
using namespace loopsketch::test;

namespace {

std::vector<std::string> splitCsvLine(const std::string &line)
{
    std::vector<std::string> cells;
    std::string cell;
    std::istringstream is(line);
    while (std::getline(is, cell, ','))
        cells.push_back(cell);
    if (!line.empty() && line.back() == ',')
        cells.emplace_back();
    return cells;
}

// ----- example designs --------------------------------------------------------------------

class CliExample : public ::testing::TestWithParam<std::string>
{
protected:
    fs::path path() const { return kDesignsDir / GetParam(); }
};

TEST_P(CliExample, AnalyzePrintsTheExactSolution)
{
    const Analysis a = analyzeFileOrFail(path());
    ASSERT_TRUE(a.exact.gain && a.exact.zIn && a.exact.zOut);
    const CliRun r = runCli({"analyze", path().string()});
    ASSERT_TRUE(r.exited);
    EXPECT_EQ(r.exitCode, 0) << r.err;
    EXPECT_TRUE(r.err.empty()) << r.err;
    EXPECT_THAT(r.out, HasSubstr(a.title));
    const auto section = r.out.find("Exact solution (DC)");
    ASSERT_NE(section, std::string::npos) << r.out;
    const std::string exact = r.out.substr(section, r.out.find("\n\n", section) - section);
    EXPECT_THAT(exact, HasSubstr(formatEngineering(*a.exact.gain, 5, a.gainUnit)));
    EXPECT_THAT(exact, HasSubstr(formatEngineering(*a.exact.zIn, 5, "Ω")));
    EXPECT_THAT(exact, HasSubstr(formatEngineering(*a.exact.zOut, 5, "Ω")));
    EXPECT_THAT(exact, Not(HasSubstr("nan")));
    EXPECT_THAT(exact, Not(HasSubstr("inf")));
}

TEST_P(CliExample, AnalyzeJsonHasTheSchemaAndTheCoreValues)
{
    const Analysis a = analyzeFileOrFail(path());
    ASSERT_TRUE(a.exact.gain && a.exact.zIn && a.exact.zOut);
    const CliRun r = runCli({"analyze", path().string(), "--json"});
    ASSERT_TRUE(r.exited);
    ASSERT_EQ(r.exitCode, 0) << r.err;
    Json j;
    ASSERT_NO_THROW(j = Json::parse(r.out)) << r.out.substr(0, 400);
    expectAnalysisSchema(j);
    const Json &exact = at(at(j, "dc"), "exact");
    EXPECT_LT(relErr(jsonNumber(at(exact, "gain")), *a.exact.gain), 1e-12);
    EXPECT_LT(relErr(jsonNumber(at(exact, "z_in")), *a.exact.zIn), 1e-12);
    EXPECT_LT(relErr(jsonNumber(at(exact, "z_out")), *a.exact.zOut), 1e-12);
    // Every example has a canonical topology, so the estimate and its sections are filled.
    EXPECT_TRUE(at(j, "topology").is_object());
    EXPECT_TRUE(at(at(j, "dc"), "two_port").is_object());
    // Ordinary designs: the solves' own checks pass and every value is one real parts
    // have, so `warnings` is there and empty (DESIGN.md section 6).
    ASSERT_TRUE(at(j, "warnings").is_array());
    EXPECT_TRUE(at(j, "warnings").empty()) << at(j, "warnings").dump();
}

TEST_P(CliExample, SweepCsvHasOneRowPerFrequencyAndTheExactGain)
{
    const Analysis a = analyzeFileOrFail(path());
    ASSERT_FALSE(a.frequenciesHz.empty());
    ASSERT_EQ(a.curves.gainExact.size(), a.frequenciesHz.size());
    TempDir dir;
    const fs::path csv = dir.path() / "sweep.csv";
    const CliRun r = runCli({"sweep", path().string(), "--csv", csv.string()});
    ASSERT_TRUE(r.exited);
    ASSERT_EQ(r.exitCode, 0) << r.err;
    ASSERT_TRUE(fs::exists(csv));
    std::istringstream lines(readBytes(csv));
    std::string line;
    ASSERT_TRUE(std::getline(lines, line));
    const auto header = splitCsvLine(line);
    ASSERT_FALSE(header.empty());
    EXPECT_EQ(header.front(), "f_hz");
    const auto col = std::find(header.begin(), header.end(), "gain_exact_db");
    ASSERT_NE(col, header.end()) << line;
    const auto gainCol = static_cast<std::size_t>(col - header.begin());
    EXPECT_NE(std::find(header.begin(), header.end(), "gain_exact_deg"), header.end());
    std::size_t row = 0;
    double worstDb = 0;
    while (std::getline(lines, line)) {
        ASSERT_LT(row, a.frequenciesHz.size()) << "more rows than frequencies";
        const auto cells = splitCsvLine(line);
        ASSERT_EQ(cells.size(), header.size()) << line;
        EXPECT_LT(relErr(std::stod(cells[0]), a.frequenciesHz[row]), 1e-9) << line;
        const double db = std::stod(cells[gainCol]);
        const double expected = 20 * std::log10(std::abs(a.curves.gainExact[row]));
        worstDb = std::max(worstDb, std::abs(db - expected));
        EXPECT_NEAR(db, expected, 1e-6) << "row " << row;
        ++row;
    }
    EXPECT_EQ(row, a.frequenciesHz.size());
    std::cout << "[ csv ] " << GetParam() << ": " << row << " rows, worst gain_exact_db error "
              << worstDb << " dB\n";
}

// ----- what a reviewer reads: parts, units, specs ------------------------------------------

/// The number and SI prefix at the start of `text` ("220 kΩ" -> 220e3); NaN when there is
/// none, +-infinity for "∞".
double leadingNumber(const std::string &text)
{
    if (text.rfind("\u221E", 0) == 0)
        return std::numeric_limits<double>::infinity();
    std::size_t used = 0;
    double v = 0;
    try {
        v = std::stod(text, &used);
    } catch (...) {
        return std::nan("");
    }
    std::string rest = text.substr(used);
    if (!rest.empty() && rest[0] == ' ')
        rest.erase(0, 1);
    static const std::vector<std::pair<std::string, double>> prefixes{
        {"f", 1e-15}, {"p", 1e-12}, {"n", 1e-9}, {"\u00B5", 1e-6}, {"m", 1e-3},
        {"k", 1e3},   {"M", 1e6},   {"G", 1e9},  {"T", 1e12}};
    for (const auto &[p, scale] : prefixes) {
        // a prefix only when a unit follows it ("1 m" alone would be metres)
        if (rest.rfind(p, 0) == 0 && rest.size() > p.size() && rest[p.size()] != ' ')
            return v * scale;
    }
    return v;
}

/// The lines of part `id`'s block in the Parts section of the analysis text.
std::vector<std::string> partBlock(const std::string &text, const Part &part)
{
    std::istringstream in(text.substr(0, text.find("\nTopology")));
    std::vector<std::string> lines;
    std::string line;
    bool inside = false;
    const std::string head = "  " + part.id + "  " + std::string(partSpec(part.type).typeName);
    while (std::getline(in, line)) {
        if (line.rfind(head, 0) == 0) {
            inside = true;
            continue;
        }
        if (inside && line.rfind("    ", 0) != 0)
            break;
        if (inside)
            lines.push_back(line);
    }
    return lines;
}

// Every field partSpec() lists for the part's type appears with the file's value (4
// significant digits, the unit behind it), read back from the text and compared with the
// loaded design: the table cannot leave out a field or misstate one. Common practice.
TEST_P(CliExample, AnalyzeTextListsEveryFieldOfEveryPartWithItsUnit)
{
    auto d = loadDesign(path().string());
    ASSERT_TRUE(d.ok()) << d.errorText();
    const CliRun r = runCli({"analyze", path().string()});
    ASSERT_EQ(r.exitCode, 0) << r.err;
    for (const Part &part : d->parts) {
        const std::vector<std::string> block = partBlock(r.out, part);
        ASSERT_FALSE(block.empty()) << part.id << " missing from\n" << r.out;
        for (const FieldSpec &spec : partSpec(part.type).fields) {
            if (spec.kind == ValueKind::Tolerance && !part.has(spec.name))
                continue; // listed only when given
            const auto line = std::find_if(block.begin(), block.end(), [&](const auto &l) {
                return l.rfind("    " + std::string(spec.name) + " ", 0) == 0;
            });
            ASSERT_NE(line, block.end()) << part.id << "." << spec.name;
            EXPECT_THAT(*line, HasSubstr(std::string(spec.label))) << *line;
            if (spec.name == "gbw" && !part.has("gbw"))
                continue; // "—  [not given]"
            // the value column starts after the key (14) and the label (40)
            const std::string value = line->substr(line->find(std::string(spec.label))
                                                   + std::string(spec.label).size());
            const std::string trimmed = value.substr(value.find_first_not_of(' '));
            const double shown = leadingNumber(trimmed);
            // a tolerance field reads in percent ("10%")
            const double expected
                = part.number(spec.name) * (spec.kind == ValueKind::Tolerance ? 100.0 : 1.0);
            if (std::isinf(expected)) {
                EXPECT_TRUE(std::isinf(shown)) << *line;
            } else if (expected == 0.0) {
                EXPECT_LT(std::abs(shown), 1e-30) << *line;
            } else {
                EXPECT_LT(relErr(shown, expected), 5e-4) << *line;
            }
            EXPECT_THAT(trimmed, HasSubstr(std::string(spec.unit))) << *line;
            if (!part.has(spec.name)) {
                EXPECT_THAT(*line, HasSubstr("not given")) << *line;
            }
        }
        if (part.type == PartType::GainBlock) {
            for (const Value &pole : part.polesHz)
                EXPECT_THAT(block,
                            testing::Contains(HasSubstr(formatEngineering(pole.si, 4, "Hz"))))
                    << part.id << " pole " << pole.si;
            for (const Value &zero : part.zerosHz)
                EXPECT_THAT(block,
                            testing::Contains(HasSubstr(formatEngineering(zero.si, 4, "Hz"))))
                    << part.id << " zero " << zero.si;
        }
        if (part.series) {
            EXPECT_THAT(block, testing::Contains(HasSubstr(toString(*part.series)))) << part.id;
        }
    }
}

/// Unit symbols a number in the analysis text may carry (after an optional SI prefix).
bool startsWithUnit(const std::string &rest)
{
    static const std::vector<std::string> units{
        "V/\u221AHz", "A/\u221AHz", "V/V", "V/A", "A/V",    "A/A", "rad/s",
        "%/%",        "\u03A9",     "Hz",  "dB",  "F",      "H",   "V",
        "A",          "s",          "S",   "%",   "\u00B0", "K",   "(ratio"};
    return std::any_of(units.begin(), units.end(),
                       [&](const std::string &u) { return rest.rfind(u, 0) == 0; });
}

// Every number in the text carries a unit or is a pure ratio named as such ("(ratio, ...)").
// The title (free text) and part/noise-source names (U1, E24: digits inside a word) are not
// numbers. Common practice.
TEST_P(CliExample, EveryNumberInTheAnalysisTextCarriesAUnit)
{
    const CliRun r = runCli({"analyze", path().string()});
    ASSERT_EQ(r.exitCode, 0) << r.err;
    std::istringstream in(r.out);
    std::string line;
    std::getline(in, line); // the title
    int numbers = 0;
    while (std::getline(in, line)) {
        for (std::size_t i = 0; i < line.size(); ++i) {
            const auto c = static_cast<unsigned char>(line[i]);
            if (!std::isdigit(c))
                continue;
            const unsigned char before = i > 0 ? static_cast<unsigned char>(line[i - 1]) : ' ';
            if (std::isalnum(before) || before == '_' || before == '/' || before == '.'
                || before == '-' || before == '=' || before >= 0x80
                || (i >= 4 && line.compare(i - 4, 4, "RKM ") == 0)) {
                while (i < line.size()
                       && (std::isalnum(static_cast<unsigned char>(line[i])) || line[i] == '.'))
                    ++i;
                // inside a word or after a slash: "U1", "E24", "pi/2"; a node ("neg=0"); an
                // RKM code ("RKM 4k7") names a value shown beside it with its unit
                continue;
            }
            std::size_t j = i;
            while (j < line.size()
                   && (std::isdigit(static_cast<unsigned char>(line[j])) || line[j] == '.'))
                ++j;
            if (j < line.size() && line[j] == 'e' && j + 1 < line.size()
                && (line[j + 1] == '-' || line[j + 1] == '+'))
                for (j += 2; j < line.size() && std::isdigit(static_cast<unsigned char>(line[j]));)
                    ++j;
            std::string rest = line.substr(j);
            if (rest.rfind("/f ", 0) == 0 || rest.rfind("+T", 0) == 0) {
                // "1/f corner", "1+T": names, not numbers
                i = j;
                continue;
            }
            if (!rest.empty() && rest[0] == ' ')
                rest.erase(0, 1);
            for (const char *prefix : {"f", "p", "n", "\u00B5", "m", "k", "M", "G", "T"}) {
                const std::string p(prefix);
                if (rest.rfind(p, 0) == 0 && startsWithUnit(rest.substr(p.size()))) {
                    rest.erase(0, p.size());
                    break;
                }
                if (rest.rfind(p + " (ratio", 0) == 0) {
                    rest.erase(0, p.size() + 1);
                    break;
                }
            }
            ++numbers;
            EXPECT_TRUE(startsWithUnit(rest) || rest.rfind("points per decade", 0) == 0)
                << "number without a unit at column " << i << ": " << line;
            i = j;
        }
    }
    EXPECT_GT(numbers, 50) << r.out;
    EXPECT_THAT(r.out, Not(HasSubstr("none")));
}

/// Every numeric leaf of `j` (a number, or the string "inf" / "-inf") must have a unit in
/// `units`, looked up by its exact path, by the path with every list index as "[]", or with
/// the last map key as "*". Adds a failure naming the path otherwise; counts the leaves.
void expectUnits(const Json &j, const Json &units, const std::string &path, int &leaves)
{
    const auto covered = [&](const std::string &p) {
        if (units.contains(p))
            return true;
        std::string generic;
        for (std::size_t i = 0; i < p.size(); ++i) {
            if (p[i] == '[') {
                generic += "[]";
                i = p.find(']', i);
            } else {
                generic += p[i];
            }
        }
        if (units.contains(generic))
            return true;
        const auto dot = p.rfind('.');
        return dot != std::string::npos && units.contains(p.substr(0, dot) + ".*");
    };
    if (j.is_object()) {
        for (const auto &[key, value] : j.items())
            if (!(path.empty() && key == "units"))
                expectUnits(value, units, path.empty() ? key : path + "." + key, leaves);
    } else if (j.is_array()) {
        const bool numbers = !j.empty() && std::all_of(j.begin(), j.end(), [](const Json &x) {
            return x.is_number() || x.is_null();
        });
        if (numbers && covered(path)) { // a [low, high] window under one unit
            ++leaves;
            return;
        }
        for (std::size_t i = 0; i < j.size(); ++i)
            expectUnits(j[i], units, path + "[" + std::to_string(i) + "]", leaves);
    } else if (j.is_number() || (j.is_string() && (j == "inf" || j == "-inf"))) {
        ++leaves;
        // counts, listed as such: they carry no unit
        static const std::vector<std::string> counts{"closed_loop.rhp_poles",
                                                     "closed_loop.nyquist.encirclements",
                                                     "closed_loop.nyquist.open_loop_rhp_poles"};
        if (std::find(counts.begin(), counts.end(), path) != counts.end())
            return;
        EXPECT_TRUE(covered(path)) << "no unit for " << path;
    }
}

TEST_P(CliExample, JsonUnitsCoverEveryNumericKey)
{
    const CliRun r = runCli({"analyze", path().string(), "--json"});
    ASSERT_EQ(r.exitCode, 0) << r.err;
    const Json j = Json::parse(r.out);
    ASSERT_TRUE(j.contains("units") && j["units"].is_object());
    int leaves = 0;
    expectUnits(j, j["units"], "", leaves);
    EXPECT_GT(leaves, 40);
    // Every unit entry names a key that exists (no stale entries).
    for (const auto &[key, unit] : j["units"].items()) {
        EXPECT_TRUE(unit.is_string() && !unit.get<std::string>().empty()) << key;
    }
    // Feedback factor in the topology's own unit: y12 (A/V, siemens) for shunt-shunt, z12
    // (V/A, ohm) for series-series, h12 (V/V), g12 (A/A); two-port definitions, common practice.
    const std::string name = j["topology"]["name"];
    const std::string beta = j["units"]["dc.two_port.beta"];
    if (name == "shunt-shunt")
        EXPECT_EQ(beta, "S");
    else if (name == "series-series")
        EXPECT_EQ(beta, "\u03A9");
    else if (name == "series-shunt")
        EXPECT_EQ(beta, "V/V");
    else
        EXPECT_EQ(beta, "A/A");
    EXPECT_EQ(j["units"]["dc.exact.gain"], j["gain_unit"]);
}

// `specs` in the JSON: one entry per spec with core's checkSpecs() verdict, for the example
// as written and with each spec moved beyond the design's value so that it fails.
TEST_P(CliExample, JsonSpecsMatchCheckSpecs)
{
    auto loaded = loadDesign(path().string());
    ASSERT_TRUE(loaded.ok()) << loaded.errorText();
    const Analysis base = analyzeOrFail(*loaded);
    ASSERT_TRUE(base.exact.gain && base.bandwidthHz && base.margins.phaseMarginDeg);
    std::vector<Design> variants{*loaded};
    Design gainOff = *loaded;
    gainOff.specs.gainMin = Value{*base.exact.gain + std::abs(*base.exact.gain) * 0.1, ""};
    gainOff.specs.gainMax = Value{*base.exact.gain + std::abs(*base.exact.gain) * 0.2, ""};
    variants.push_back(gainOff);
    Design slow = *loaded;
    slow.specs.bandwidthMin = Value{*base.bandwidthHz * 2, ""};
    slow.specs.phaseMarginMinDeg = *base.margins.phaseMarginDeg + 5;
    variants.push_back(slow);
    for (const Design &d : variants) {
        const Analysis a = analyzeOrFail(d);
        const SpecCheck check = checkSpecs(d.specs, d.sweep, trialMetricsOf(a));
        const Json specs = Json::parse(analysisToJson(a))["specs"];
        ASSERT_TRUE(specs.is_array());
        const std::size_t expected = (d.specs.gainMin || d.specs.gainMax ? 1 : 0)
            + (d.specs.bandwidthMin ? 1 : 0) + (d.specs.phaseMarginMinDeg ? 1 : 0)
            + (d.specs.outputNoiseMax ? 1 : 0) + (d.specs.snrMinDb ? 1 : 0);
        ASSERT_EQ(specs.size(), expected) << specs.dump();
        for (const Json &s : specs) {
            expectKeys(s, {"name", "limit", "value", "pass", "reason"}, "specs[]");
            const std::string name = s["name"];
            const bool pass = s["pass"];
            if (name == "gain") {
                EXPECT_EQ(pass, check.gain);
                EXPECT_LT(relErr(s["limit"][0].get<double>(), d.specs.gainMin->si), 1e-12);
            } else if (name == "bandwidth_min") {
                EXPECT_EQ(pass, check.bandwidth);
            } else if (name == "phase_margin_min_deg") {
                EXPECT_EQ(pass, check.phaseMargin);
            } else if (name == "output_noise_max") {
                EXPECT_EQ(pass, check.outputNoise);
                EXPECT_LT(relErr(s["limit"].get<double>(), d.specs.outputNoiseMax->si), 1e-12);
            } else if (name == "snr_min_db") {
                EXPECT_EQ(pass, check.snr);
            } else {
                ADD_FAILURE() << "unknown spec " << name;
            }
            EXPECT_EQ(s["reason"].get<std::string>().empty(), pass) << s.dump();
        }
    }
    // the moved specs fail, and the text names them
    const std::string text = analysisToText(analyzeOrFail(slow), &slow);
    EXPECT_THAT(text, HasSubstr("fails: bandwidth, phase margin"));
}

INSTANTIATE_TEST_SUITE_P(Resources, CliExample, ::testing::ValuesIn(exampleDesigns()),
                         [](const auto &row) { return caseName(row.param); });

// A gain block without r_in under series mixing leaves the input open at DC: z_in is
// infinite (only c_in across the inputs; an ideal op amp's input, common practice), shown as
// "∞ Ω" in the text and "inf" in the JSON, never "none", "—" or null.
TEST(CliUnits, InfiniteInputImpedanceIsShownAsInfinity)
{
    auto loaded = loadDesign((kDesignsDir / "contact-mic-preamp.loopsketch").string());
    ASSERT_TRUE(loaded.ok()) << loaded.errorText();
    Design design = *loaded;
    Design *d = &design;
    Part *u1 = d->findPart("U1");
    ASSERT_NE(u1, nullptr);
    ASSERT_TRUE(u1->has("r_in"));
    u1->fields.erase("r_in");
    const Analysis a = analyzeOrFail(*d);
    ASSERT_TRUE(a.exact.zIn);
    EXPECT_TRUE(std::isinf(*a.exact.zIn) && *a.exact.zIn > 0);
    ASSERT_TRUE(a.exact.zOut && std::isfinite(*a.exact.zOut));
    const std::string text = analysisToText(a, d);
    EXPECT_THAT(text, HasSubstr("z_in                      \u221E \u03A9"));
    EXPECT_THAT(text, Not(HasSubstr("none")));
    const Json j = Json::parse(analysisToJson(a));
    EXPECT_EQ(j["dc"]["exact"]["z_in"], "inf");
    EXPECT_EQ(j["dc"]["return_ratio"]["z_in"], "inf");
    EXPECT_TRUE(j["dc"]["exact"]["z_out"].is_number());
    // the Parts table says why: r_in not given, the ideal default
    EXPECT_THAT(text, HasSubstr("\u221E \u03A9  [not given: ideal]"));
}

} // namespace
