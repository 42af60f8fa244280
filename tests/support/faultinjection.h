#pragma once

// Test-only fault injection for saves. A forked child gets a private mount namespace in
// which a tiny tmpfs (a genuinely full disk) or a read-only remount (refused to root as
// well, unlike file modes) can be made without touching the machine's own mounts; the
// mounts vanish with the child.

#include <cerrno>
#include <csignal>
#include <cstring>
#include <fstream>
#include <functional>
#include <sstream>
#include <string>

#include <fcntl.h>
#include <sched.h>
#include <sys/mount.h>
#include <sys/resource.h>
#include <sys/statvfs.h>
#include <sys/wait.h>
#include <unistd.h>

namespace loopsketch::test {

inline std::string osFailure(const std::string &what)
{
    return what + ": " + std::strerror(errno);
}

/// A file-size limit for this process while it lives (RLIMIT_FSIZE, setrlimit(2)): a write
/// past `bytes` fails part-way with EFBIG, SIGXFSZ ignored, as on a disk that fills up during
/// a save. lift() or the destructor brings the previous limit and handler back.
class FileSizeLimit
{
public:
    explicit FileSizeLimit(rlim_t bytes)
    {
        m_haveOld = ::getrlimit(RLIMIT_FSIZE, &m_old) == 0;
        m_oldHandler = std::signal(SIGXFSZ, SIG_IGN);
        rlimit small = m_old;
        small.rlim_cur = bytes;
        m_ok = m_haveOld && ::setrlimit(RLIMIT_FSIZE, &small) == 0;
    }
    ~FileSizeLimit() { lift(); }
    FileSizeLimit(const FileSizeLimit &) = delete;
    FileSizeLimit &operator=(const FileSizeLimit &) = delete;

    /// Whether the limit is in force.
    bool ok() const { return m_ok; }
    void lift()
    {
        if (m_lifted)
            return;
        m_lifted = true;
        if (m_haveOld)
            ::setrlimit(RLIMIT_FSIZE, &m_old);
        std::signal(SIGXFSZ, m_oldHandler);
    }

private:
    rlimit m_old{};
    bool m_haveOld = false;
    bool m_ok = false;
    bool m_lifted = false;
    void (*m_oldHandler)(int) = nullptr;
};

inline bool writeWholeFile(const char *path, const std::string &text)
{
    const int fd = ::open(path, O_WRONLY);
    if (fd < 0)
        return false;
    const bool ok = ::write(fd, text.data(), text.size()) == static_cast<ssize_t>(text.size());
    return ::close(fd) == 0 && ok;
}

/// Moves the calling single-threaded process into a private mount namespace (through a user
/// namespace that maps the caller to root when it is not root). Empty on success, else why not.
inline std::string enterPrivateMountNamespace()
{
    if (::geteuid() != 0) {
        const std::string uid = std::to_string(::geteuid());
        const std::string gid = std::to_string(::getegid());
        if (::unshare(CLONE_NEWUSER | CLONE_NEWNS) != 0)
            return osFailure("unshare(CLONE_NEWUSER | CLONE_NEWNS)");
        if (!writeWholeFile("/proc/self/setgroups", "deny")
            || !writeWholeFile("/proc/self/uid_map", "0 " + uid + " 1")
            || !writeWholeFile("/proc/self/gid_map", "0 " + gid + " 1"))
            return osFailure("mapping the user namespace");
    } else if (::unshare(CLONE_NEWNS) != 0) {
        return osFailure("unshare(CLONE_NEWNS)");
    }
    // without this a shared root would propagate the test's mounts back to the machine
    if (::mount(nullptr, "/", nullptr, MS_REC | MS_PRIVATE, nullptr) != 0)
        return osFailure("making / private");
    return {};
}

/// For tests that write to device nodes: a private mount namespace in which /dev/null and
/// /dev/full are bind-mounted onto themselves. A rename or unlink over a mount point fails with
/// EBUSY, so a faulty writer gets an error here instead of replacing the machine's device
/// nodes with regular files (as root it could). Empty on success, else why not.
inline std::string isolateDeviceNodes()
{
    if (auto why = enterPrivateMountNamespace(); !why.empty())
        return why;
    for (const char *node : {"/dev/null", "/dev/full"}) {
        if (::mount(node, node, nullptr, MS_BIND, nullptr) != 0)
            return osFailure(std::string("bind-mounting ") + node + " onto itself");
    }
    return {};
}

/// Mounts a tmpfs of `bytes` (rounded up to pages by the kernel) on `dir`.
inline std::string mountSmallTmpfs(const std::string &dir, std::size_t bytes)
{
    const std::string options = "size=" + std::to_string(bytes) + ",mode=0755";
    if (::mount("loopsketch-test", dir.c_str(), "tmpfs", MS_NOSUID | MS_NODEV, options.c_str())
        != 0)
        return osFailure("mounting a tmpfs on " + dir);
    return {};
}

/// Remounts the file system on `dir` read-only and confirms it with statvfs (ST_RDONLY).
inline std::string remountReadOnly(const std::string &dir)
{
    if (::mount(nullptr, dir.c_str(), nullptr, MS_REMOUNT | MS_RDONLY | MS_NOSUID | MS_NODEV,
                nullptr)
        != 0)
        return osFailure("remounting " + dir + " read-only");
    struct statvfs info
    {
    };
    if (::statvfs(dir.c_str(), &info) != 0)
        return osFailure("statvfs " + dir);
    if ((info.f_flag & ST_RDONLY) == 0)
        return dir + " is not read-only after the remount";
    return {};
}

/// What a forked child reported: its exit code (128 + signal when killed) and its text.
struct ChildOutcome
{
    int exitCode = -1;
    std::string output;
};

/// Exit code a child uses for "this machine cannot provide the fault"; the output says why.
constexpr int kChildCannotInject = 77;

/// Runs `body` in a forked child. The child writes its findings to `out` and returns its
/// exit code; the parent gets both. The parent's own mounts and limits stay untouched.
inline ChildOutcome runInChild(const std::function<int(std::string &out)> &body)
{
    int fds[2];
    if (::pipe(fds) != 0)
        return {-1, osFailure("pipe")};
    const pid_t pid = ::fork();
    if (pid < 0)
        return {-1, osFailure("fork")};
    if (pid == 0) {
        ::close(fds[0]);
        std::string out;
        int code = 3;
        try {
            code = body(out);
        } catch (const std::exception &e) {
            out = std::string("exception in the child: ") + e.what();
        }
        for (std::size_t done = 0; done < out.size();) {
            const ssize_t n = ::write(fds[1], out.data() + done, out.size() - done);
            if (n <= 0)
                break;
            done += static_cast<std::size_t>(n);
        }
        ::_exit(code);
    }
    ::close(fds[1]);
    ChildOutcome outcome;
    char buffer[4096];
    for (ssize_t n; (n = ::read(fds[0], buffer, sizeof buffer)) != 0;) {
        if (n < 0 && errno == EINTR)
            continue;
        if (n < 0)
            break;
        outcome.output.append(buffer, static_cast<std::size_t>(n));
    }
    ::close(fds[0]);
    int status = 0;
    while (::waitpid(pid, &status, 0) < 0 && errno == EINTR) { }
    outcome.exitCode = WIFEXITED(status) ? WEXITSTATUS(status) : 128 + WTERMSIG(status);
    return outcome;
}

/// One finding of a child for its report: "<key> <length>\n<bytes>\n", so any bytes survive.
inline std::string field(const std::string &key, const std::string &value)
{
    return key + " " + std::to_string(value.size()) + "\n" + value + "\n";
}

/// The finding `key` of a child's report made with field().
inline std::string fieldOf(const std::string &report, const std::string &key)
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

/// In a child: a private mount namespace with a tmpfs of `bytes` at `mount`, holding
/// `previous` as the file `target`. 0 when ready, else the child's exit code with the reason
/// in `out` (kChildCannotInject: no fault can be made on this machine, the test skips).
inline int prepareSmallMount(const std::string &mount, std::size_t bytes, const std::string &target,
                             const std::string &previous, std::string &out)
{
    if (auto why = enterPrivateMountNamespace(); !why.empty()) {
        out = why;
        return kChildCannotInject;
    }
    if (auto why = mountSmallTmpfs(mount, bytes); !why.empty()) {
        out = why;
        return kChildCannotInject;
    }
    std::ofstream file(target, std::ios::binary);
    file << previous;
    if (!file.flush()) {
        out = "cannot write the previous file";
        return 3;
    }
    return 0;
}

/// Fills the file system of `filler` (a new file) to its last byte, then gives one page back:
/// a write of more than a page is then short, and the one after it fails with ENOSPC. Empty
/// on success, else why not.
inline std::string fillAllButOnePage(const std::string &filler)
{
    const int fd = ::open(filler.c_str(), O_WRONLY | O_CREAT, 0644);
    if (fd < 0)
        return osFailure("creating the filler");
    const std::string page(4096, 'f');
    off_t size = 0;
    for (ssize_t n; (n = ::write(fd, page.data(), page.size())) > 0;)
        size += n;
    if (errno != ENOSPC) {
        ::close(fd);
        return osFailure("filling the tmpfs ended without ENOSPC");
    }
    if (::ftruncate(fd, size - 4096) != 0) {
        ::close(fd);
        return osFailure("ftruncate");
    }
    ::close(fd);
    return {};
}

} // namespace loopsketch::test
