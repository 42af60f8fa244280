#pragma once

// The command line: analyze, sweep, export, --help, --version. The GUI launch is main's.

#include <iosfwd>
#include <optional>
#include <string>
#include <vector>

namespace loopsketch::app {

enum ExitCode { kExitOk = 0, kExitInternal = 1, kExitBadInput = 2 };

/// Runs a command when `args` (without the program name) starts with one; nullopt when the
/// arguments ask for the GUI (none, or a single design file).
std::optional<int> runCommandLine(const std::vector<std::string> &args, std::ostream &out,
                                  std::ostream &err);

/// The usage text of --help.
std::string usage();

/// The embedded demo design's text (resources/designs/demo.loopsketch).
std::string_view demoDesignText();

} // namespace loopsketch::app
