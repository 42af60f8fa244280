// Saves that fail for reasons outside the program (a full disk, a read-only file system)
// must lose nothing: the previous file stays byte-identical, no temporary file is left
// behind and the message names the path. The faults are real ones made in a forked child
// (faultinjection.h): a 64 KiB tmpfs that runs out of space and a tmpfs remounted read-only,
// which refuses root too. The expected behaviour is Loopsketch's own save contract
// (DESIGN.md §4, atomic replace); errno texts are glibc's strerror wording.

#include "faultinjection.h"

#include "loopsketch/design.h"
#include "loopsketch/designfile.h"

#include <gmock/gmock.h>
#include <gtest/gtest.h>

#include <filesystem>
#include <fstream>
#include <set>
#include <sstream>

using namespace loopsketch;
using ::testing::HasSubstr;

namespace fs = std::filesystem;

namespace {

const fs::path kDemo = fs::path(LOOPSKETCH_DESIGNS_DIR) / "demo.loopsketch";
const std::string kOriginal = "previous contents, must survive\n";

std::string readBytes(const fs::path &path)
{
    std::ifstream in(path, std::ios::binary);
    std::ostringstream s;
    s << in.rdbuf();
    return s.str();
}

std::string entriesOf(const fs::path &dir)
{
    std::set<std::string> names;
    for (const auto &e : fs::directory_iterator(dir))
        names.insert(e.path().filename().string());
    std::string joined;
    for (const auto &n : names)
        joined += (joined.empty() ? "" : " ") + n;
    return joined;
}

class TempDir
{
public:
    TempDir()
    {
        std::string pattern = (fs::temp_directory_path() / "loopsketch-fault-XXXXXX").string();
        m_path = ::mkdtemp(pattern.data());
    }
    ~TempDir() { fs::remove_all(m_path); }
    const fs::path &path() const { return m_path; }

private:
    fs::path m_path;
};

/// The child's findings, one field per line group: "<key> <length>\n<bytes>\n".
std::string field(const std::string &key, const std::string &value)
{
    return key + " " + std::to_string(value.size()) + "\n" + value + "\n";
}

std::string fieldOf(const std::string &report, const std::string &key)
{
    std::istringstream in(report);
    std::string name;
    std::size_t size = 0;
    while (in >> name >> size) {
        in.get();
        std::string value(size, '\0');
        in.read(value.data(), static_cast<std::streamsize>(size));
        in.get();
        if (name == key)
            return value;
    }
    return "<no field " + key + ">";
}

/// Writes the previous version of the file inside the child's mount.
bool writePrevious(const fs::path &path)
{
    std::ofstream out(path, std::ios::binary);
    out << kOriginal;
    return bool(out.flush());
}

/// In the child: a private mount namespace with a 64 KiB tmpfs at `mount` holding the
/// previous version of `target`. 0 when ready, else the child's exit code with the reason in
/// `out` (test::kChildCannotInject: no fault can be made here, the test skips).
int prepareSmallMount(const fs::path &mount, const fs::path &target, std::string &out)
{
    if (auto why = test::enterPrivateMountNamespace(); !why.empty()) {
        out = why;
        return test::kChildCannotInject;
    }
    if (auto why = test::mountSmallTmpfs(mount.string(), 64 * 1024); !why.empty()) {
        out = why;
        return test::kChildCannotInject;
    }
    if (!writePrevious(target)) {
        out = "cannot write the previous file";
        return 3;
    }
    return 0;
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
        if (const int failed = prepareSmallMount(mount, target, out))
            return failed;
        // Fill the file system to the last byte, then give one page back.
        const fs::path filler = mount / "filler";
        const int fd = ::open(filler.c_str(), O_WRONLY | O_CREAT, 0644);
        const std::string page(4096, 'f');
        off_t size = 0;
        while (true) {
            const ssize_t n = ::write(fd, page.data(), page.size());
            if (n <= 0)
                break;
            size += n;
        }
        const int fillErrno = errno;
        if (fillErrno != ENOSPC) {
            out = test::osFailure("filling the tmpfs ended without ENOSPC");
            return 3;
        }
        if (::ftruncate(fd, size - 4096) != 0) {
            out = test::osFailure("ftruncate");
            return 3;
        }
        ::close(fd);
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
    const std::string error = fieldOf(outcome.output, "error");
    EXPECT_THAT(error, HasSubstr(target.string()));
    EXPECT_THAT(error, HasSubstr("write failed"));
    EXPECT_THAT(error, HasSubstr("No space left on device"));
    EXPECT_EQ(fieldOf(outcome.output, "content"), kOriginal);
    EXPECT_EQ(fieldOf(outcome.output, "entries"), "filler keep.loopsketch")
        << "the temporary file must be removed";
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
        if (const int failed = prepareSmallMount(mount, target, out))
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
    const std::string error = fieldOf(outcome.output, "error");
    EXPECT_THAT(error, HasSubstr(target.string()));
    EXPECT_THAT(error, HasSubstr("cannot create a temporary file"));
    EXPECT_THAT(error, HasSubstr("Read-only file system"));
    EXPECT_EQ(fieldOf(outcome.output, "content"), kOriginal);
    EXPECT_EQ(fieldOf(outcome.output, "entries"), "keep.loopsketch");
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
