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

} // namespace
