#pragma once

// The hostile files too large to commit, written at test time: many unknown keys, a
// 100,000-character part id, 14 MiB of candidates, 10,000-part designs, a long RC ladder. Each
// comes with the exit code the command line must give and a fragment of its message.

#include "malformedcorpus.h"

#include <filesystem>
#include <fstream>
#include <string>
#include <vector>

namespace loopsketch::test {

// The parts every generated design starts from: an invented small transimpedance stage
// (common practice for a photodiode front end; not taken from any source).
inline std::string hostileParts(const std::string &feedbackParts)
{
    return R"(  "parts": [
    {"id": "SIG", "type": "isource", "to": "in", "from": "0", "r_parallel": "1G", "c_parallel": "10p"},
    {"id": "U1", "type": "gain_block", "in_p": "0", "in_n": "in", "out": "out", "gain": "100dB", "poles_hz": ["10", "30M"]},
    {"id": "RL", "type": "load", "a": "out", "b": "0", "r": "10k"},
    {"id": "CF", "type": "capacitor", "a": "in", "b": "out", "value": "2.2p", "tolerance": "10%"})"
        + feedbackParts + "\n  ],\n";
}

inline std::string hostileDesign(const std::string &feedbackParts, const std::string &extraTop = {})
{
    return "{\n  \"schema\": \"loopsketch.design/1\",\n  \"title\": \"Generated hostile design\",\n"
        + hostileParts(feedbackParts) + extraTop + R"(  "input": "SIG",
  "output": "voltage",
  "sweep": {"start": "1", "stop": "1G", "points_per_decade": 20},
  "specs": {"gain": ["-1.1M", "-0.9M"]}
}
)";
}

/// `count` resistors from "in" to "out": in series (a chain, count - 1 inner nodes) or side by
/// side, each 1 MOhm / count or count MOhm so that the total stays 1 MOhm.
inline std::string resistorNetwork(std::size_t count, bool chain)
{
    std::string s;
    s.reserve(count * 90);
    const std::string value
        = chain ? std::to_string(1e6 / double(count)) : std::to_string(1e6 * double(count));
    for (std::size_t i = 0; i < count; ++i) {
        const std::string a = !chain || i == 0 ? "in" : "n" + std::to_string(i);
        const std::string b = !chain || i + 1 == count ? "out" : "n" + std::to_string(i + 1);
        s += ",\n    {\"id\": \"R" + std::to_string(i) + "\", \"type\": \"resistor\", \"a\": \"" + a
            + "\", \"b\": \"" + b + "\", \"value\": " + value + ", \"tolerance\": \"1%\"}";
    }
    return s;
}

/// resistorNetwork(count, true) with a 1 pF capacitor from each of its inner nodes to ground:
/// a ladder of reduced order about count.
inline std::string rcLadder(std::size_t count)
{
    std::string s = resistorNetwork(count, true);
    for (std::size_t i = 1; i < count; ++i)
        s += ",\n    {\"id\": \"C" + std::to_string(i) + "\", \"type\": \"capacitor\", \"a\": \"n"
            + std::to_string(i) + "\", \"b\": \"0\", \"value\": \"1p\"}";
    return s;
}

inline std::string unknownKeys(std::size_t count)
{
    std::string s;
    s.reserve(count * 24);
    for (std::size_t i = 0; i < count; ++i)
        s += "  \"unknown_key_" + std::to_string(i) + "\": " + std::to_string(i) + ",\n";
    return s;
}

inline std::string manyCandidates(std::size_t count)
{
    std::string s = "  \"candidates\": [\n";
    for (std::size_t i = 0; i < count; ++i)
        s += std::string(i ? ",\n" : "") + "    {\"name\": \"candidate " + std::to_string(i)
            + "\", \"values\": {\"CF\": \"1p\"}}";
    return s + "\n  ],\n";
}

/// Writes the generated files into `dir` and returns them as corpus rows.
inline std::vector<MalformedCase> writeGeneratedCorpus(const std::filesystem::path &dir)
{
    std::vector<MalformedCase> rows;
    const auto put = [&](const std::string &name, const std::string &text, int code,
                         const std::string &expected) {
        std::ofstream(dir / name, std::ios::binary) << text;
        rows.push_back({name, code, expected});
    };
    put("generated-200k-unknown-keys.loopsketch", hostileDesign("", unknownKeys(200000)), 2,
        "200000 unknown keys at the top level: \"unknown_key_0\", \"unknown_key_1\", "
        "\"unknown_key_2\", \"unknown_key_3\", \"unknown_key_4\" and 199995 more");
    put("generated-100k-character-id.loopsketch",
        hostileDesign(",\n    {\"id\": \"" + std::string(100000, 'R')
                      + "\", \"type\": \"resistor\", \"a\": \"in\", \"b\": \"out\", \"value\": "
                        "\"1M\"}"),
        2, "field id: the id is 100000 characters long; at most 64 are allowed");
    put("generated-262k-candidates.loopsketch",
        hostileDesign(resistorNetwork(1, true), manyCandidates(262144)), 2,
        "field candidates: the design has 262144 candidates; at most 1000 are allowed");
    put("generated-10000-resistor-chain.loopsketch", hostileDesign(resistorNetwork(9996, true)), 2,
        "field parts: the circuit has 10000 unknowns");
    // Over the work budget with few unknowns: the sweep at reduced order about 1000. (10,000
    // parallel resistors were refused for their per-part sensitivities before those took one
    // adjoint solve; they now fit the budget.)
    put("generated-1999-part-rc-ladder.loopsketch", hostileDesign(rcLadder(1000)), 2,
        "field sweep.points_per_decade: the analysis would take about");
    put("generated-10001-parts.loopsketch", hostileDesign(resistorNetwork(9997, false)), 2,
        "field parts: the design has 10001 parts; at most 10000 are allowed");
    put("generated-60-resistor-chain.loopsketch", hostileDesign(resistorNetwork(60, true)), 0,
        "Generated hostile design");
    return rows;
}

} // namespace loopsketch::test
