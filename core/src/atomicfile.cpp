// Atomic file replacement: temp file in the target's directory, fsync, rename.

#include "loopsketch/designfile.h"

#include <cerrno>
#include <cstring>
#include <filesystem>
#include <string>
#include <vector>

#include <fcntl.h>
#include <sys/stat.h>
#include <unistd.h>

namespace loopsketch {

namespace {

Diagnostic osError(const std::string &path, const std::string &what, int error)
{
    return Diagnostic{path, "", "", what + ": " + std::strerror(error)};
}

} // namespace

Result<bool> writeFileAtomically(const std::string &path, std::string_view contents)
{
    namespace fs = std::filesystem;
    if (path.empty())
        return Diagnostic{path, "", "", "cannot save: no file name given"};
    const fs::path target(path);
    if (!target.has_filename())
        return Diagnostic{path, "", "", "cannot save: the path names a directory"};
    const fs::path dir = target.has_parent_path() ? target.parent_path() : fs::path(".");

    // the temp file lives beside the target so that rename() never crosses file systems
    std::string pattern = (dir / ("." + target.filename().string() + ".XXXXXX")).string();
    std::vector<char> name(pattern.begin(), pattern.end());
    name.push_back('\0');
    const int fd = ::mkstemp(name.data());
    if (fd < 0)
        return osError(path, "cannot save: cannot create a temporary file in " + dir.string(),
                       errno);
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
    const mode_t mode = ::stat(path.c_str(), &existing) == 0 ? (existing.st_mode & 07777) : 0644;
    if (::fchmod(fd, mode) != 0)
        return fail("cannot save: cannot set permissions of the temporary file", errno);

    const char *data = contents.data();
    std::size_t left = contents.size();
    while (left > 0) {
        const ssize_t n = ::write(fd, data, left);
        if (n < 0) {
            if (errno == EINTR)
                continue;
            return fail("cannot save: write failed", errno);
        }
        data += n;
        left -= static_cast<std::size_t>(n);
    }
    if (::fsync(fd) != 0)
        return fail("cannot save: flushing to disk failed", errno);
    if (::close(fd) != 0) {
        const int error = errno;
        ::unlink(tempPath.c_str());
        return osError(path, "cannot save: closing the file failed", error);
    }
    if (::rename(tempPath.c_str(), path.c_str()) != 0) {
        const int error = errno;
        ::unlink(tempPath.c_str());
        return osError(path, "cannot save: replacing the file failed", error);
    }
    // make the rename itself durable; a failure here leaves a complete file, so it is ignored
    if (const int dirFd = ::open(dir.c_str(), O_RDONLY | O_DIRECTORY); dirFd >= 0) {
        ::fsync(dirFd);
        ::close(dirFd);
    }
    return true;
}

} // namespace loopsketch
