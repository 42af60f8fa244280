// The built command-line program, run as a user runs it: exit codes and messages on stderr
// for malformed and oversized files, candidates, options and errors, and the README's
// synopsis against --help. Its reports are checked in clireport_test.cpp, its outputs in
// clioutputs_test.cpp, spread and suggest in clispreadsuggest_test.cpp, scan in
// cliscan_test.cpp.

#include "loopsketch/analysis/analysis.h"
#include "loopsketch/base/value.h"
#include "loopsketch/design/designfile.h"

#include "malformedcorpus.h"

#include "clitest.h"
#include "designs.h"
#include "numeric.h"

#include <gmock/gmock.h>
#include <gtest/gtest.h>
#include <nlohmann/json.hpp>

#include <algorithm>
#include <cmath>
#include <filesystem>
#include <fstream>
#include <sstream>
#include <string>
#include <vector>

using namespace loopsketch;
using namespace loopsketch::test;

namespace {

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

} // namespace
