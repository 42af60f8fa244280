// The built command-line program, run as a user runs it: exit codes, messages on stderr,
// the analysis text and JSON, and the sweep CSV, checked against the core analysis.

#include "faultinjection.h"

#include "loopsketch/analysis.h"
#include "loopsketch/designfile.h"
#include "loopsketch/spread.h"
#include "loopsketch/suggest.h"
#include "loopsketch/value.h"

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
#include <sstream>
#include <string>
#include <thread>
#include <vector>

using namespace loopsketch;
using ::testing::HasSubstr;
using ::testing::Not;
namespace fs = std::filesystem;
using Json = nlohmann::json;

namespace {

const fs::path kCli = LOOPSKETCH_CLI;
const fs::path kDesignsDir = LOOPSKETCH_DESIGNS_DIR;
const fs::path kMalformedDir = fs::path(LOOPSKETCH_TEST_DATA_DIR) / "malformed";

class TempDir
{
public:
    TempDir()
    {
        static std::atomic<int> counter{0};
        m_path = fs::temp_directory_path()
            / ("loopsketch-cli-test-" + std::to_string(::getpid()) + "-"
               + std::to_string(counter++));
        fs::create_directories(m_path);
    }
    ~TempDir()
    {
        std::error_code ec;
        fs::remove_all(m_path, ec);
    }
    TempDir(const TempDir &) = delete;
    TempDir &operator=(const TempDir &) = delete;
    const fs::path &path() const { return m_path; }

private:
    fs::path m_path;
};

std::string readText(const fs::path &path)
{
    std::ifstream in(path, std::ios::binary);
    std::ostringstream os;
    os << in.rdbuf();
    return os.str();
}

/// The names in `dir`, sorted, separated by spaces.
std::string entriesOf(const fs::path &dir)
{
    std::vector<std::string> names;
    for (const auto &e : fs::directory_iterator(dir))
        names.push_back(e.path().filename().string());
    std::sort(names.begin(), names.end());
    std::string joined;
    for (const auto &n : names)
        joined.append(joined.empty() ? "" : " ").append(n);
    return joined;
}

std::string shellQuoted(const std::string &s)
{
    std::string q = "'";
    for (char c : s)
        q += c == '\'' ? std::string("'\\''") : std::string(1, c);
    return q + "'";
}

struct CliRun
{
    bool exited = false; ///< false: killed by a signal (a crash)
    int exitCode = -1;
    std::string out;
    std::string err;
};

CliRun runCli(const std::vector<std::string> &args)
{
    TempDir dir;
    const fs::path out = dir.path() / "stdout";
    const fs::path err = dir.path() / "stderr";
    // Appended piece by piece: `" " + string` trips GCC 12's false -Wrestrict (bug 105329).
    std::string cmd = shellQuoted(kCli.string());
    for (const auto &a : args)
        cmd.append(" ").append(shellQuoted(a));
    cmd.append(" >").append(shellQuoted(out.string()));
    cmd.append(" 2>").append(shellQuoted(err.string()));
    cmd.append(" </dev/null");
    const int status = std::system(cmd.c_str());
    CliRun r;
    if (status != -1 && WIFEXITED(status)) {
        r.exited = true;
        r.exitCode = WEXITSTATUS(status);
    }
    r.out = readText(out);
    r.err = readText(err);
    return r;
}

std::vector<std::string> exampleDesigns()
{
    std::vector<std::string> files;
    for (const auto &e : fs::directory_iterator(kDesignsDir))
        if (e.path().extension() == ".loopsketch")
            files.push_back(e.path().filename().string());
    std::sort(files.begin(), files.end());
    return files;
}

Analysis coreAnalysis(const Design &d)
{
    auto a = analyze(d);
    EXPECT_TRUE(a.ok()) << a.errorText();
    return a.ok() ? *a : Analysis{};
}

Analysis coreAnalysisOfFile(const fs::path &path)
{
    auto d = loadDesign(path.string());
    EXPECT_TRUE(d.ok()) << d.errorText();
    return d.ok() ? coreAnalysis(*d) : Analysis{};
}

double relErr(double value, double expected)
{
    return std::abs(value - expected) / std::abs(expected);
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

std::string testName(const std::string &file)
{
    std::string name = file.substr(0, file.find('.'));
    for (char &ch : name)
        ch = std::isalnum(static_cast<unsigned char>(ch)) ? ch : 'X';
    return name;
}

// ----- malformed files --------------------------------------------------------------------

struct MalformedCase
{
    std::string file;
    std::string expected;
};

std::vector<MalformedCase> malformedCases()
{
    std::vector<MalformedCase> cases;
    std::ifstream in(kMalformedDir / "expected.tsv");
    std::string line;
    while (std::getline(in, line)) {
        if (line.empty() || line.front() == '#')
            continue;
        const auto tab = line.find('\t');
        if (tab == std::string::npos)
            continue;
        cases.push_back({line.substr(0, tab), line.substr(tab + 1)});
    }
    return cases;
}

class CliMalformed : public ::testing::TestWithParam<MalformedCase>
{
};

// Exit codes and messages: DESIGN.md §6 (0 ok, 2 bad input naming file, part and field).
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
                         [](const auto &row) { return testName(row.param.file); });

TEST(Cli, MalformedListCoversTheDirectory)
{
    const auto cases = malformedCases();
    EXPECT_GE(cases.size(), 40u);
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
    std::string text = readText(kDesignsDir / "demo.loopsketch");
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
    std::string text = readText(kDesignsDir / "demo.loopsketch");
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
    const Analysis a = coreAnalysisOfFile(path());
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

// Keys of schema loopsketch.analysis/1: DESIGN.md §6.
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
    const Analysis a = coreAnalysisOfFile(path());
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
}

TEST_P(CliExample, SweepCsvHasOneRowPerFrequencyAndTheExactGain)
{
    const Analysis a = coreAnalysisOfFile(path());
    ASSERT_FALSE(a.frequenciesHz.empty());
    ASSERT_EQ(a.curves.gainExact.size(), a.frequenciesHz.size());
    TempDir dir;
    const fs::path csv = dir.path() / "sweep.csv";
    const CliRun r = runCli({"sweep", path().string(), "--csv", csv.string()});
    ASSERT_TRUE(r.exited);
    ASSERT_EQ(r.exitCode, 0) << r.err;
    ASSERT_TRUE(fs::exists(csv));
    std::istringstream lines(readText(csv));
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

INSTANTIATE_TEST_SUITE_P(Resources, CliExample, ::testing::ValuesIn(exampleDesigns()),
                         [](const auto &row) { return testName(row.param); });

// ----- candidates -------------------------------------------------------------------------

Design withCandidate(Design d, const Candidate &c)
{
    for (const auto &[id, value] : c.values) {
        Part *p = d.findPart(id);
        EXPECT_NE(p, nullptr) << id;
        if (p)
            p->fields[std::string(p->primaryField())] = value;
    }
    return d;
}

TEST(Cli, CandidatesOfTheDemoChangeTheAnalysis)
{
    auto demo = loadDesign((kDesignsDir / "demo.loopsketch").string());
    ASSERT_TRUE(demo.ok()) << demo.errorText();
    ASSERT_GE(demo->candidates.size(), 2u);
    const Analysis base = coreAnalysis(*demo);
    ASSERT_TRUE(base.exact.gain);
    for (const Candidate &c : demo->candidates) {
        const Analysis expected = coreAnalysis(withCandidate(*demo, c));
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
    const Analysis a = coreAnalysis(*demo);
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
    const std::string before = readText(design);
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
        EXPECT_EQ(readText(design), before) << csv;
    }
    // the design read through the hard link, written through its first name
    const CliRun viaLink
        = runCli({"sweep", (dir.path() / "hard.csv").string(), "--csv", design.string()});
    EXPECT_EQ(viaLink.exitCode, 2) << viaLink.err;
    EXPECT_EQ(readText(design), before);
    // the JSON of analyze onto the design, through --out
    const CliRun json = runCli({"analyze", design.string(), "--json", "--out", design.string()});
    EXPECT_EQ(json.exitCode, 2) << json.err;
    EXPECT_EQ(readText(design), before);
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
    std::thread reader([&] { received = readText(fifo); });
    const CliRun r = runCli({"sweep", "demo", "--csv", fifo.string()});
    // should the program have failed before opening the FIFO, release the waiting reader
    if (const int fd = ::open(fifo.c_str(), O_WRONLY | O_NONBLOCK); fd >= 0)
        ::close(fd);
    reader.join();
    ASSERT_TRUE(r.exited);
    EXPECT_EQ(r.exitCode, 0) << r.err;
    const Analysis a = coreAnalysis(*parseDesign(readText(kDesignsDir / "demo.loopsketch")));
    EXPECT_TRUE(received == sweepToCsv(a)) << received.size() << " bytes received";
    EXPECT_TRUE(fs::is_fifo(fs::symlink_status(fifo)));
    EXPECT_EQ(entriesOf(dir.path()), "sweep.fifo");
}

TEST(CliOutputs, DashIsStandardOutputForCsvAndJson)
{
    const CliRun csv = runCli({"sweep", "demo", "--csv", "-"});
    ASSERT_TRUE(csv.exited);
    EXPECT_EQ(csv.exitCode, 0) << csv.err;
    const Analysis a = coreAnalysis(*parseDesign(readText(kDesignsDir / "demo.loopsketch")));
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
    const std::string before = readText(design);
    for (const std::string &args : {" sweep " + shellQuoted(design.string()) + " --csv - >>",
                                    " analyze " + shellQuoted(design.string()) + " --json >>"}) {
        const std::string cmd
            = shellQuoted(kCli.string()) + args + shellQuoted(design.string()) + " 2>/dev/null";
        const int status = std::system(cmd.c_str());
        ASSERT_TRUE(WIFEXITED(status));
        EXPECT_EQ(WEXITSTATUS(status), 2) << args;
        EXPECT_EQ(readText(design), before) << args;
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
    EXPECT_EQ(readText(rc), "0\n");
    const Analysis a = coreAnalysis(*parseDesign(readText(kDesignsDir / "demo.loopsketch")));
    EXPECT_TRUE(readText(piped) == sweepToCsv(a)) << readText(piped).size() << " bytes";

    const fs::path redirected = dir.path() / "redirected.csv";
    const std::string header = "written by the shell first\n";
    {
        std::ofstream out(redirected, std::ios::binary);
        out << header;
    }
    const std::string append = shellQuoted(kCli.string()) + " sweep demo --csv /dev/stdout >>"
        + shellQuoted(redirected.string());
    ASSERT_EQ(std::system(append.c_str()), 0);
    EXPECT_TRUE(readText(redirected) == header + sweepToCsv(a));
    EXPECT_EQ(entriesOf(dir.path()), "piped.csv rc redirected.csv");
}

TEST(CliOutputs, JsonOutWritesTheFileAndNothingOnStandardOutput)
{
    TempDir dir;
    const fs::path file = dir.path() / "a.json";
    const CliRun r = runCli({"analyze", "demo", "--json", "--out", file.string()});
    EXPECT_EQ(r.exitCode, 0) << r.err;
    EXPECT_TRUE(r.out.empty());
    EXPECT_EQ(readText(file), runCli({"analyze", "demo", "--json"}).out);
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
    std::string text = readText(kDesignsDir / "demo.loopsketch");
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
    std::string text = readText(kDesignsDir / "demo.loopsketch");
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
