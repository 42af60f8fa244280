#pragma once

// Designs for tests: the examples under resources/designs, the reference designs under
// tests/data/reference, and loading, parsing and analysing that fails the test (with the
// diagnostics) instead of crashing it. Needs LOOPSKETCH_DESIGNS_DIR and
// LOOPSKETCH_TEST_DATA_DIR from the test's build.

#include "loopsketch/analysis/analysis.h"
#include "loopsketch/design/designfile.h"

#include <gtest/gtest.h>

#include <algorithm>
#include <cmath>
#include <filesystem>
#include <string>
#include <vector>

namespace loopsketch::test {

inline const std::filesystem::path kDesignsDir = LOOPSKETCH_DESIGNS_DIR;
inline const std::filesystem::path kReferenceDir
    = std::filesystem::path(LOOPSKETCH_TEST_DATA_DIR) / "reference";

/// The file names of the example designs (resources/designs/*.loopsketch), sorted.
inline std::vector<std::string> exampleDesigns()
{
    std::vector<std::string> files;
    for (const auto &e : std::filesystem::directory_iterator(kDesignsDir))
        if (e.path().extension() == ".loopsketch")
            files.push_back(e.path().filename().string());
    std::sort(files.begin(), files.end());
    return files;
}

/// The design in `path`; an empty design and a test failure naming the problems when it does
/// not load.
inline Design loadOrFail(const std::filesystem::path &path)
{
    auto d = loadDesign(path.string());
    EXPECT_TRUE(d.ok()) << d.errorText();
    return d.ok() ? *d : Design{};
}

/// A reference design of tests/data/reference by file name.
inline Design loadReference(const std::string &name)
{
    return loadOrFail(kReferenceDir / name);
}

/// `text` parsed as the design file `name`; an empty design and a test failure showing the
/// text when it does not parse.
/// A non-inverting amplifier as one first builds it on a blank page: RF from the output to the
/// inverting input, 1k from there to ground, a 1k load, around a gain block with its defaults
/// (100 dB, 10 MHz gain-bandwidth, no input or output resistance); the design file's text.
inline std::string idealNonInvertingDesign(const std::string &rf)
{
    return R"({"schema": "loopsketch.design/1", "title": "ideal gain block",
      "parts": [
        {"id": "VS1", "type": "vsource", "pos": "n1", "neg": "0"},
        {"id": "U1", "type": "gain_block", "in_p": "n1", "in_n": "n6", "out": "n5",
         "gain": "100dB", "gbw": "10M"},
        {"id": "R1", "type": "resistor", "a": "n6", "b": "n5", "value": ")"
        + rf + R"("},
        {"id": "R2", "type": "resistor", "a": "0", "b": "n6", "value": "1k"},
        {"id": "RL1", "type": "load", "a": "n5", "b": "0", "r": "1k"}],
      "input": "VS1", "output": "voltage",
      "sweep": {"start": "1", "stop": "1G", "points_per_decade": 20}})";
}

inline Design parseOrFail(const std::string &text, const std::string &name = "test.loopsketch")
{
    auto d = parseDesign(text, name);
    EXPECT_TRUE(d.ok()) << d.errorText() << "\n" << text;
    return d.ok() ? *d : Design{};
}

/// The analysis of `design`; an empty one and a test failure when there is none.
inline Analysis analyzeOrFail(const Design &design)
{
    auto a = analyze(design);
    EXPECT_TRUE(a.ok()) << a.errorText();
    return a.ok() ? *a : Analysis{};
}

/// The analysis of the design file at `path`, with a test failure where it does not load or
/// cannot be analysed.
inline Analysis analyzeFileOrFail(const std::filesystem::path &path)
{
    return analyzeOrFail(loadOrFail(path));
}

/// `d` with the candidate's values written by hand onto the parts' primary fields: a path
/// independent of applyCandidate(), for checking what the program did with a candidate.
inline Design withCandidateByHand(Design d, const Candidate &c)
{
    for (const auto &[id, value] : c.values) {
        Part *p = d.findPart(id);
        EXPECT_NE(p, nullptr) << id;
        if (p)
            p->fields[std::string(p->primaryField())] = value;
    }
    return d;
}

/// The number in `x`; NaN and a test failure when the quantity is missing.
inline double valueOf(const OptionalNumber &x)
{
    EXPECT_TRUE(x.has_value());
    return x.value_or(std::nan(""));
}

} // namespace loopsketch::test
