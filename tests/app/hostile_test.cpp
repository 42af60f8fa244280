// Every command over the hostile corpus (tests/data/malformed and the large files written at
// test time): exit 0 or 2, never a signal; a refusal names the file and the part or field at
// fault; nothing half-written; no NaN and no printf "inf" in any output (DESIGN.md §6: null
// where a quantity does not exist; "inf" only as the JSON/CSV value of an infinite one).

#include "hostilecorpus.h"
#include "malformedcorpus.h"

#include "clirunner.h"

#include <gmock/gmock.h>
#include <gtest/gtest.h>
#include <nlohmann/json.hpp>

#include <sys/wait.h>
#include <unistd.h>

#include <chrono>
#include <cstdlib>
#include <filesystem>
#include <fstream>
#include <regex>
#include <sstream>
#include <string>
#include <vector>

namespace fs = std::filesystem;
using ::testing::HasSubstr;
using ::testing::Not;

namespace loopsketch::test {
namespace {

const fs::path kCli = LOOPSKETCH_CLI;

using Run = CliRun;

/// Runs the program with a 300 s watchdog, its output caught in `dir`.
Run runCli(const std::vector<std::string> &args, const fs::path &dir)
{
    return runProgram(kCli.string(), args, dir, 300);
}

// Text outside double-quoted strings (quotes hold the user's own text, echoed in messages,
// and JSON's string values).
std::string outsideQuotes(const std::string &text)
{
    std::string s;
    bool quoted = false, escaped = false;
    for (const char ch : text) {
        if (quoted) {
            if (escaped)
                escaped = false;
            else if (ch == '\\')
                escaped = true;
            else if (ch == '"')
                quoted = false;
            continue;
        }
        if (ch == '"')
            quoted = true;
        else
            s += ch;
    }
    return s;
}

// A "nan", "-nan", "inf" or "infinity" standing alone, as printf and iostreams write them.
std::string badToken(const std::string &text)
{
    static const std::regex token("(^|[^A-Za-z0-9_])(-?(nan|inf|infinity))([^A-Za-z0-9_]|$)",
                                  std::regex::icase);
    std::smatch m;
    if (std::regex_search(text, m, token))
        return m.str(2);
    return {};
}

void expectCleanText(const std::string &text, const std::string &what)
{
    EXPECT_EQ(badToken(outsideQuotes(text)), "") << what << ":\n" << text.substr(0, 2000);
}

// JSON: valid, and no string value that is a NaN spelled out ("inf"/"-inf" are the
// documented values of infinite quantities).
void expectCleanJson(const std::string &text, const std::string &what)
{
    expectCleanText(text, what);
    const auto j = nlohmann::json::parse(text, nullptr, false);
    ASSERT_FALSE(j.is_discarded()) << what << ": not JSON";
    std::vector<const nlohmann::json *> todo{&j};
    while (!todo.empty()) {
        const nlohmann::json *v = todo.back();
        todo.pop_back();
        if (v->is_structured()) {
            for (const auto &e : *v)
                todo.push_back(&e);
        } else if (v->is_string()) {
            static const std::regex nanText("-?nan", std::regex::icase);
            EXPECT_FALSE(std::regex_match(v->get<std::string>(), nanText)) << what;
        } else if (v->is_number_float()) {
            EXPECT_TRUE(std::isfinite(v->get<double>())) << what;
        }
    }
}

// CSV: after the header, every cell is a finite number, empty, "inf" or "-inf".
void expectCleanCsv(const fs::path &csv, const std::string &what)
{
    std::ifstream in(csv);
    std::string line;
    ASSERT_TRUE(std::getline(in, line)) << what << ": empty CSV";
    std::size_t rows = 0;
    while (std::getline(in, line)) {
        ++rows;
        std::stringstream ss(line);
        std::string cell;
        while (std::getline(ss, cell, ',')) {
            if (cell.empty() || cell == "inf" || cell == "-inf")
                continue;
            char *end = nullptr;
            const double v = std::strtod(cell.c_str(), &end);
            EXPECT_TRUE(end == cell.c_str() + cell.size() && std::isfinite(v))
                << what << ": cell \"" << cell << "\" in row " << rows;
        }
    }
    EXPECT_GT(rows, 0u) << what;
}

bool exportAvailable()
{
    static const bool available = [] {
        TempDir dir;
        return runCli({"--help"}, dir.path()).out.find("loopsketch export") != std::string::npos;
    }();
    return available;
}

// Runs every command on one corpus file and checks what the issue asks of each.
void runEveryCommand(const fs::path &file, const MalformedCase &c)
{
    TempDir dir;
    const fs::path csv = dir.path() / "sweep.csv", pdf = dir.path() / "sheet.pdf",
                   csv2 = dir.path() / "export.csv", svg = dir.path() / "svg";
    const std::string f = file.string();
    std::vector<std::vector<std::string>> commands = {
        {"analyze", f},
        {"analyze", f, "--json"},
        {"sweep", f, "--csv", csv.string()},
        {"spread", f, "--trials", "40", "--seed", "3"},
        {"spread", f, "--trials", "40", "--seed", "3", "--json"},
        // Bounded like spread above: 20 yield trials for 2 rows keep a 20-pole design to
        // seconds under the sanitizers (200 trials for 20 rows took 380 s there).
        {"suggest", f, "--parts", "RF,CF", "--decades", "1", "--best", "2", "--trials", "20"},
        {"suggest", f, "--parts", "CF", "--json", "--best", "2", "--trials", "20"},
    };
    if (exportAvailable())
        commands.push_back({"export", f, "--pdf", pdf.string(), "--csv", csv2.string(), "--svg",
                            svg.string(), "--spread-trials", "40"});
    for (const auto &args : commands) {
        fs::remove(csv);
        fs::remove(csv2);
        fs::remove(pdf);
        fs::remove_all(svg);
        fs::create_directory(svg);
        const Run r = runCli(args, dir.path());
        const std::string what = c.file + ":" + r.command;
        ASSERT_TRUE(r.exited) << what << ": ended by a signal or the watchdog";
        EXPECT_TRUE(r.exitCode == 0 || r.exitCode == 2) << what << " exit " << r.exitCode << "\n"
                                                        << r.err;
        EXPECT_THAT(r.err, Not(HasSubstr("internal error"))) << what;
        if (r.exitCode == 2) {
            EXPECT_THAT(r.err, HasSubstr(c.file)) << what << ": the message must name the file";
            EXPECT_TRUE(r.out.empty()) << what;
            EXPECT_FALSE(fs::exists(csv) || fs::exists(csv2) || fs::exists(pdf))
                << what << ": an output was written although the command failed";
        }
        if (c.exitCode == 2) {
            // refused by every command; analyze and sweep give the row's message (the other
            // commands may first refuse their own options or budgets)
            EXPECT_EQ(r.exitCode, 2) << what << "\n" << r.out.substr(0, 500);
            if (args[0] == "analyze" || args[0] == "sweep" || !c.file.starts_with("generated-")) {
                EXPECT_THAT(r.err, HasSubstr(c.expected)) << what;
            }
        } else if (args[0] == "analyze") {
            EXPECT_EQ(r.exitCode, 0) << what << "\n" << r.err;
            if (args.size() == 2) {
                EXPECT_THAT(r.out, HasSubstr(c.expected)) << what;
            }
        }
        // the file's own name ("nan-value.loopsketch") is not output to scan
        const auto withoutPath = [&](std::string text) {
            for (auto at = text.find(f); at != std::string::npos; at = text.find(f, at))
                text.erase(at, f.size());
            return text;
        };
        expectCleanText(withoutPath(r.err), what + " (stderr)");
        if (r.exitCode == 0) {
            if (args.back() == "--json")
                expectCleanJson(r.out, what);
            else
                expectCleanText(withoutPath(r.out), what);
            if (args[0] == "sweep")
                expectCleanCsv(csv, what);
            if (args[0] == "export") {
                expectCleanCsv(csv2, what);
                std::size_t plots = 0;
                for (const auto &e : fs::directory_iterator(svg)) {
                    ++plots;
                    EXPECT_EQ(badToken(readBytes(e.path())), "") << what << ": " << e.path();
                }
                EXPECT_GT(plots, 0u) << what;
            }
        }
    }
}

class HostileCorpus : public ::testing::TestWithParam<MalformedCase>
{
};

TEST_P(HostileCorpus, EveryCommandExitsCleanlyWithoutNaN)
{
    const MalformedCase &c = GetParam();
    const fs::path path = kMalformedDir / c.file;
    ASSERT_TRUE(fs::exists(path)) << path;
    runEveryCommand(path, c);
}

INSTANTIATE_TEST_SUITE_P(Files, HostileCorpus, ::testing::ValuesIn(malformedCases(false)),
                         [](const auto &row) { return caseName(row.param.file); });

// The files too big to commit, written here. The 200,000 unknown keys took about 35 s
// before the loader was made linear; here the test only asks that they finish (the time is
// a benchmark figure: tests/bench/loader_bench.cpp).
TEST(HostileCorpus, GeneratedLargeFilesExitCleanlyWithoutNaN)
{
    TempDir dir;
    const auto rows = writeGeneratedCorpus(dir.path());
    ASSERT_EQ(rows.size(), 7u);
    for (const MalformedCase &c : rows) {
        SCOPED_TRACE(c.file);
        runEveryCommand(dir.path() / c.file, c);
    }
}

TEST(HostileCorpus, GeneratedCandidateFileIsUnderTheSizeLimit)
{
    // 262,144 candidates must be refused for their count, not for the file size
    TempDir dir;
    writeGeneratedCorpus(dir.path());
    const auto size = fs::file_size(dir.path() / "generated-262k-candidates.loopsketch");
    EXPECT_GT(size, 14u * 1024u * 1024u);
    EXPECT_LT(size, 16u * 1024u * 1024u);
}

} // namespace
} // namespace loopsketch::test
