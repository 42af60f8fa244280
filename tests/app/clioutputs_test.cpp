// Where the command line writes: never over its input, devices and FIFOs written directly,
// "-" standard output, and a failed write leaves nothing behind.

#include "loopsketch/analysis/analysis.h"
#include "loopsketch/design/designfile.h"

#include "clitest.h"
#include "designs.h"
#include "faultinjection.h"
#include "files.h"

#include <gmock/gmock.h>
#include <gtest/gtest.h>
#include <nlohmann/json.hpp>

#include <fcntl.h>
#include <sys/stat.h>
#include <sys/wait.h>
#include <unistd.h>

#include <filesystem>
#include <fstream>
#include <string>
#include <thread>
#include <vector>

using namespace loopsketch;
using namespace loopsketch::test;

namespace {

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

} // namespace
