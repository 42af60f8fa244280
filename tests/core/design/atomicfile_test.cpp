// Saves that fail for reasons outside the program (a full disk, a read-only file system)
// must lose nothing: the previous file stays byte-identical, no temporary file is left
// behind and the message names the path. The faults are real ones made in a forked child
// (faultinjection.h): a 64 KiB tmpfs that runs out of space and a tmpfs remounted read-only,
// which refuses root too. The expected behaviour is Loopsketch's own save contract
// (core/README.md §1, atomic replace); errno texts are glibc's strerror wording.

#include "faultinjection.h"
#include "files.h"

#include "loopsketch/design/atomicfile.h"
#include "loopsketch/design/design.h"
#include "loopsketch/design/designfile.h"

#include <gmock/gmock.h>
#include <gtest/gtest.h>

#include <csignal>
#include <filesystem>
#include <fstream>
#include <initializer_list>
#include <set>
#include <sstream>
#include <thread>
#include <vector>

#include <sys/resource.h>
#include <sys/stat.h>

using namespace loopsketch;
using ::testing::HasSubstr;

namespace fs = std::filesystem;

using namespace loopsketch::test;

namespace {

const fs::path kDemo = fs::path(LOOPSKETCH_DESIGNS_DIR) / "demo.loopsketch";
const std::string kOriginal = "previous contents, must survive\n";

/// In the child: `target` holding the previous contents on a 64 KiB tmpfs at `mount` filled by
/// `filler` to all but one page. 0 when ready, else the child's exit code (see
/// prepareSmallMount).
int prepareFullDisk(const fs::path &mount, const fs::path &target, const fs::path &filler,
                    std::string &out)
{
    if (const int failed
        = prepareSmallMount(mount.string(), 64 * 1024, target.string(), kOriginal, out))
        return failed;
    if (auto why = fillAllButOnePage(filler.string()); !why.empty()) {
        out = why;
        return 3;
    }
    return 0;
}

/// The child's save failed naming `target` and every one of `reasons`, the previous file is
/// byte-identical and the folder holds `entries` (no temporary file left behind).
void expectRefusedAndKept(const std::string &report, const fs::path &target,
                          std::initializer_list<const char *> reasons, const std::string &entries)
{
    const std::string error = fieldOf(report, "error");
    EXPECT_THAT(error, HasSubstr(target.string()));
    for (const char *reason : reasons)
        EXPECT_THAT(error, HasSubstr(reason));
    EXPECT_EQ(fieldOf(report, "content"), kOriginal);
    EXPECT_EQ(fieldOf(report, "entries"), entries) << "the temporary file must be removed";
}

TEST(AtomicSaveFaults, FullDiskMidFileKeepsThePreviousFileAndLeavesNoTemporary)
{
    TempDir dir;
    const fs::path mount = dir.path() / "small";
    fs::create_directory(mount);
    const fs::path target = mount / "keep.loopsketch";
    // five pages and a bit: with one page free, the first write() is short, the next fails
    const std::string text(5 * 4096 + 321, 'x');

    const auto outcome = test::runInChild([&](std::string &out) {
        const fs::path filler = mount / "filler";
        if (const int failed = prepareFullDisk(mount, target, filler, out))
            return failed;
        struct statvfs info
        {
        };
        ::statvfs(mount.c_str(), &info);

        const auto failed = writeFileAtomically(target.string(), text);
        out += field("error", failed.ok() ? "" : failed.errorText());
        out += field("content", readBytes(target));
        out += field("entries", entriesOf(mount));
        out += field("freeBytes", std::to_string(info.f_bavail * info.f_frsize));

        // With the space back the same save succeeds: the failure was the full disk.
        fs::remove(filler);
        const auto retried = writeFileAtomically(target.string(), text);
        out += field("retry", retried.ok() ? "ok" : retried.errorText());
        out += field("retryContentMatches", readBytes(target) == text ? "yes" : "no");
        return 0;
    });
    if (outcome.exitCode == test::kChildCannotInject)
        GTEST_SKIP() << "no private small file system on this machine: " << outcome.output;
    ASSERT_EQ(outcome.exitCode, 0) << outcome.output;

    EXPECT_EQ(fieldOf(outcome.output, "freeBytes"), "4096");
    expectRefusedAndKept(outcome.output, target, {"write failed", "No space left on device"},
                         "filler keep.loopsketch");
    EXPECT_EQ(fieldOf(outcome.output, "retry"), "ok");
    EXPECT_EQ(fieldOf(outcome.output, "retryContentMatches"), "yes");
}

TEST(AtomicSaveFaults, ReadOnlyFileSystemRefusesEvenRootAndKeepsTheFile)
{
    TempDir dir;
    const fs::path mount = dir.path() / "ro";
    fs::create_directory(mount);
    const fs::path target = mount / "keep.loopsketch";
    const auto design = loadDesign(kDemo.string());
    ASSERT_TRUE(design.ok()) << design.errorText();

    const auto outcome = test::runInChild([&](std::string &out) {
        if (const int failed
            = prepareSmallMount(mount.string(), 64 * 1024, target.string(), kOriginal, out))
            return failed;
        if (auto why = test::remountReadOnly(mount.string()); !why.empty()) {
            out = why;
            return test::kChildCannotInject;
        }
        const auto failed = saveDesign(*design, target.string());
        out += field("error", failed.ok() ? "" : failed.errorText());
        out += field("content", readBytes(target));
        out += field("entries", entriesOf(mount));
        out += field("euid", std::to_string(::geteuid()));
        return 0;
    });
    if (outcome.exitCode == test::kChildCannotInject)
        GTEST_SKIP() << "no private read-only mount on this machine: " << outcome.output;
    ASSERT_EQ(outcome.exitCode, 0) << outcome.output;

    // inside the namespace the writer is root (real root, or root of a user namespace)
    EXPECT_EQ(fieldOf(outcome.output, "euid"), "0");
    expectRefusedAndKept(outcome.output, target,
                         {"cannot create a temporary file", "Read-only file system"},
                         "keep.loopsketch");
}

TEST(AtomicSaveFaults, ProcIsUnwritableForRootTooAndItsFilesStay)
{
    // /proc takes no new files from anyone, so this holds when the tests run as root (CI).
    const fs::path existing = "/proc/version";
    if (!fs::exists(existing))
        GTEST_SKIP() << "no /proc/version (procfs not mounted)";
    const std::string before = readBytes(existing);
    const auto design = loadDesign(kDemo.string());
    ASSERT_TRUE(design.ok()) << design.errorText();

    const auto over = saveDesign(*design, existing.string());
    ASSERT_FALSE(over.ok());
    EXPECT_THAT(over.errorText(), HasSubstr(existing.string()));
    EXPECT_THAT(over.errorText(), HasSubstr("cannot create a temporary file in /proc"));
    EXPECT_EQ(readBytes(existing), before);

    const fs::path fresh = "/proc/loopsketch-save-check.loopsketch";
    const auto created = saveDesign(*design, fresh.string());
    ASSERT_FALSE(created.ok());
    EXPECT_THAT(created.errorText(), HasSubstr(fresh.string()));
    EXPECT_FALSE(fs::exists(fresh));
    for (const auto &e : fs::directory_iterator("/proc"))
        EXPECT_THAT(e.path().filename().string(), ::testing::Not(HasSubstr(".loopsketch")));
}

} // namespace

// ----- outputs: devices, FIFOs, standard output, links, and outputs that are inputs --------
// Loopsketch's own output contract (DEVELOPERS.md, "Outputs"); file types are POSIX's
// (stat(2): S_ISCHR, S_ISFIFO, S_ISLNK).

namespace {

bool isCharacterDevice(const fs::path &path)
{
    struct stat info
    {
    };
    return ::lstat(path.c_str(), &info) == 0 && S_ISCHR(info.st_mode);
}

std::string writeText(const fs::path &path, const std::string &text)
{
    std::ofstream out(path, std::ios::binary);
    out << text;
    return out.flush() ? "" : "cannot write " + path.string();
}

/// Names in /dev that look like a temporary file of ours (".null.XXXXXX").
std::vector<std::string> temporariesIn(const fs::path &dir, const std::string &stem)
{
    std::vector<std::string> found;
    for (const auto &e : fs::directory_iterator(dir))
        if (e.path().filename().string().rfind("." + stem + ".", 0) == 0)
            found.push_back(e.path().string());
    return found;
}

} // namespace

// The device tests write in a child whose /dev/null and /dev/full are protected mount points
// (test::isolateDeviceNodes): a writer that renamed over them would fail with EBUSY there
// instead of replacing the machine's device nodes.
TEST(OutputTargets, DevNullIsWrittenDirectlyAndStaysADevice)
{
    ASSERT_TRUE(isCharacterDevice("/dev/null"));
    const auto outcome = test::runInChild([&](std::string &out) {
        if (auto why = test::isolateDeviceNodes(); !why.empty()) {
            out = why;
            return test::kChildCannotInject;
        }
        const auto target = resolveOutput("/dev/null");
        out += field(
            "kind", target.ok() && target->kind == OutputTargetKind::Special ? "special" : "other");
        const auto written = writeFileAtomically("/dev/null", std::string(100000, 'x'));
        out += field("written", written.ok() ? "ok" : written.errorText());
        return 0;
    });
    if (outcome.exitCode == test::kChildCannotInject)
        GTEST_SKIP() << "cannot protect the device nodes here: " << outcome.output;
    ASSERT_EQ(outcome.exitCode, 0) << outcome.output;
    EXPECT_EQ(fieldOf(outcome.output, "kind"), "special");
    EXPECT_EQ(fieldOf(outcome.output, "written"), "ok");
    EXPECT_TRUE(isCharacterDevice("/dev/null")) << "a device must never be renamed over";
    EXPECT_TRUE(temporariesIn("/dev", "null").empty());
}

TEST(OutputTargets, DevFullReportsNoSpaceAndStaysADevice)
{
    // /dev/full: every write fails with ENOSPC (Linux null(4)/full(4) man page).
    if (!fs::exists("/dev/full"))
        GTEST_SKIP() << "no /dev/full on this machine";
    const auto outcome = test::runInChild([&](std::string &out) {
        if (auto why = test::isolateDeviceNodes(); !why.empty()) {
            out = why;
            return test::kChildCannotInject;
        }
        const auto written = writeFileAtomically("/dev/full", "some bytes\n");
        out = written.ok() ? "ok" : written.errorText();
        return 0;
    });
    if (outcome.exitCode == test::kChildCannotInject)
        GTEST_SKIP() << "cannot protect the device nodes here: " << outcome.output;
    ASSERT_EQ(outcome.exitCode, 0) << outcome.output;
    EXPECT_THAT(outcome.output, HasSubstr("/dev/full"));
    EXPECT_THAT(outcome.output, HasSubstr("No space left on device"));
    EXPECT_TRUE(isCharacterDevice("/dev/full"));
    EXPECT_TRUE(temporariesIn("/dev", "full").empty());
}

TEST(OutputTargets, FifoIsWrittenDirectlyToItsReader)
{
    TempDir dir;
    const fs::path fifo = dir.path() / "pipe.csv";
    ASSERT_EQ(::mkfifo(fifo.c_str(), 0600), 0) << std::strerror(errno);
    const std::string text = "f_hz,gain_db\n" + std::string(200000, '7') + "\n";
    std::string received;
    std::thread reader([&] {
        std::ifstream in(fifo, std::ios::binary);
        std::ostringstream s;
        s << in.rdbuf();
        received = s.str();
    });
    const auto written = writeFileAtomically(fifo.string(), text);
    // should the write have failed before opening the FIFO, release the waiting reader
    if (const int fd = ::open(fifo.c_str(), O_WRONLY | O_NONBLOCK); fd >= 0)
        ::close(fd);
    reader.join();
    EXPECT_TRUE(written.ok()) << written.errorText();
    EXPECT_EQ(received.size(), text.size());
    EXPECT_TRUE(received == text);
    EXPECT_TRUE(fs::is_fifo(fs::symlink_status(fifo)));
    EXPECT_EQ(entriesOf(dir.path()), "pipe.csv");
}

TEST(OutputTargets, DashIsStandardOutputOnlyWhereAllowed)
{
    const auto out = resolveOutput("-", true);
    ASSERT_TRUE(out.ok()) << out.errorText();
    EXPECT_EQ(out->kind, OutputTargetKind::Descriptor);
    const auto file = resolveOutput("-", false);
    ASSERT_TRUE(file.ok()) << file.errorText();
    EXPECT_EQ(file->kind, OutputTargetKind::NewFile);

    // In a child whose standard output is a file: the bytes arrive there whole.
    TempDir dir;
    const fs::path captured = dir.path() / "stdout";
    const std::string text = "a,b\n1,2\n";
    const auto outcome = test::runInChild([&](std::string &report) {
        const int fd = ::open(captured.c_str(), O_WRONLY | O_CREAT | O_TRUNC, 0644);
        if (fd < 0 || ::dup2(fd, STDOUT_FILENO) < 0) {
            report = test::osFailure("redirecting standard output");
            return 3;
        }
        ::close(fd);
        const auto written = writeOutput(*out, text);
        report = written.ok() ? "ok" : written.errorText();
        return 0;
    });
    ASSERT_EQ(outcome.exitCode, 0) << outcome.output;
    EXPECT_EQ(outcome.output, "ok");
    EXPECT_EQ(readBytes(captured), text);
}

TEST(OutputTargets, StandardOutputOnAFullDeviceIsAnError)
{
    if (!fs::exists("/dev/full"))
        GTEST_SKIP() << "no /dev/full on this machine";
    const auto out = resolveOutput("-", true);
    ASSERT_TRUE(out.ok());
    const auto outcome = test::runInChild([&](std::string &report) {
        const int fd = ::open("/dev/full", O_WRONLY);
        if (fd < 0 || ::dup2(fd, STDOUT_FILENO) < 0) {
            report = test::osFailure("redirecting standard output");
            return 3;
        }
        const auto written = writeOutput(*out, "x\n");
        report = written.ok() ? "ok" : written.errorText();
        return 0;
    });
    ASSERT_EQ(outcome.exitCode, 0) << outcome.output;
    EXPECT_THAT(outcome.output, HasSubstr("standard output"));
    EXPECT_THAT(outcome.output, HasSubstr("No space left on device"));
}

TEST(OutputTargets, SymbolicLinkStaysALinkAndItsFileIsReplaced)
{
    TempDir dir;
    const fs::path real = dir.path() / "real.csv", link = dir.path() / "link.csv";
    ASSERT_EQ(writeText(real, kOriginal), "");
    fs::create_symlink("real.csv", link);
    const auto written = writeFileAtomically(link.string(), "new\n");
    ASSERT_TRUE(written.ok()) << written.errorText();
    EXPECT_TRUE(fs::is_symlink(fs::symlink_status(link)));
    EXPECT_EQ(readBytes(real), "new\n");
    EXPECT_EQ(entriesOf(dir.path()), "link.csv real.csv");
}

TEST(OutputTargets, DirectoryAndMissingFolderAreRefusedNamingThePath)
{
    TempDir dir;
    const auto directory = resolveOutput(dir.path().string());
    ASSERT_FALSE(directory.ok());
    EXPECT_THAT(directory.errorText(), HasSubstr(dir.path().string()));
    EXPECT_THAT(directory.errorText(), HasSubstr("directory"));
    const std::string missing = (dir.path() / "no-such" / "x.csv").string();
    const auto inMissing = resolveOutput(missing);
    ASSERT_FALSE(inMissing.ok());
    EXPECT_THAT(inMissing.errorText(), HasSubstr(missing));
    EXPECT_THAT(inMissing.errorText(), HasSubstr("No such file or directory"));
}

class OutputsApart : public ::testing::Test
{
protected:
    void SetUp() override { ASSERT_EQ(writeText(input, kOriginal), ""); }

    /// The diagnostics of checking `outputs` against the input, or "ok".
    std::string check(const std::vector<std::string> &outputs)
    {
        std::vector<OutputTarget> targets;
        for (const auto &o : outputs) {
            auto t = resolveOutput(o, true);
            if (!t)
                return "resolve: " + t.errorText();
            targets.push_back(*t);
        }
        auto apart = checkOutputsApart({input.string()}, targets);
        return apart.ok() ? "ok" : apart.errorText();
    }

    TempDir dir;
    fs::path input = dir.path() / "a.loopsketch";
};

TEST_F(OutputsApart, SamePathIsRefused)
{
    const std::string why = check({input.string()});
    EXPECT_THAT(why, HasSubstr("refused"));
    EXPECT_THAT(why, HasSubstr(input.string()));
}

TEST_F(OutputsApart, OtherSpellingIsRefused)
{
    const fs::path sub = dir.path() / "sub";
    fs::create_directory(sub);
    EXPECT_THAT(check({(sub / ".." / "." / "a.loopsketch").string()}), HasSubstr("refused"));
}

TEST_F(OutputsApart, HardLinkAndSymbolicLinkAreRefused)
{
    fs::create_hard_link(input, dir.path() / "hard.csv");
    fs::create_symlink(input, dir.path() / "soft.csv");
    EXPECT_THAT(check({(dir.path() / "hard.csv").string()}), HasSubstr("refused"));
    EXPECT_THAT(check({(dir.path() / "soft.csv").string()}), HasSubstr("refused"));
}

TEST_F(OutputsApart, TwoOutputsNamingOneFileAreRefused)
{
    // a file that does not exist yet, spelt two ways
    const std::string a = (dir.path() / "out.csv").string();
    const std::string b = (dir.path() / "." / "out.csv").string();
    const std::string why = check({a, b});
    EXPECT_THAT(why, HasSubstr("two outputs"));
    EXPECT_THAT(check({"-", "-"}), HasSubstr("two outputs"));
    // an existing one through a hard link
    ASSERT_EQ(writeText(a, "old\n"), "");
    fs::create_hard_link(a, dir.path() / "other.csv");
    EXPECT_THAT(check({a, (dir.path() / "other.csv").string()}), HasSubstr("two outputs"));
}

TEST_F(OutputsApart, DistinctOutputsAndDevicesPass)
{
    EXPECT_EQ(check({(dir.path() / "x.csv").string(), (dir.path() / "x.pdf").string(), "-"}), "ok");
    EXPECT_EQ(check({"/dev/null", "/dev/null"}), "ok");
    EXPECT_EQ(readBytes(input), kOriginal);
}

TEST(AtomicSaveFaults, FileSizeLimitGivesAnErrorAndLeavesNoTemporary)
{
    // RLIMIT_FSIZE (setrlimit(2)): a write past the limit fails with EFBIG once SIGXFSZ is
    // ignored, as app/main.cpp does; without that the signal ends the process.
    TempDir dir;
    const fs::path target = dir.path() / "keep.loopsketch";
    ASSERT_EQ(writeText(target, kOriginal), "");
    const auto design = loadDesign(kDemo.string());
    ASSERT_TRUE(design.ok()) << design.errorText();
    const auto outcome = test::runInChild([&](std::string &out) {
        test::FileSizeLimit limit(512);
        if (!limit.ok()) {
            out = test::osFailure("setrlimit");
            return test::kChildCannotInject;
        }
        const auto failed = saveDesign(*design, target.string());
        out = failed.ok() ? "" : failed.errorText();
        return 0;
    });
    if (outcome.exitCode == test::kChildCannotInject)
        GTEST_SKIP() << outcome.output;
    ASSERT_EQ(outcome.exitCode, 0) << outcome.output;
    EXPECT_THAT(outcome.output, HasSubstr(target.string()));
    EXPECT_THAT(outcome.output, HasSubstr("write failed"));
    EXPECT_THAT(outcome.output, HasSubstr("File too large"));
    EXPECT_EQ(readBytes(target), kOriginal);
    EXPECT_EQ(entriesOf(dir.path()), "keep.loopsketch");
}

TEST(AtomicSaveFaults, FullDiskDesignSaveKeepsThePreviousDesign)
{
    TempDir dir;
    const fs::path mount = dir.path() / "small";
    fs::create_directory(mount);
    const fs::path target = mount / "keep.loopsketch";
    auto design = loadDesign(kDemo.string());
    ASSERT_TRUE(design.ok()) << design.errorText();
    // a design longer than the one page left: the notes carry 8 KiB of text
    Design big = *design;
    big.notes = std::string(8192, 'n');

    const auto outcome = test::runInChild([&](std::string &out) {
        const fs::path filler = mount / "filler";
        if (const int failed = prepareFullDisk(mount, target, filler, out))
            return failed;
        const auto failed = saveDesign(big, target.string());
        out += field("error", failed.ok() ? "" : failed.errorText());
        out += field("content", readBytes(target));
        out += field("entries", entriesOf(mount));
        return 0;
    });
    if (outcome.exitCode == test::kChildCannotInject)
        GTEST_SKIP() << "no private small file system on this machine: " << outcome.output;
    ASSERT_EQ(outcome.exitCode, 0) << outcome.output;
    expectRefusedAndKept(outcome.output, target, {"No space left on device"},
                         "filler keep.loopsketch");
}
