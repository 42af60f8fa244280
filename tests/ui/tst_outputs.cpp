// Every output of the command line loses nothing when the disk fills up or a file-size limit
// is hit: the CSV (sweep), the JSON (analyze --out), the review sheet (PDF) and the plots (SVG,
// PNG). Each case runs the real `loopsketch` in a forked child that holds a real fault:
// a 4 MiB tmpfs filled to its last page in a private mount namespace (ENOSPC part-way
// through a write), or RLIMIT_FSIZE with SIGXFSZ at its default action (what `ulimit -f`
// does: without the program ignoring the signal, it dies with exit 153). The previous file
// must stay byte-identical, the exit code be 2, the message name the path and the reason, and
// no temporary file remain. Also: an export onto its own design file, or with two outputs
// naming one file, is refused before any work; a device is written, never replaced.
// The expected behaviour is Loopsketch's own output contract (DEVELOPERS.md, "Outputs");
// errno texts are glibc's strerror wording; /dev/full's ENOSPC is Linux's full(4).

#include "faultinjection.h"

#include "clirunner.h"
#include "sheet/reviewsheet.h"

#include <gmock/gmock.h>
#include <gtest/gtest.h>

#include <csignal>
#include <cstdlib>
#include <filesystem>
#include <fstream>
#include <set>
#include <sstream>
#include <string>
#include <vector>

#include <sys/resource.h>
#include <sys/stat.h>
#include <sys/wait.h>

using namespace loopsketch;
using ::testing::HasSubstr;
namespace fs = std::filesystem;

using namespace loopsketch::test;

namespace {

const std::string kCli = LOOPSKETCH_BIN;
const std::string kDemo = LOOPSKETCH_DESIGNS_DIR "/demo.loopsketch";
const std::string kPrevious = "previous output, must survive\n";

/// Set in main(): empty when this process runs in a private mount namespace whose /dev/null
/// and /dev/full are protected mount points (test::isolateDeviceNodes), else why not. Tests
/// that hand a device to the program skip without it, so that a faulty program can never
/// replace the machine's device nodes.
std::string g_devicesUnprotected = "not set up";

/// Runs the program with `args`; its standard output and error go to files in `scratch`.
CliRun runCli(const std::vector<std::string> &args, const fs::path &scratch)
{
    return test::runProgram(kCli, args, scratch);
}

// ----- every output kind under a full disk and a file-size limit ---------------------------

struct OutputCase
{
    const char *name;
    /// The command line writing into `dir`; the file checked is `dir/target`.
    std::vector<std::string> (*args)(const std::string &dir);
    const char *target;
};

std::string plotFile(ui::PlotFormat format)
{
    return (ui::sheetPlotFileStem(ui::kSheetPlots[0]) + ui::plotFileSuffix(format)).toStdString();
}

const OutputCase kOutputCases[] = {
    {"Csv",
     [](const std::string &d) -> std::vector<std::string> {
         return {"sweep", kDemo, "--csv", d + "/out.csv"};
     },
     "out.csv"},
    {"Json",
     [](const std::string &d) -> std::vector<std::string> {
         return {"analyze", kDemo, "--json", "--out", d + "/out.json"};
     },
     "out.json"},
    {"Pdf",
     [](const std::string &d) -> std::vector<std::string> {
         return {"export", kDemo, "--pdf", d + "/out.pdf", "--spread-trials", "0"};
     },
     "out.pdf"},
    // the sheet goes to /dev/null (a device, written directly), the plots into the fault
    {"Svg",
     [](const std::string &d) -> std::vector<std::string> {
         return {"export", kDemo, "--pdf", "/dev/null", "--spread-trials", "0", "--svg", d};
     },
     nullptr},
    {"Png",
     [](const std::string &d) -> std::vector<std::string> {
         return {"export", kDemo, "--pdf", "/dev/null", "--spread-trials", "0", "--png", d};
     },
     nullptr},
};

void PrintTo(const OutputCase &c, std::ostream *os)
{
    *os << c.name;
}

std::string targetOf(const OutputCase &c)
{
    if (c.target)
        return c.target;
    return plotFile(std::string(c.name) == "Svg" ? ui::PlotFormat::Svg : ui::PlotFormat::Png);
}

class OutputFaults : public ::testing::TestWithParam<OutputCase>
{
protected:
    void SetUp() override
    {
        if (!GetParam().target && !g_devicesUnprotected.empty())
            GTEST_SKIP() << "cannot protect the device nodes here: " << g_devicesUnprotected;
    }

    /// A new folder `name` in the test's directory.
    fs::path makeFolder(const char *name) const
    {
        const fs::path folder = dir.path() / name;
        fs::create_directory(folder);
        return folder;
    }

    TempDir dir;
};

TEST_P(OutputFaults, FullDiskGivesExitTwoAndKeepsThePreviousFile)
{
    const OutputCase &c = GetParam();
    const fs::path mount = makeFolder("small");
    const fs::path target = mount / targetOf(c);

    const auto outcome = test::runInChild([&](std::string &out) {
        // room for every output once the filler is gone (the sweep CSV is about 200 KB)
        if (const int failed = test::prepareSmallMount(mount.string(), 4 * 1024 * 1024,
                                                       target.string(), kPrevious, out))
            return failed;
        // the first write() of any output longer than a page is short, the next one fails
        const fs::path filler = mount / "filler";
        if (auto why = test::fillAllButOnePage(filler.string()); !why.empty()) {
            out = why;
            return 3;
        }
        const CliRun r = runCli(c.args(mount.string()), dir.path());
        out += field("exit", std::to_string(r.exitCode));
        out += field("err", r.err);
        out += field("content", readBytes(target));
        out += field("entries", entriesOf(mount));
        // With the space back the same command writes the whole output.
        fs::remove(filler);
        const CliRun again = runCli(c.args(mount.string()), dir.path());
        out += field("retryExit", std::to_string(again.exitCode));
        out += field("retryErr", again.err);
        out += field("retrySize", std::to_string(fs::file_size(target)));
        return 0;
    });
    if (outcome.exitCode == test::kChildCannotInject)
        GTEST_SKIP() << "no private small file system on this machine: " << outcome.output;
    ASSERT_EQ(outcome.exitCode, 0) << outcome.output;

    const std::string err = fieldOf(outcome.output, "err");
    EXPECT_EQ(fieldOf(outcome.output, "exit"), "2") << err;
    EXPECT_THAT(err, HasSubstr(target.string()));
    EXPECT_THAT(err, HasSubstr("No space left on device"));
    EXPECT_EQ(fieldOf(outcome.output, "content"), kPrevious);
    EXPECT_EQ(fieldOf(outcome.output, "entries"), "filler " + targetOf(c))
        << "no temporary file may stay behind";
    EXPECT_EQ(fieldOf(outcome.output, "retryExit"), "0") << fieldOf(outcome.output, "retryErr");
    EXPECT_GT(std::stoul(fieldOf(outcome.output, "retrySize")), 4096u);
}

TEST_P(OutputFaults, FileSizeLimitGivesExitTwoNotASignalAndLeavesNoTemporary)
{
    const OutputCase &c = GetParam();
    const fs::path out = makeFolder("out");
    const fs::path target = out / targetOf(c);
    ASSERT_TRUE(writeBytes(target, kPrevious));

    const auto outcome = test::runInChild([&](std::string &report) {
        // what `ulimit -f 4` does in a shell, with the signal at its default action
        test::FileSizeLimit limit(4096);
        if (!limit.ok()) {
            report = test::osFailure("setrlimit");
            return test::kChildCannotInject;
        }
        std::signal(SIGXFSZ, SIG_DFL);
        const CliRun r = runCli(c.args(out.string()), dir.path());
        report += field("exit", std::to_string(r.exitCode));
        report += field("err", r.err);
        return 0;
    });
    if (outcome.exitCode == test::kChildCannotInject)
        GTEST_SKIP() << outcome.output;
    ASSERT_EQ(outcome.exitCode, 0) << outcome.output;

    const std::string err = fieldOf(outcome.output, "err");
    EXPECT_EQ(fieldOf(outcome.output, "exit"), "2") << "153 is death by SIGXFSZ; " << err;
    EXPECT_THAT(err, HasSubstr(target.string()));
    EXPECT_THAT(err, HasSubstr("File too large"));
    EXPECT_EQ(readBytes(target), kPrevious);
    EXPECT_EQ(entriesOf(out), targetOf(c)) << "no temporary file may stay behind";
}

INSTANTIATE_TEST_SUITE_P(Kinds, OutputFaults, ::testing::ValuesIn(kOutputCases),
                         [](const auto &p) { return std::string(p.param.name); });

// ----- outputs that would clobber the input or each other ----------------------------------

TEST(ExportOutputs, SheetOntoItsOwnDesignIsRefusedBeforeAnyWork)
{
    if (!g_devicesUnprotected.empty())
        GTEST_SKIP() << "cannot protect the device nodes here: " << g_devicesUnprotected;
    TempDir dir;
    const fs::path design = dir.path() / "b.loopsketch";
    fs::copy_file(kDemo, design);
    const std::string before = readBytes(design);
    fs::create_directory(dir.path() / "sub");
    fs::create_hard_link(design, dir.path() / "linked.pdf");
    for (const std::string &pdf :
         {design.string(), (dir.path() / "sub" / ".." / "b.loopsketch").string(),
          (dir.path() / "linked.pdf").string()}) {
        const CliRun r = runCli({"export", design.string(), "--pdf", pdf}, dir.path());
        EXPECT_EQ(r.exitCode, 2) << pdf << ": " << r.err;
        EXPECT_THAT(r.err, HasSubstr("refused"));
        EXPECT_THAT(r.err, HasSubstr(pdf));
        EXPECT_EQ(readBytes(design), before) << pdf;
    }
    // a plot file that is the design: --svg into the design's folder with a design named as
    // the first plot
    const fs::path plotNamed = dir.path() / plotFile(ui::PlotFormat::Svg);
    fs::copy_file(kDemo, plotNamed);
    const CliRun r
        = runCli({"export", plotNamed.string(), "--pdf", "/dev/null", "--svg", dir.path().string()},
                 dir.path());
    EXPECT_EQ(r.exitCode, 2) << r.err;
    EXPECT_THAT(r.err, HasSubstr("refused"));
    EXPECT_EQ(readBytes(plotNamed), before);
}

TEST(ExportOutputs, TwoOutputsNamingOneFileAreRefusedAndNothingIsWritten)
{
    TempDir dir;
    const fs::path work = dir.path() / "work";
    fs::create_directory(work);
    const std::string pdf = (work / "x.out").string();
    const CliRun r = runCli(
        {"export", kDemo, "--pdf", pdf, "--csv", (work / "." / "x.out").string()}, dir.path());
    EXPECT_EQ(r.exitCode, 2) << r.err;
    EXPECT_THAT(r.err, HasSubstr("two outputs"));
    EXPECT_EQ(entriesOf(work), "");
}

TEST(ExportOutputs, SheetToDevFullIsAnErrorAndTheDeviceStays)
{
    if (!g_devicesUnprotected.empty())
        GTEST_SKIP() << "cannot protect the device nodes here: " << g_devicesUnprotected;
    if (!fs::exists("/dev/full"))
        GTEST_SKIP() << "no /dev/full on this machine";
    TempDir dir;
    const CliRun r
        = runCli({"export", kDemo, "--pdf", "/dev/full", "--spread-trials", "0"}, dir.path());
    EXPECT_EQ(r.exitCode, 2) << r.err;
    EXPECT_THAT(r.err, HasSubstr("/dev/full"));
    EXPECT_THAT(r.err, HasSubstr("No space left on device"));
    struct stat info
    {
    };
    ASSERT_EQ(::lstat("/dev/full", &info), 0);
    EXPECT_TRUE(S_ISCHR(info.st_mode));
}

TEST(ExportOutputs, CsvDashGoesToStandardOutput)
{
    if (!g_devicesUnprotected.empty())
        GTEST_SKIP() << "cannot protect the device nodes here: " << g_devicesUnprotected;
    TempDir dir;
    const fs::path file = dir.path() / "sweep.csv";
    const CliRun toFile = runCli({"sweep", kDemo, "--csv", file.string()}, dir.path());
    ASSERT_EQ(toFile.exitCode, 0) << toFile.err;
    const CliRun r = runCli(
        {"export", kDemo, "--pdf", "/dev/null", "--spread-trials", "0", "--csv", "-"}, dir.path());
    EXPECT_EQ(r.exitCode, 0) << r.err;
    EXPECT_EQ(r.out, readBytes(file));
    EXPECT_FALSE(fs::exists(dir.path() / "-"));
}

} // namespace

int main(int argc, char **argv)
{
    ::testing::InitGoogleTest(&argc, argv);
    // still single-threaded, as unshare() into a user namespace requires
    if (!GTEST_FLAG_GET(list_tests))
        g_devicesUnprotected = test::isolateDeviceNodes();
    return RUN_ALL_TESTS();
}
