// The spread and suggest commands: reproducible runs that match core's, and bad input named
// (missing tolerances, bad trial counts and seeds, unknown parts, an unsolvable circuit).

#include "loopsketch/analysis/analysis.h"
#include "loopsketch/base/value.h"
#include "loopsketch/design/designfile.h"

#include "clitest.h"
#include "designs.h"
#include "files.h"
#include "numeric.h"

#include "loopsketch/analysis/spread.h"
#include "loopsketch/analysis/suggest.h"
#include <gmock/gmock.h>
#include <gtest/gtest.h>
#include <nlohmann/json.hpp>

#include <cmath>
#include <filesystem>
#include <fstream>
#include <string>
#include <vector>

using namespace loopsketch;
using namespace loopsketch::test;

namespace {

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

// An invented x101 preamp, R2 / R1 = 100k / 1k with 1 % parts and a gain window of 101 +- 1 %:
// the worst case of 1 + R2 (1 + t) / (R1 (1 - t)) is about +-2 % (common practice), so the
// rows' Monte Carlo yields lie strictly between 0 and 1 and move with the seed.
fs::path preampFile(const TempDir &dir)
{
    const fs::path path = dir.path() / "preamp.loopsketch";
    writeBytes(path, R"({"schema": "loopsketch.design/1", "title": "x101 preamp", "parts": [
  {"id": "VS", "type": "vsource", "pos": "in", "neg": "0", "r_series": "10k"},
  {"id": "U1", "type": "gain_block", "in_p": "in", "in_n": "fb", "out": "out",
   "gain": "160dB", "gbw": "100M"},
  {"id": "R2", "type": "resistor", "a": "out", "b": "fb", "value": "100k", "series": "E96",
   "tolerance": "1%"},
  {"id": "R1", "type": "resistor", "a": "fb", "b": "0", "value": "1k", "series": "E96",
   "tolerance": "1%"},
  {"id": "RL", "type": "load", "a": "out", "b": "0", "r": "10k"}],
  "input": "VS", "output": "voltage",
  "sweep": {"start": "1", "stop": "100M", "points_per_decade": 10},
  "specs": {"gain": ["99.99", "102.01"]}}
)");
    return path;
}

std::vector<double> yieldsOf(const std::string &json)
{
    std::vector<double> out;
    const Json j = Json::parse(json);
    for (const Json &row : at(j, "suggestions"))
        out.push_back(jsonNumber(at(row, "yield")));
    return out;
}

// Issue 18: --trials and --seed size and seed the rows' Monte Carlo yield. The same seed
// gives the same output byte for byte; another seed other yields (each row's trials are drawn
// afresh), equal to core's suggestValues() with that seed; the JSON states both.
TEST(CliSuggest, SeedAndTrialsSetTheYieldReproducibly)
{
    TempDir dir;
    const std::string file = preampFile(dir).string();
    const auto run = [&](const std::string &seed) {
        return runCli({"suggest", file, "--parts", "R2,R1", "--decades", "0.1", "--best", "3",
                       "--trials", "60", "--seed", seed, "--json"});
    };
    const CliRun a = run("5"), b = run("5"), c = run("6");
    for (const CliRun *r : {&a, &b, &c}) {
        ASSERT_TRUE(r->exited);
        ASSERT_EQ(r->exitCode, 0) << r->err;
    }
    EXPECT_EQ(a.out, b.out);
    const Json j = Json::parse(a.out);
    EXPECT_EQ(at(at(j, "spread"), "seed"), 5);
    EXPECT_EQ(at(at(j, "spread"), "yield_trials"), 60);
    const std::vector<double> ya = yieldsOf(a.out), yc = yieldsOf(c.out);
    ASSERT_FALSE(ya.empty());
    bool between = false;
    for (double y : ya)
        between = between || (y > 0 && y < 1);
    EXPECT_TRUE(between) << "no row with a yield strictly between 0 and 1";
    EXPECT_NE(ya, yc);

    // The same search in-process through core, seed 6.
    auto design = loadDesign(file);
    ASSERT_TRUE(design.ok()) << design.errorText();
    SuggestOptions options;
    options.parts = {"R2", "R1"};
    options.decades = 0.1;
    options.best = 3;
    options.yieldTrials = 60;
    options.seed = 6;
    auto expected = suggestValues(*design, options);
    ASSERT_TRUE(expected.ok()) << expected.errorText();
    ASSERT_EQ(yc.size(), expected->suggestions.size());
    for (std::size_t i = 0; i < yc.size(); ++i)
        EXPECT_NEAR(yc[i], expected->suggestions[i].yield, 1e-12) << i;

    // The text states trials and seed too.
    const CliRun text = runCli({"suggest", file, "--parts", "R2,R1", "--decades", "0.1", "--best",
                                "3", "--trials", "60", "--seed", "5"});
    ASSERT_TRUE(text.exited);
    EXPECT_EQ(text.exitCode, 0) << text.err;
    EXPECT_THAT(text.out, HasSubstr("60 Monte Carlo trials each (uniform, seed 5)"));
}

// Out-of-range counts are bad input naming the option, before any work; nothing on stdout.
TEST(CliSuggest, TrialsAndSeedOutOfRangeAreRefusedNamingTheOption)
{
    const std::string demo = (kDesignsDir / "demo.loopsketch").string();
    for (const auto &[option, value] :
         std::vector<std::pair<std::string, std::string>>{{"--trials", "0"},
                                                          {"--trials", "-5"},
                                                          {"--trials", "1000001"},
                                                          {"--trials", "2.5"},
                                                          {"--trials", "many"},
                                                          {"--seed", "-1"},
                                                          {"--seed", "x"}}) {
        const CliRun r = runCli({"suggest", demo, "--parts", "RF,CF", option, value});
        ASSERT_TRUE(r.exited);
        EXPECT_EQ(r.exitCode, 2) << option << " " << value << ": " << r.err;
        EXPECT_THAT(r.err, HasSubstr(option)) << value;
        EXPECT_TRUE(r.out.empty()) << option << " " << value;
    }
    // The largest count is accepted as a count (the work budget then says what fits).
    const CliRun most = runCli({"suggest", demo, "--parts", "CF", "--decades", "0.2", "--best", "1",
                                "--trials", "1000000", "--json"});
    ASSERT_TRUE(most.exited);
    EXPECT_EQ(most.exitCode, 0) << most.err;
    EXPECT_THAT(most.out, HasSubstr(R"("yield_note": "no yield computed)"));
}

} // namespace
