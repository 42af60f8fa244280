#pragma once

// Runs the built command-line program as a user does, from a shell: arguments quoted, standard
// input from /dev/null, standard output and error caught in files, the exit status decoded.

#include "files.h"

#include <csignal>
#include <cstdlib>
#include <filesystem>
#include <string>
#include <vector>

#include <sys/wait.h>

namespace loopsketch::test {

/// `s` quoted for the POSIX shell.
inline std::string shellQuoted(const std::string &s)
{
    std::string q = "'";
    for (char c : s)
        q += c == '\'' ? std::string("'\\''") : std::string(1, c);
    return q + "'";
}

struct CliRun
{
    std::string command; ///< the arguments, long ones cut, for messages
    bool exited = false; ///< false: ended by a signal (a crash, or the watchdog)
    int exitCode = -1; ///< the exit code, or 128 + the signal that ended the program
    std::string out;
    std::string err;
};

/// Runs `program` with `args`; its output goes through files in `scratch`. With
/// `watchdogSeconds` the program is killed (SIGKILL) when it runs longer.
inline CliRun runProgram(const std::string &program, const std::vector<std::string> &args,
                         const std::filesystem::path &scratch, int watchdogSeconds = 0)
{
    const std::filesystem::path out = scratch / "stdout", err = scratch / "stderr";
    // Appended piece by piece: `" " + string` trips GCC 12's false -Wrestrict (bug 105329).
    std::string cmd = "exec ";
    if (watchdogSeconds > 0)
        cmd.append("timeout -s KILL ").append(std::to_string(watchdogSeconds)).append(" ");
    cmd.append(shellQuoted(program));
    CliRun r;
    for (const auto &a : args) {
        cmd.append(" ").append(shellQuoted(a));
        r.command.append(" ").append(a.size() > 80 ? a.substr(0, 80) + "..." : a);
    }
    cmd.append(" >").append(shellQuoted(out.string()));
    cmd.append(" 2>").append(shellQuoted(err.string()));
    cmd.append(" </dev/null");
    const int status = std::system(cmd.c_str());
    if (status != -1 && WIFEXITED(status)) {
        r.exitCode = WEXITSTATUS(status);
        // timeout(1) reports the program it killed as 128 + SIGKILL
        r.exited = !(watchdogSeconds > 0 && r.exitCode == 128 + SIGKILL);
    } else if (status != -1 && WIFSIGNALED(status)) {
        r.exitCode = 128 + WTERMSIG(status);
    }
    r.out = readBytes(out);
    r.err = readBytes(err);
    return r;
}

/// Runs `program` with `args`, its output caught in a temporary directory of its own.
inline CliRun runProgram(const std::string &program, const std::vector<std::string> &args)
{
    TempDir scratch("loopsketch-run");
    return runProgram(program, args, scratch.path());
}

} // namespace loopsketch::test
