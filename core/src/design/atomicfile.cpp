// Output files: atomic replacement of regular files (temporary file in the target's folder,
// size check, fsync, rename), direct writes to devices, FIFOs and standard output, and the
// check that a command's outputs are neither its inputs nor each other.

#include "loopsketch/design/atomicfile.h"

#include "loopsketch/design/designfile.h"

#include <cerrno>
#include <climits>
#include <cstdlib>
#include <cstring>
#include <filesystem>
#include <optional>
#include <string>
#include <utility>
#include <vector>

#include <fcntl.h>
#include <sys/stat.h>
#include <unistd.h>

namespace loopsketch {

namespace {

constexpr const char *kStandardOutputName = "standard output";

/// The descriptor a path names by itself ("/dev/stdout", "/dev/fd/3" ...), or -1.
int namedDescriptor(const std::string &path)
{
    if (path == "/dev/stdout")
        return STDOUT_FILENO;
    if (path == "/dev/stderr")
        return STDERR_FILENO;
    for (const std::string prefix : {"/dev/fd/", "/proc/self/fd/"}) {
        if (path.size() > prefix.size() && path.compare(0, prefix.size(), prefix) == 0) {
            const std::string digits = path.substr(prefix.size());
            if (digits.size() > 6 || digits.find_first_not_of("0123456789") != std::string::npos)
                return -1;
            return std::stoi(digits);
        }
    }
    return -1;
}

std::string descriptorName(const OutputTarget &t)
{
    return t.descriptor == STDOUT_FILENO ? std::string(kStandardOutputName) : t.path;
}

Diagnostic osError(const std::string &path, const std::string &what, int error)
{
    return Diagnostic{path, "", "", what + ": " + std::strerror(error)};
}

Diagnostic problem(const std::string &path, const std::string &what)
{
    return Diagnostic{path, "", "", what};
}

/// realpath(3) as a string; empty when it fails (errno set).
std::string realPath(const std::string &path)
{
    char resolved[PATH_MAX];
    return ::realpath(path.c_str(), resolved) ? std::string(resolved) : std::string();
}

/// Writes all of `contents` to `fd`; 0 or the errno of the failing write().
int writeAll(int fd, std::string_view contents)
{
    const char *data = contents.data();
    std::size_t left = contents.size();
    while (left > 0) {
        const ssize_t n = ::write(fd, data, left);
        if (n < 0) {
            if (errno == EINTR)
                continue;
            return errno;
        }
        if (n == 0)
            return EIO; // a regular file or device that takes nothing and reports no error
        data += n;
        left -= static_cast<std::size_t>(n);
    }
    return 0;
}

struct FileId
{
    std::uint64_t device = 0, inode = 0;
    bool operator==(const FileId &) const = default;
};

Result<bool> writeDescriptor(const OutputTarget &target, std::string_view contents)
{
    if (const int error = writeAll(target.descriptor, contents))
        return osError(descriptorName(target), "write failed", error);
    return true;
}

Result<bool> writeSpecial(const OutputTarget &target, std::string_view contents)
{
    // No O_CREAT, no O_TRUNC: the node stays what it is. A FIFO blocks here until a reader
    // opens it, as it does for any program writing into one.
    const int fd = ::open(target.writePath.c_str(), O_WRONLY | O_NOCTTY | O_CLOEXEC);
    if (fd < 0)
        return osError(target.path, "cannot open for writing", errno);
    if (const int error = writeAll(fd, contents)) {
        ::close(fd);
        return osError(target.path, "write failed", error);
    }
    if (::close(fd) != 0)
        return osError(target.path, "closing failed", errno);
    return true;
}

Result<bool> replaceAtomically(const OutputTarget &target, std::string_view contents)
{
    namespace fs = std::filesystem;
    const std::string &path = target.path;
    const fs::path where(target.writePath);
    const fs::path dir = where.has_parent_path() ? where.parent_path() : fs::path(".");

    // the temporary file lives beside the target so that rename() never crosses file systems
    std::string pattern = (dir / ("." + where.filename().string() + ".XXXXXX")).string();
    std::vector<char> name(pattern.begin(), pattern.end());
    name.push_back('\0');
    const int fd = ::mkostemp(name.data(), O_CLOEXEC);
    if (fd < 0)
        return osError(path, "cannot create a temporary file in " + dir.string(), errno);
    const std::string tempPath(name.data());

    auto fail = [&](const std::string &what, int error) -> Result<bool> {
        ::close(fd);
        ::unlink(tempPath.c_str());
        return osError(path, what, error);
    };

    // mkstemp creates 0600; keep the mode of a file being replaced, else the usual 0644
    struct stat existing
    {
    };
    const mode_t mode = target.kind == OutputTargetKind::RegularFile
            && ::stat(target.writePath.c_str(), &existing) == 0
        ? (existing.st_mode & 07777)
        : 0644;
    if (::fchmod(fd, mode) != 0)
        return fail("cannot set permissions of the temporary file", errno);

    if (const int error = writeAll(fd, contents))
        return fail("write failed", error);
    // The size on disk must be what was written before it may replace anything.
    struct stat written
    {
    };
    if (::fstat(fd, &written) != 0)
        return fail("cannot check the written file", errno);
    if (static_cast<std::uint64_t>(written.st_size) != contents.size()) {
        ::close(fd);
        ::unlink(tempPath.c_str());
        return problem(path,
                       "the written file has " + std::to_string(written.st_size)
                           + " bytes instead of " + std::to_string(contents.size()));
    }
    if (::fsync(fd) != 0)
        return fail("flushing to disk failed", errno);
    if (::close(fd) != 0) {
        const int error = errno;
        ::unlink(tempPath.c_str());
        return osError(path, "closing the file failed", error);
    }
    if (::rename(tempPath.c_str(), target.writePath.c_str()) != 0) {
        const int error = errno;
        ::unlink(tempPath.c_str());
        return osError(path, "replacing the file failed", error);
    }
    // make the rename itself durable; a failure here leaves a complete file, so it is ignored
    if (const int dirFd = ::open(dir.c_str(), O_RDONLY | O_DIRECTORY | O_CLOEXEC); dirFd >= 0) {
        ::fsync(dirFd);
        ::close(dirFd);
    }
    return true;
}

} // namespace

Result<OutputTarget> resolveOutput(const std::string &path, bool allowStandardOutput)
{
    namespace fs = std::filesystem;
    if (path.empty())
        return problem(path, "no file name given");
    OutputTarget target;
    target.path = path;
    target.writePath = path;
    const int descriptor
        = path == "-" && allowStandardOutput ? STDOUT_FILENO : namedDescriptor(path);
    if (descriptor >= 0) {
        if (::fcntl(descriptor, F_GETFL) < 0)
            return osError(path, "the file descriptor is not open", errno);
        target.kind = OutputTargetKind::Descriptor;
        target.descriptor = descriptor;
        return target;
    }
    struct stat info
    {
    };
    if (::lstat(path.c_str(), &info) == 0 && S_ISLNK(info.st_mode)) {
        // Write through the link to the file it names, so the link stays a link.
        target.writePath = realPath(path);
        if (target.writePath.empty())
            return osError(path, "the symbolic link leads nowhere", errno);
    }
    if (::stat(target.writePath.c_str(), &info) == 0) {
        if (S_ISDIR(info.st_mode))
            return problem(path, "the path names a directory");
        target.kind
            = S_ISREG(info.st_mode) ? OutputTargetKind::RegularFile : OutputTargetKind::Special;
        target.device = static_cast<std::uint64_t>(info.st_dev);
        target.inode = static_cast<std::uint64_t>(info.st_ino);
        return target;
    }
    if (errno != ENOENT)
        return osError(path, "cannot write there", errno);
    const fs::path where(target.writePath);
    if (!where.has_filename())
        return problem(path, "the path names a directory");
    const fs::path dir = where.has_parent_path() ? where.parent_path() : fs::path(".");
    const std::string canonicalDir = realPath(dir.string());
    if (canonicalDir.empty())
        return osError(path, "cannot use the folder " + dir.string(), errno);
    target.kind = OutputTargetKind::NewFile;
    target.canonical = (fs::path(canonicalDir) / where.filename()).string();
    return target;
}

Result<bool> checkOutputsApart(const std::vector<std::string> &inputs,
                               const std::vector<OutputTarget> &outputs)
{
    std::vector<std::pair<FileId, std::string>> read;
    for (const auto &input : inputs) {
        struct stat info
        {
        };
        if (::stat(input.c_str(), &info) == 0)
            read.push_back(
                {{static_cast<std::uint64_t>(info.st_dev), static_cast<std::uint64_t>(info.st_ino)},
                 input});
    }
    const auto idOf = [](const OutputTarget &t) -> std::optional<FileId> {
        if (t.kind == OutputTargetKind::RegularFile || t.kind == OutputTargetKind::Special)
            return FileId{t.device, t.inode};
        if (t.kind == OutputTargetKind::Descriptor) {
            struct stat info
            {
            };
            if (::fstat(t.descriptor, &info) == 0 && S_ISREG(info.st_mode))
                return FileId{static_cast<std::uint64_t>(info.st_dev),
                              static_cast<std::uint64_t>(info.st_ino)};
        }
        return std::nullopt;
    };
    const auto nameOf = [](const OutputTarget &t) {
        return t.kind == OutputTargetKind::Descriptor ? descriptorName(t) : t.path;
    };
    for (std::size_t i = 0; i < outputs.size(); ++i) {
        const OutputTarget &out = outputs[i];
        const auto id = idOf(out);
        if (id) {
            for (const auto &[inputId, input] : read)
                if (*id == inputId)
                    return problem(nameOf(out),
                                   "refused: this output is the input file " + input
                                       + ", which it would overwrite; nothing was written");
        }
        for (std::size_t j = 0; j < i; ++j) {
            const OutputTarget &other = outputs[j];
            bool same = out.kind == OutputTargetKind::Descriptor
                && other.kind == OutputTargetKind::Descriptor && out.descriptor == other.descriptor;
            if (const auto otherId = idOf(other); id && otherId)
                same = same || *id == *otherId;
            if (out.kind == OutputTargetKind::NewFile && other.kind == OutputTargetKind::NewFile)
                same = same || out.canonical == other.canonical;
            // /dev/null may take several outputs: a device is written, never replaced
            if (same && out.kind != OutputTargetKind::Special)
                return problem(nameOf(out),
                               "refused: two outputs of this command name the same file ("
                                   + nameOf(other) + " and " + nameOf(out)
                                   + "); nothing was written");
        }
    }
    return true;
}

Result<bool> writeOutput(const OutputTarget &target, std::string_view contents)
{
    switch (target.kind) {
    case OutputTargetKind::Descriptor:
        return writeDescriptor(target, contents);
    case OutputTargetKind::Special:
        return writeSpecial(target, contents);
    case OutputTargetKind::NewFile:
    case OutputTargetKind::RegularFile:
        break;
    }
    return replaceAtomically(target, contents);
}

Result<bool> writeFileAtomically(const std::string &path, std::string_view contents)
{
    auto target = resolveOutput(path);
    if (!target)
        return target.diagnostics();
    return writeOutput(*target, contents);
}

} // namespace loopsketch
