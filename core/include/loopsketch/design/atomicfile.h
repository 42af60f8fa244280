#pragma once

// The one writer of output files (designs, CSV, JSON and text, and the bytes of PDF, SVG and
// PNG rendered by the ui): a regular file is replaced atomically (temporary file beside it,
// flushed, size checked, fsync'd, renamed); a device, FIFO or socket is written directly and
// never replaced; "-" is standard output where a command allows it. Before any work a command
// resolves all its outputs and checks that none is one of its inputs or another output.

#include "loopsketch/base/result.h"

#include <cstdint>
#include <string>
#include <string_view>
#include <vector>

namespace loopsketch {

/// How an output path is written.
enum class OutputTargetKind {
    Descriptor, ///< an open file descriptor, written as it is: "-" and /dev/stdout (1),
                ///< /dev/stderr (2), /dev/fd/N and /proc/self/fd/N (N)
    NewFile, ///< nothing at the path yet: a temporary file renamed into place
    RegularFile, ///< an existing regular file: replaced atomically, its mode kept
    Special, ///< a character or block device, FIFO or socket: opened and written, never replaced
};

/// An output path resolved before any work.
struct OutputTarget
{
    std::string path; ///< as the user gave it; messages name this
    std::string writePath; ///< where the bytes go: `path` with a symbolic link resolved
    OutputTargetKind kind = OutputTargetKind::NewFile;
    std::uint64_t device = 0; ///< st_dev of the existing file (RegularFile, Special)
    std::uint64_t inode = 0; ///< st_ino of the existing file (RegularFile, Special)
    std::string canonical; ///< absolute path without "." / ".." / links (NewFile)
    int descriptor = -1; ///< the descriptor written (Descriptor)
};

/// Resolves `path` for writing. `allowStandardOutput`: "-" means standard output (CSV, JSON
/// and text outputs); otherwise "-" is an ordinary file name. /dev/stdout, /dev/stderr,
/// /dev/fd/N and /proc/self/fd/N always mean the open descriptor (whatever it leads to, a
/// pipe or a file the shell opened, it is written, never replaced). Fails, naming the path, for an
/// empty path, a directory, or a folder that does not exist.
Result<OutputTarget> resolveOutput(const std::string &path, bool allowStandardOutput = false);

/// Refuses, naming both paths, an output that is one of `inputs` (same device and inode, so
/// another spelling, a symbolic link or a hard link is caught) or the same file as another
/// output (an existing file by inode, a new one by its canonical path; one descriptor twice).
/// `inputs` that do not exist are skipped (the loader reports them).
Result<bool> checkOutputsApart(const std::vector<std::string> &inputs,
                               const std::vector<OutputTarget> &outputs);

/// Writes `contents` to a resolved target: a regular or new file atomically (on failure the
/// previous file stays byte-identical and no temporary file remains), a special file or
/// standard output directly. Every failure (ENOSPC, EFBIG, EIO, EACCES, EROFS, a short file)
/// is a diagnostic naming the path and the reason. The caller ignores SIGXFSZ (app/main.cpp
/// does) so that a file-size limit is a failed write rather than the end of the process.
Result<bool> writeOutput(const OutputTarget &target, std::string_view contents);

/// resolveOutput() (no standard output) then writeOutput(): the one call for a single file
/// (saveDesign() writes through it).
Result<bool> writeFileAtomically(const std::string &path, std::string_view contents);

} // namespace loopsketch
