// The built command-line program, run as a user runs it: exit codes, messages on stderr,
// the analysis text and JSON, and the sweep CSV, checked against the core analysis.

#include "faultinjection.h"

#include "loopsketch/analysis/analysis.h"
#include "loopsketch/analysis/scan.h"
#include "loopsketch/analysis/spread.h"
#include "loopsketch/analysis/suggest.h"
#include "loopsketch/analysis/trialmetrics.h"
#include "loopsketch/base/value.h"
#include "loopsketch/design/designfile.h"

#include "malformedcorpus.h"

#include "clirunner.h"
#include "designs.h"
#include "numeric.h"

#include <gmock/gmock.h>
#include <gtest/gtest.h>
#include <nlohmann/json.hpp>

#include <fcntl.h>
#include <sys/stat.h>
#include <sys/wait.h>
#include <unistd.h>

#include <algorithm>
#include <atomic>
#include <cctype>
#include <cmath>
#include <cstdlib>
#include <filesystem>
#include <fstream>
#include <limits>
#include <sstream>
#include <string>
#include <thread>
#include <vector>

using namespace loopsketch;
using ::testing::HasSubstr;
using ::testing::Not;
namespace fs = std::filesystem;
using Json = nlohmann::json;
using namespace loopsketch::test;

namespace {

const fs::path kCli = LOOPSKETCH_CLI;

Analysis analyzeFileOrFail(const fs::path &path)
{
    return analyzeOrFail(test::loadOrFail(path));
}

CliRun runCli(const std::vector<std::string> &args)
{
    return test::runProgram(kCli.string(), args);
}

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

// ----- malformed files --------------------------------------------------------------------

class CliMalformed : public ::testing::TestWithParam<MalformedCase>
{
};

// Exit codes and messages: core/README.md §9 (0 ok, 2 bad input naming file, part and field).
TEST_P(CliMalformed, ExitsTwoNamingFileAndField)
{
    const MalformedCase &c = GetParam();
    const fs::path path = kMalformedDir / c.file;
    ASSERT_TRUE(fs::exists(path)) << path;
    for (const std::vector<std::string> &args :
         {std::vector<std::string>{"analyze", path.string()},
          std::vector<std::string>{"analyze", path.string(), "--json"}}) {
        const CliRun r = runCli(args);
        ASSERT_TRUE(r.exited) << "killed by a signal: " << c.file;
        EXPECT_EQ(r.exitCode, 2) << r.err;
        EXPECT_THAT(r.err, HasSubstr(c.file));
        EXPECT_THAT(r.err, HasSubstr(c.expected));
        EXPECT_THAT(r.err, Not(HasSubstr("internal error")));
        EXPECT_TRUE(r.out.empty()) << r.out;
    }
    TempDir dir;
    const fs::path csv = dir.path() / "out.csv";
    const CliRun s = runCli({"sweep", path.string(), "--csv", csv.string()});
    ASSERT_TRUE(s.exited);
    EXPECT_EQ(s.exitCode, 2) << s.err;
    EXPECT_THAT(s.err, HasSubstr(c.expected));
    EXPECT_FALSE(fs::exists(csv));
}

INSTANTIATE_TEST_SUITE_P(Files, CliMalformed, ::testing::ValuesIn(malformedCases()),
                         [](const auto &row) { return caseName(row.param.file); });

TEST(Cli, MalformedListCoversTheDirectory)
{
    const auto cases = malformedCases(false);
    EXPECT_GE(cases.size(), 150u);
    std::size_t files = 0;
    for (const auto &e : fs::directory_iterator(kMalformedDir))
        files += e.path().extension() == ".loopsketch";
    EXPECT_EQ(files, cases.size());
}

// Hostile files too big to commit, written at run time: the size and part-count limits of
// designfile.h (16 MiB, 10,000 parts) must reach the user as exit code 2 and a message.
TEST(Cli, TwentyMebibyteFileIsBadInput)
{
    TempDir dir;
    const fs::path big = dir.path() / "twenty-mib.loopsketch";
    std::string text = readBytes(kDesignsDir / "demo.loopsketch");
    ASSERT_FALSE(text.empty());
    const auto close = text.rfind('}');
    ASSERT_NE(close, std::string::npos);
    text.insert(close, std::string(20u * 1024u * 1024u, ' '));
    {
        std::ofstream(big, std::ios::binary) << text;
    }
    ASSERT_GE(fs::file_size(big), 20u * 1024u * 1024u);
    const CliRun r = runCli({"analyze", big.string()});
    ASSERT_TRUE(r.exited);
    EXPECT_EQ(r.exitCode, 2) << r.err;
    EXPECT_THAT(r.err, HasSubstr("twenty-mib.loopsketch"));
    EXPECT_THAT(r.err, HasSubstr("16 MiB"));
    EXPECT_TRUE(r.out.empty());
}

TEST(Cli, MorePartsThanTheLimitIsBadInput)
{
    // demo has 5 parts; extra resistors from "out" to ground keep every node grounded
    std::string text = readBytes(kDesignsDir / "demo.loopsketch");
    const std::string anchor = "\"parts\": [";
    const auto at = text.find(anchor);
    ASSERT_NE(at, std::string::npos);
    std::string extra;
    for (std::size_t i = 5; i <= kMaxParts; ++i)
        extra.append("\n    {\"id\": \"RX")
            .append(std::to_string(i))
            .append(
                "\", \"type\": \"resistor\", \"a\": \"out\", \"b\": \"0\", \"value\": \"1M\"},");
    text.insert(at + anchor.size(), extra);
    TempDir dir;
    const fs::path many = dir.path() / "many-parts.loopsketch";
    {
        std::ofstream(many, std::ios::binary) << text;
    }
    const CliRun r = runCli({"analyze", many.string()});
    ASSERT_TRUE(r.exited);
    EXPECT_EQ(r.exitCode, 2) << r.err.substr(0, 500);
    EXPECT_THAT(r.err, HasSubstr("many-parts.loopsketch"));
    EXPECT_THAT(r.err, HasSubstr("10001 parts; at most 10000"));
    EXPECT_TRUE(r.out.empty());
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

const Json &at(const Json &j, const std::string &key)
{
    static const Json missing;
    if (!j.is_object() || !j.contains(key)) {
        ADD_FAILURE() << "missing key \"" << key << "\" in " << j.dump().substr(0, 200);
        return missing;
    }
    return j.at(key);
}

void expectKeys(const Json &j, const std::vector<std::string> &keys, const std::string &where)
{
    ASSERT_TRUE(j.is_object()) << where << " is not an object: " << j.dump().substr(0, 200);
    for (const auto &k : keys)
        EXPECT_TRUE(j.contains(k)) << where << " lacks \"" << k << "\"";
}

double jsonNumber(const Json &j)
{
    EXPECT_TRUE(j.is_number()) << j.dump();
    return j.is_number() ? j.get<double>() : std::nan("");
}

// Keys of schema loopsketch.analysis/1: core/README.md §7.
void expectAnalysisSchema(const Json &j)
{
    EXPECT_EQ(at(j, "schema"), "loopsketch.analysis/1");
    expectKeys(j, {"topology", "dc", "margins", "closed_loop", "desensitivity_db", "sensitivity"},
               "top level");
    if (j.contains("topology")) {
        const Json &t = j.at("topology");
        if (t.is_null())
            EXPECT_TRUE(j.contains("reason"));
        else
            expectKeys(t, {"mixing", "sampling", "name", "parameters", "gain_type"}, "topology");
    }
    const Json &dc = at(j, "dc");
    expectKeys(dc, {"exact", "two_port", "return_ratio"}, "dc");
    expectKeys(at(dc, "exact"), {"gain", "z_in", "z_out"}, "dc.exact");
    const Json &tp = at(dc, "two_port");
    if (!tp.is_null()) {
        expectKeys(tp,
                   {"a", "beta", "loop_gain", "closed_loop", "gain", "z_in", "z_out", "error_pct",
                    "loading"},
                   "dc.two_port");
        expectKeys(at(tp, "loading"), {"input_db", "output_db"}, "dc.two_port.loading");
    }
    expectKeys(at(dc, "return_ratio"), {"loop_gain", "gain_inf", "feedthrough", "gain"},
               "dc.return_ratio");
    expectKeys(at(j, "margins"),
               {"crossover_hz", "phase_margin_deg", "gain_margin_db", "phase_crossover_hz"},
               "margins");
    const Json &cl = at(j, "closed_loop");
    expectKeys(cl, {"bandwidth_hz", "peaking_db", "poles", "step"}, "closed_loop");
    EXPECT_TRUE(at(cl, "poles").is_array());
    expectKeys(at(cl, "step"), {"rise_time_s", "overshoot_pct", "settling_time_s"},
               "closed_loop.step");
    EXPECT_TRUE(at(j, "sensitivity").is_object());
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
            const double expected = part.number(spec.name);
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
            + (d.specs.bandwidthMin ? 1 : 0) + (d.specs.phaseMarginMinDeg ? 1 : 0);
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

// ----- candidates -------------------------------------------------------------------------

TEST(Cli, CandidatesOfTheDemoChangeTheAnalysis)
{
    auto demo = loadDesign((kDesignsDir / "demo.loopsketch").string());
    ASSERT_TRUE(demo.ok()) << demo.errorText();
    ASSERT_GE(demo->candidates.size(), 2u);
    const Analysis base = analyzeOrFail(*demo);
    ASSERT_TRUE(base.exact.gain);
    for (const Candidate &c : demo->candidates) {
        const Analysis expected = analyzeOrFail(withCandidateByHand(*demo, c));
        ASSERT_TRUE(expected.exact.gain);
        for (const std::string &file :
             {std::string("demo"), (kDesignsDir / "demo.loopsketch").string()}) {
            const CliRun r = runCli({"analyze", file, "--json", "--candidate", c.name});
            ASSERT_TRUE(r.exited);
            ASSERT_EQ(r.exitCode, 0) << c.name << ": " << r.err;
            Json j;
            ASSERT_NO_THROW(j = Json::parse(r.out));
            const double gain = jsonNumber(at(at(at(j, "dc"), "exact"), "gain"));
            EXPECT_LT(relErr(gain, *expected.exact.gain), 1e-12) << c.name;
            if (c.values.count("RF")) {
                EXPECT_GT(relErr(gain, *base.exact.gain), 1e-3) << c.name;
            }
        }
        const CliRun text = runCli({"analyze", "demo", "--candidate", c.name});
        ASSERT_TRUE(text.exited);
        EXPECT_EQ(text.exitCode, 0) << text.err;
        EXPECT_THAT(text.out, HasSubstr(formatEngineering(*expected.exact.gain, 5, "V/A")));
    }
}

TEST(Cli, UnknownCandidateIsBadInput)
{
    for (const std::string &file :
         {std::string("demo"), (kDesignsDir / "demo.loopsketch").string()}) {
        const CliRun r = runCli({"analyze", file, "--candidate", "Turbo"});
        ASSERT_TRUE(r.exited);
        EXPECT_EQ(r.exitCode, 2) << file;
        EXPECT_THAT(r.err, HasSubstr("\"Turbo\"")) << file;
        EXPECT_TRUE(r.out.empty()) << file;
    }
}

// ----- options and errors -----------------------------------------------------------------

TEST(Cli, HelpExitsZero)
{
    for (const char *flag : {"--help", "-h"}) {
        const CliRun r = runCli({flag});
        ASSERT_TRUE(r.exited);
        EXPECT_EQ(r.exitCode, 0) << flag;
        EXPECT_THAT(r.out, HasSubstr("analyze FILE"));
        EXPECT_THAT(r.out, HasSubstr("sweep FILE --csv OUT"));
    }
}

// ----- README's command-line synopsis against --help -----------------------------------
// Common practice: the README's "Command line" block states the same command lines as
// `loopsketch --help`, so a new option or command changes both or this test fails.

/// The command lines of a usage text: a synopsis starts at a line whose first word is
/// "loopsketch" and continues over the following lines that start (after indentation) with
/// an option, "[" or "-"; each line's description, after the first run of two or more
/// spaces, is dropped. Words are joined by single spaces.
std::vector<std::string> commandSynopses(const std::string &text)
{
    std::vector<std::string> synopses;
    std::istringstream in(text);
    std::string line;
    bool open = false;
    while (std::getline(in, line)) {
        const std::size_t first = line.find_first_not_of(' ');
        if (first == std::string::npos) {
            open = false;
            continue;
        }
        std::string body = line.substr(first);
        const bool starts = body.rfind("loopsketch", 0) == 0;
        const bool continues = open && (body.front() == '[' || body.front() == '-');
        if (!starts && !continues) {
            open = false; // a description line ends the synopsis
            continue;
        }
        if (const std::size_t gap = body.find("  "); gap != std::string::npos)
            body.resize(gap);
        std::istringstream words(body);
        std::string joined, w;
        while (words >> w)
            joined.append(joined.empty() ? "" : " ").append(w);
        if (starts)
            synopses.push_back(joined);
        else
            synopses.back().append(" ").append(joined);
        open = true;
    }
    return synopses;
}

/// The fenced block under README.md's "## Command line" heading.
std::string readmeCommandBlock(const std::string &readme)
{
    const std::size_t heading = readme.find("\n## Command line\n");
    if (heading == std::string::npos)
        return {};
    const std::size_t open = readme.find("```", heading);
    if (open == std::string::npos)
        return {};
    const std::size_t start = readme.find('\n', open);
    const std::size_t close = readme.find("\n```", start);
    if (start == std::string::npos || close == std::string::npos)
        return {};
    return readme.substr(start + 1, close - start);
}

TEST(CliSynopsis, ExtractsCommandLinesAndDropsDescriptions)
{
    const std::string text = "Usage:\n"
                             "  loopsketch run FILE [--x N]   does a thing\n"
                             "                 [--y]\n"
                             "                                 more words\n"
                             "                                 [not an option line]\n"
                             "  loopsketch --help\n";
    EXPECT_EQ(commandSynopses(text),
              (std::vector<std::string>{"loopsketch run FILE [--x N] [--y]", "loopsketch --help"}));
}

TEST(CliSynopsis, ReadmeCommandLineBlockMatchesHelp)
{
    const CliRun help = runCli({"--help"});
    ASSERT_TRUE(help.exited);
    ASSERT_EQ(help.exitCode, 0);
    std::vector<std::string> fromHelp = commandSynopses(help.out);
    const std::string block = readmeCommandBlock(readBytes(LOOPSKETCH_README));
    ASSERT_FALSE(block.empty()) << "README.md has no fenced block under \"## Command line\"";
    std::vector<std::string> fromReadme = commandSynopses(block);
    // A build without the GUI (the asan preset) has no `export` command and leaves it out
    // of --help; the README documents the full program, so its export line is compared only
    // when the binary has the command.
#ifndef LOOPSKETCH_TEST_HAVE_GUI
    std::erase_if(fromReadme,
                  [](const std::string &s) { return s.rfind("loopsketch export", 0) == 0; });
#endif
    // analyze, sweep, spread, suggest, the GUI line and --help at the very least
    EXPECT_GE(fromHelp.size(), 6U) << help.out;
    EXPECT_EQ(fromReadme, fromHelp) << "README.md's \"Command line\" block has drifted from "
                                       "`loopsketch --help`; copy the command lines over";
}

TEST(Cli, VersionPrintsTheProjectVersion)
{
    const CliRun r = runCli({"--version"});
    ASSERT_TRUE(r.exited);
    EXPECT_EQ(r.exitCode, 0);
    EXPECT_THAT(r.out, HasSubstr(LOOPSKETCH_PROJECT_VERSION));
}

TEST(Cli, UnknownCommandAndOptionAreBadInput)
{
    const std::vector<std::vector<std::string>> cases = {
        {"frobnicate", "demo"},
        {"--frobnicate"},
        {"analyze", "demo", "--frobnicate"},
        {"analyze", "demo", "--csv", "x.csv"},
        {"sweep", "demo", "--json"},
        {"analyze"},
        {"sweep", "demo"},
        {"analyze", "demo", "--candidate"},
        {"analyze", "demo", "other.loopsketch"},
    };
    for (const auto &args : cases) {
        const CliRun r = runCli(args);
        std::string joined;
        for (const auto &a : args)
            joined += a + " ";
        ASSERT_TRUE(r.exited) << joined;
        EXPECT_EQ(r.exitCode, 2) << joined << "\n" << r.err;
        EXPECT_FALSE(r.err.empty()) << joined;
    }
}

TEST(Cli, MissingFileIsBadInputNamingTheFile)
{
    TempDir dir;
    const fs::path missing = dir.path() / "no-such-design.loopsketch";
    for (const std::vector<std::string> &args :
         {std::vector<std::string>{"analyze", missing.string()},
          std::vector<std::string>{"sweep", missing.string(), "--csv",
                                   (dir.path() / "x.csv").string()}}) {
        const CliRun r = runCli(args);
        ASSERT_TRUE(r.exited);
        EXPECT_EQ(r.exitCode, 2) << r.err;
        EXPECT_THAT(r.err, HasSubstr("no-such-design.loopsketch"));
    }
    EXPECT_FALSE(fs::exists(dir.path() / "x.csv"));
}

TEST(CliScan, MapOfTheDemoIsCoresScanRowForRow)
{
    // The command line and the panels share runScan(): the CSV is core's, row for row.
    const CliRun r = runCli({"scan", "demo", "--part", "CF:1p:10p", "--part", "RF", "--csv", "-"});
    ASSERT_EQ(r.exitCode, 0) << r.err;
    const Design demo = loadOrFail(kDesignsDir / "demo.loopsketch");
    std::vector<ScanAxis> axes;
    for (const char *text : {"CF:1p:10p", "RF"}) {
        auto axis = resolveScanAxis(demo, *parseScanTarget(text), std::nullopt);
        ASSERT_TRUE(axis.ok()) << axis.errorText();
        axes.push_back(*axis);
    }
    auto scan = runScan(demo, axes);
    ASSERT_TRUE(scan.ok()) << scan.errorText();
    EXPECT_EQ(r.out, scanToCsv(*scan));
    // CF 1p..10p in E12 (13 values) times RF 100k..10M in E24 (49 values), IEC 60063.
    EXPECT_EQ(std::count(r.out.begin(), r.out.end(), '\n'), 1 + 13 * 49);
    EXPECT_EQ(r.out.substr(0, r.out.find('\n')),
              "CF,RF,gain,bandwidth_hz,phase_margin_deg,gain_margin_db,peaking_db,overshoot_pct,"
              "settling_time_s,output_noise_rms,z_in,z_out,stable,specs_pass");
}

TEST(CliScan, BadTargetsAreBadInputNamingFilePartAndField)
{
    const auto refused = [](const std::vector<std::string> &args, const std::string &says) {
        const CliRun r = runCli(args);
        EXPECT_EQ(r.exitCode, 2) << r.command;
        EXPECT_THAT(r.err, HasSubstr(says)) << r.command;
        EXPECT_TRUE(r.out.empty()) << r.command;
    };
    refused({"scan", "demo", "--part", "CF:1p", "--csv", "-"}, "--part");
    refused({"scan", "demo", "--part", "CF", "--series", "E25", "--csv", "-"}, "E25");
    refused({"scan", "demo", "--part", "CX", "--csv", "-"}, "demo: part CX");
    refused({"scan", "demo", "--part", "RL.q", "--csv", "-"}, "demo: part RL, field q");
    refused({"scan", "demo", "--part", "U1.gbw", "--csv", "-"}, "part U1, field gbw");
    refused({"scan", "demo", "--part", "CF:1x:2p", "--csv", "-"}, "part CF, field value");
    refused({"scan", "demo", "--part", "CF", "--part", "CF", "--csv", "-"}, "named twice");
    refused({"scan", "demo", "--part", "CF"}, "--csv");
}

TEST(Cli, AnalyzeDemoWorks)
{
    const auto demo = loadDesign((kDesignsDir / "demo.loopsketch").string());
    ASSERT_TRUE(demo.ok()) << demo.errorText();
    const Analysis a = analyzeOrFail(*demo);
    ASSERT_TRUE(a.exact.gain);
    const CliRun r = runCli({"analyze", "demo"});
    ASSERT_TRUE(r.exited);
    EXPECT_EQ(r.exitCode, 0) << r.err;
    EXPECT_THAT(r.out, HasSubstr(demo->title));
    EXPECT_THAT(r.out, HasSubstr(formatEngineering(*a.exact.gain, 5, a.gainUnit)));
    const CliRun j = runCli({"analyze", "demo", "--json"});
    ASSERT_TRUE(j.exited);
    ASSERT_EQ(j.exitCode, 0) << j.err;
    Json parsed;
    ASSERT_NO_THROW(parsed = Json::parse(j.out));
    expectAnalysisSchema(parsed);
    EXPECT_LT(relErr(jsonNumber(at(at(at(parsed, "dc"), "exact"), "gain")), *a.exact.gain), 1e-12);
}

TEST(Cli, CsvIntoMissingDirectoryIsBadInputAndWritesNothing)
{
    TempDir dir;
    const fs::path missingDir = dir.path() / "no-such-dir";
    const fs::path csv = missingDir / "sweep.csv";
    const CliRun r = runCli({"sweep", "demo", "--csv", csv.string()});
    ASSERT_TRUE(r.exited);
    EXPECT_EQ(r.exitCode, 2) << r.err;
    EXPECT_THAT(r.err, HasSubstr("sweep.csv"));
    EXPECT_FALSE(fs::exists(csv));
    EXPECT_FALSE(fs::exists(missingDir));
    EXPECT_EQ(std::distance(fs::directory_iterator(dir.path()), fs::directory_iterator{}), 0);
}

// ----- outputs: never the input, devices written directly, "-" is standard output ----------
// Loopsketch's own output contract (DEVELOPERS.md, "Outputs"); /dev/full's ENOSPC is Linux's
// full(4); file types are POSIX stat(2)'s.

TEST(CliOutputs, SweepOntoItsOwnDesignIsRefusedInEverySpelling)
{
    TempDir dir;
    const fs::path design = dir.path() / "a.loopsketch";
    fs::copy_file(kDesignsDir / "demo.loopsketch", design);
    const std::string before = readBytes(design);
    fs::create_directory(dir.path() / "sub");
    fs::create_hard_link(design, dir.path() / "hard.csv");
    fs::create_symlink(design, dir.path() / "soft.csv");
    for (const fs::path &csv : {design, dir.path() / "sub" / ".." / "." / "a.loopsketch",
                                dir.path() / "hard.csv", dir.path() / "soft.csv"}) {
        const CliRun r = runCli({"sweep", design.string(), "--csv", csv.string()});
        ASSERT_TRUE(r.exited);
        EXPECT_EQ(r.exitCode, 2) << csv << ": " << r.err;
        EXPECT_THAT(r.err, HasSubstr("refused"));
        EXPECT_THAT(r.err, HasSubstr(csv.string()));
        EXPECT_EQ(readBytes(design), before) << csv;
    }
    // the design read through the hard link, written through its first name
    const CliRun viaLink
        = runCli({"sweep", (dir.path() / "hard.csv").string(), "--csv", design.string()});
    EXPECT_EQ(viaLink.exitCode, 2) << viaLink.err;
    EXPECT_EQ(readBytes(design), before);
    // the JSON of analyze onto the design, through --out
    const CliRun json = runCli({"analyze", design.string(), "--json", "--out", design.string()});
    EXPECT_EQ(json.exitCode, 2) << json.err;
    EXPECT_EQ(readBytes(design), before);
    EXPECT_EQ(entriesOf(dir.path()), "a.loopsketch hard.csv soft.csv sub");
}

TEST(CliOutputs, DevNullIsWrittenAndStaysACharacterDevice)
{
    // Run in a child whose /dev/null is a protected mount point (test::isolateDeviceNodes):
    // a program that renamed over it fails with EBUSY there instead of replacing the node.
    const auto outcome = test::runInChild([&](std::string &out) {
        if (auto why = test::isolateDeviceNodes(); !why.empty()) {
            out = why;
            return test::kChildCannotInject;
        }
        const CliRun r = runCli({"sweep", "demo", "--csv", "/dev/null"});
        out = std::to_string(r.exitCode) + " " + r.err;
        return 0;
    });
    if (outcome.exitCode == test::kChildCannotInject)
        GTEST_SKIP() << "cannot protect the device nodes here: " << outcome.output;
    ASSERT_EQ(outcome.exitCode, 0) << outcome.output;
    EXPECT_EQ(outcome.output, "0 ");
    struct stat info
    {
    };
    ASSERT_EQ(::lstat("/dev/null", &info), 0);
    EXPECT_TRUE(S_ISCHR(info.st_mode)) << "a device must never be renamed over";
    for (const auto &e : fs::directory_iterator("/dev"))
        EXPECT_THAT(e.path().filename().string(), Not(HasSubstr(".null.")));
}

TEST(CliOutputs, FifoGetsTheWholeSweep)
{
    TempDir dir;
    const fs::path fifo = dir.path() / "sweep.fifo";
    ASSERT_EQ(::mkfifo(fifo.c_str(), 0600), 0);
    std::string received;
    std::thread reader([&] { received = readBytes(fifo); });
    const CliRun r = runCli({"sweep", "demo", "--csv", fifo.string()});
    // should the program have failed before opening the FIFO, release the waiting reader
    if (const int fd = ::open(fifo.c_str(), O_WRONLY | O_NONBLOCK); fd >= 0)
        ::close(fd);
    reader.join();
    ASSERT_TRUE(r.exited);
    EXPECT_EQ(r.exitCode, 0) << r.err;
    const Analysis a = analyzeOrFail(*parseDesign(readBytes(kDesignsDir / "demo.loopsketch")));
    EXPECT_TRUE(received == sweepToCsv(a)) << received.size() << " bytes received";
    EXPECT_TRUE(fs::is_fifo(fs::symlink_status(fifo)));
    EXPECT_EQ(entriesOf(dir.path()), "sweep.fifo");
}

TEST(CliOutputs, DashIsStandardOutputForCsvAndJson)
{
    const CliRun csv = runCli({"sweep", "demo", "--csv", "-"});
    ASSERT_TRUE(csv.exited);
    EXPECT_EQ(csv.exitCode, 0) << csv.err;
    const Analysis a = analyzeOrFail(*parseDesign(readBytes(kDesignsDir / "demo.loopsketch")));
    EXPECT_TRUE(csv.out == sweepToCsv(a));
    const CliRun json = runCli({"analyze", "demo", "--json", "--out", "-"});
    const CliRun plain = runCli({"analyze", "demo", "--json"});
    EXPECT_EQ(json.exitCode, 0) << json.err;
    EXPECT_FALSE(json.out.empty());
    EXPECT_EQ(json.out, plain.out);
}

TEST(CliOutputs, StandardOutputAppendingToTheDesignIsRefused)
{
    TempDir dir;
    const fs::path design = dir.path() / "a.loopsketch";
    fs::copy_file(kDesignsDir / "demo.loopsketch", design);
    const std::string before = readBytes(design);
    for (const std::string &args : {" sweep " + shellQuoted(design.string()) + " --csv - >>",
                                    " analyze " + shellQuoted(design.string()) + " --json >>"}) {
        const std::string cmd
            = shellQuoted(kCli.string()) + args + shellQuoted(design.string()) + " 2>/dev/null";
        const int status = std::system(cmd.c_str());
        ASSERT_TRUE(WIFEXITED(status));
        EXPECT_EQ(WEXITSTATUS(status), 2) << args;
        EXPECT_EQ(readBytes(design), before) << args;
    }
}

TEST(CliOutputs, DevStdoutIntoAPipeIsWrittenNotReplaced)
{
    // /dev/stdout leads to a pipe here ("pipe:[n]", no file to rename over); with standard
    // output redirected to a file it must be that open file, written where the shell opened it.
    TempDir dir;
    const fs::path piped = dir.path() / "piped.csv", rc = dir.path() / "rc";
    const std::string cmd = "{ " + shellQuoted(kCli.string())
        + " sweep demo --csv /dev/stdout; echo $? >" + shellQuoted(rc.string()) + "; } | cat >"
        + shellQuoted(piped.string());
    ASSERT_EQ(std::system(cmd.c_str()), 0);
    EXPECT_EQ(readBytes(rc), "0\n");
    const Analysis a = analyzeOrFail(*parseDesign(readBytes(kDesignsDir / "demo.loopsketch")));
    EXPECT_TRUE(readBytes(piped) == sweepToCsv(a)) << readBytes(piped).size() << " bytes";

    const fs::path redirected = dir.path() / "redirected.csv";
    const std::string header = "written by the shell first\n";
    {
        std::ofstream out(redirected, std::ios::binary);
        out << header;
    }
    const std::string append = shellQuoted(kCli.string()) + " sweep demo --csv /dev/stdout >>"
        + shellQuoted(redirected.string());
    ASSERT_EQ(std::system(append.c_str()), 0);
    EXPECT_TRUE(readBytes(redirected) == header + sweepToCsv(a));
    EXPECT_EQ(entriesOf(dir.path()), "piped.csv rc redirected.csv");
}

TEST(CliOutputs, JsonOutWritesTheFileAndNothingOnStandardOutput)
{
    TempDir dir;
    const fs::path file = dir.path() / "a.json";
    const CliRun r = runCli({"analyze", "demo", "--json", "--out", file.string()});
    EXPECT_EQ(r.exitCode, 0) << r.err;
    EXPECT_TRUE(r.out.empty());
    EXPECT_EQ(readBytes(file), runCli({"analyze", "demo", "--json"}).out);
}

TEST(CliOutputs, FullStandardOutputIsExitTwo)
{
    if (!fs::exists("/dev/full"))
        GTEST_SKIP() << "no /dev/full on this machine";
    const std::string cmd
        = shellQuoted(kCli.string()) + " analyze demo --json >/dev/full 2>/dev/null";
    const int status = std::system(cmd.c_str());
    ASSERT_TRUE(WIFEXITED(status));
    EXPECT_EQ(WEXITSTATUS(status), 2);
}

// ----- spread and suggest ------------------------------------------------------------------

/// The demo design with its tolerances removed, written to `dir`.
fs::path demoWithoutTolerances(const TempDir &dir)
{
    std::string text = readBytes(kDesignsDir / "demo.loopsketch");
    for (const std::string t : {", \"tolerance\": \"1%\"", ", \"tolerance\": \"10%\""}) {
        const auto at = text.find(t);
        EXPECT_NE(at, std::string::npos) << t;
        if (at != std::string::npos)
            text.erase(at, t.size());
    }
    EXPECT_EQ(text.find("tolerance"), std::string::npos);
    const fs::path path = dir.path() / "untoleranced.loopsketch";
    std::ofstream(path, std::ios::binary) << text;
    return path;
}

TEST(CliSpread, SameSeedSameNumbersAndCoresMonteCarlo)
{
    const std::string demo = (kDesignsDir / "demo.loopsketch").string();
    const CliRun a = runCli({"spread", demo, "--trials", "400", "--seed", "17", "--json"});
    const CliRun b = runCli({"spread", demo, "--trials", "400", "--seed", "17", "--json"});
    const CliRun c = runCli({"spread", demo, "--trials", "400", "--seed", "18", "--json"});
    for (const CliRun *r : {&a, &b, &c}) {
        ASSERT_TRUE(r->exited);
        ASSERT_EQ(r->exitCode, 0) << r->err;
    }
    EXPECT_EQ(a.out, b.out); // the same seed gives the same text, byte for byte
    EXPECT_NE(a.out, c.out);
    Json j;
    ASSERT_NO_THROW(j = Json::parse(a.out));
    EXPECT_EQ(at(j, "schema"), "loopsketch.spread/1");
    const Json &mc = at(j, "monte_carlo");
    EXPECT_EQ(at(mc, "seed"), 17);
    EXPECT_EQ(at(mc, "trials"), 400);
    EXPECT_EQ(at(mc, "completed"), 400);
    EXPECT_EQ(at(at(j, "worst_case"), "method"), "vertices");

    // The same run in-process through core.
    auto design = loadDesign(demo);
    ASSERT_TRUE(design.ok()) << design.errorText();
    SpreadOptions options;
    options.trials = 400;
    options.seed = 17;
    auto expected = monteCarlo(*design, options);
    ASSERT_TRUE(expected.ok()) << expected.errorText();
    EXPECT_LT(relErr(jsonNumber(at(at(mc, "gain"), "mean")), expected->gain.mean), 1e-12);
    EXPECT_LT(relErr(jsonNumber(at(at(mc, "bandwidth_hz"), "std")), expected->bandwidthHz.std),
              1e-12);
    EXPECT_LT(
        relErr(jsonNumber(at(at(mc, "phase_margin_deg"), "mean")), expected->phaseMarginDeg.mean),
        1e-12);

    const CliRun text = runCli({"spread", demo, "--trials", "400", "--seed", "17"});
    ASSERT_TRUE(text.exited);
    EXPECT_EQ(text.exitCode, 0) << text.err;
    EXPECT_THAT(text.out, HasSubstr("400 of 400 trials"));
    EXPECT_THAT(text.out, HasSubstr("seed 17"));
    EXPECT_THAT(text.out, HasSubstr(formatEngineering(expected->gain.mean, 4, "V/A")));
}

TEST(CliSpread, DesignWithoutTolerancesIsBadInputNamingTheFile)
{
    TempDir dir;
    const fs::path file = demoWithoutTolerances(dir);
    for (const std::vector<std::string> &args :
         {std::vector<std::string>{"spread", file.string(), "--trials", "100", "--seed", "1"},
          std::vector<std::string>{"spread", file.string(), "--trials", "100", "--seed", "1",
                                   "--json"}}) {
        const CliRun r = runCli(args);
        ASSERT_TRUE(r.exited);
        EXPECT_EQ(r.exitCode, 2) << r.err;
        EXPECT_THAT(r.err, HasSubstr("untoleranced.loopsketch"));
        EXPECT_THAT(r.err, HasSubstr("nothing to spread"));
        EXPECT_TRUE(r.out.empty());
    }
    // A gain block spread gives it something to spread.
    const CliRun g = runCli(
        {"spread", file.string(), "--trials", "100", "--seed", "1", "--gain-spread", "20"});
    ASSERT_TRUE(g.exited);
    EXPECT_EQ(g.exitCode, 0) << g.err;
    EXPECT_THAT(g.out, HasSubstr("U1 gain"));
}

// A design that loads and validates but has no circuit solution: an ideal voltage source
// straight across the gain block's output, which has no output resistance (two voltage
// sources in parallel; common practice: modified nodal analysis has no unique solution then).
// Every command's message names the file, spread's and suggest's as well as analyze's.
TEST(CliMessages, EveryCommandNamesTheFileOfAnUnsolvableCircuit)
{
    TempDir dir;
    std::string text = readBytes(kDesignsDir / "demo.loopsketch");
    const std::string source
        = R"({"id": "PD1", "type": "isource", "to": "in", "from": "0", "r_parallel": "500M", "c_parallel": "20p"})";
    const std::string rOut = R"("r_out": "50")";
    ASSERT_NE(text.find(source), std::string::npos);
    ASSERT_NE(text.find(rOut), std::string::npos);
    text.replace(text.find(source), source.size(),
                 R"({"id": "PD1", "type": "vsource", "pos": "out", "neg": "0"})");
    text.replace(text.find(rOut), rOut.size(), R"("r_out": "0")");
    const fs::path file = dir.path() / "parallel-sources.loopsketch";
    std::ofstream(file, std::ios::binary) << text;
    for (const std::vector<std::string> &args :
         {std::vector<std::string>{"analyze", file.string()},
          std::vector<std::string>{"sweep", file.string(), "--csv", "-"},
          std::vector<std::string>{"spread", file.string(), "--trials", "10", "--seed", "1"},
          std::vector<std::string>{"spread", file.string(), "--trials", "10", "--seed", "1",
                                   "--json"}}) {
        const CliRun r = runCli(args);
        ASSERT_TRUE(r.exited);
        EXPECT_EQ(r.exitCode, 2) << args.front() << ": " << r.err;
        EXPECT_THAT(r.err, HasSubstr("no unique solution")) << args.front();
        EXPECT_THAT(r.err, HasSubstr("parallel-sources.loopsketch: ")) << args.front();
        EXPECT_TRUE(r.out.empty()) << args.front();
    }
}

TEST(CliSpread, BadTrialsAndSeedAreBadInput)
{
    for (const std::vector<std::string> &args :
         {std::vector<std::string>{"spread", "demo", "--trials", "0"},
          std::vector<std::string>{"spread", "demo", "--trials", "many"},
          std::vector<std::string>{"spread", "demo", "--seed", "-3"},
          std::vector<std::string>{"spread", "demo", "--gain-spread", "100"}}) {
        const CliRun r = runCli(args);
        ASSERT_TRUE(r.exited);
        EXPECT_EQ(r.exitCode, 2) << args[2] << " " << args[3];
        EXPECT_THAT(r.err, HasSubstr(args[2])) << args[2];
    }
}

TEST(CliSuggest, JsonGivesCoresRankedSuggestions)
{
    const std::string demo = (kDesignsDir / "demo.loopsketch").string();
    const CliRun r = runCli({"suggest", demo, "--parts", "RF,CF", "--json"});
    ASSERT_TRUE(r.exited);
    ASSERT_EQ(r.exitCode, 0) << r.err;
    Json j;
    ASSERT_NO_THROW(j = Json::parse(r.out));
    EXPECT_EQ(at(j, "schema"), "loopsketch.suggest/1");
    auto design = loadDesign(demo);
    ASSERT_TRUE(design.ok()) << design.errorText();
    SuggestOptions options;
    options.parts = {"RF", "CF"};
    auto expected = suggestValues(*design, options);
    ASSERT_TRUE(expected.ok()) << expected.errorText();
    EXPECT_EQ(at(j, "combinations"), expected->combinations);
    const Json &list = at(j, "suggestions");
    ASSERT_TRUE(list.is_array());
    ASSERT_EQ(list.size(), expected->suggestions.size());
    ASSERT_FALSE(list.empty());
    for (std::size_t i = 0; i < list.size(); ++i) {
        for (const auto &[id, v] : expected->suggestions[i].values)
            EXPECT_LT(relErr(jsonNumber(at(at(list[i], "values"), id)), v), 1e-12) << i << id;
    }
    // Every suggested value is in its part's series (IEC 60063): RF E24, CF E12.
    EXPECT_TRUE(isSeriesValue(ESeries::E24, jsonNumber(at(at(list[0], "values"), "RF"))));
    EXPECT_TRUE(isSeriesValue(ESeries::E12, jsonNumber(at(at(list[0], "values"), "CF"))));
}

TEST(CliSuggest, UnknownPartIsBadInputNamingIt)
{
    const CliRun r = runCli({"suggest", "demo", "--parts", "RF,RX9"});
    ASSERT_TRUE(r.exited);
    EXPECT_EQ(r.exitCode, 2) << r.err;
    EXPECT_THAT(r.err, HasSubstr("RX9"));
    EXPECT_TRUE(r.out.empty());
    const CliRun json = runCli({"suggest", "demo", "--parts", "RX9", "--json"});
    ASSERT_TRUE(json.exited);
    EXPECT_EQ(json.exitCode, 2);
    EXPECT_THAT(json.err, HasSubstr("no part named \"RX9\""));
    const CliRun none = runCli({"suggest", "demo"});
    ASSERT_TRUE(none.exited);
    EXPECT_EQ(none.exitCode, 2);
    EXPECT_THAT(none.err, HasSubstr("--parts"));
}

} // namespace

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
