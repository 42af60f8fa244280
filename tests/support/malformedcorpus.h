#pragma once

// The hostile corpus of tests/data/malformed: expected.tsv lists every file with the exit
// code the command line must give (0 or 2) and a fragment of its message (stderr for 2,
// stdout for 0). Rows of two columns (file, fragment) mean exit code 2.

#include "files.h"

#include <filesystem>
#include <fstream>
#include <string>
#include <vector>

namespace loopsketch::test {

inline const std::filesystem::path kMalformedDir
    = std::filesystem::path(LOOPSKETCH_TEST_DATA_DIR) / "malformed";

struct MalformedCase
{
    std::string file;
    int exitCode = 2;
    std::string expected;
};

inline void PrintTo(const MalformedCase &c, std::ostream *os)
{
    *os << c.file;
}

/// Every row of expected.tsv; with `rejectedOnly`, the rows whose file must be refused.
inline std::vector<MalformedCase> malformedCases(bool rejectedOnly = true)
{
    std::vector<MalformedCase> cases;
    std::ifstream in(kMalformedDir / "expected.tsv");
    std::string line;
    while (std::getline(in, line)) {
        if (line.empty() || line.front() == '#')
            continue;
        const auto tab = line.find('\t');
        if (tab == std::string::npos)
            continue;
        MalformedCase c{line.substr(0, tab), 2, line.substr(tab + 1)};
        if (const auto second = c.expected.find('\t'); second != std::string::npos
            && (c.expected.starts_with("0\t") || c.expected.starts_with("2\t"))) {
            c.exitCode = c.expected.front() - '0';
            c.expected = c.expected.substr(second + 1);
        }
        if (!rejectedOnly || c.exitCode == 2)
            cases.push_back(std::move(c));
    }
    return cases;
}

} // namespace loopsketch::test
