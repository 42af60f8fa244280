#pragma once

// What the command-line tests share: the built program and how to run it, and the checks of
// its JSON.

#include "clirunner.h"

#include <gmock/gmock.h>
#include <gtest/gtest.h>
#include <nlohmann/json.hpp>

#include <cmath>
#include <filesystem>
#include <string>
#include <vector>

namespace loopsketch::test {

// What every command-line test file uses, brought in with `using namespace loopsketch::test`.
using ::testing::HasSubstr;
using ::testing::Not;
namespace fs = std::filesystem;
using Json = nlohmann::json;

/// The command-line program under test (LOOPSKETCH_CLI, set by tests/CMakeLists.txt).
inline const std::filesystem::path kCli = LOOPSKETCH_CLI;

/// Runs the command-line program with `args` as a user does from a shell.
inline CliRun runCli(const std::vector<std::string> &args)
{
    return runProgram(kCli.string(), args);
}

/// j[key], with a test failure (and null) where `j` has no such key.
inline const Json &at(const Json &j, const std::string &key)
{
    static const Json missing;
    if (!j.is_object() || !j.contains(key)) {
        ADD_FAILURE() << "missing key \"" << key << "\" in " << j.dump().substr(0, 200);
        return missing;
    }
    return j.at(key);
}

/// Checks that `j` is an object holding every one of `keys`; `where` names it in messages.
inline void expectKeys(const Json &j, const std::vector<std::string> &keys,
                       const std::string &where)
{
    ASSERT_TRUE(j.is_object()) << where << " is not an object: " << j.dump().substr(0, 200);
    for (const auto &k : keys)
        EXPECT_TRUE(j.contains(k)) << where << " lacks \"" << k << "\"";
}

/// The number `j` holds, or NaN with a test failure.
inline double jsonNumber(const Json &j)
{
    EXPECT_TRUE(j.is_number()) << j.dump();
    return j.is_number() ? j.get<double>() : std::nan("");
}

/// Checks that `j` has the keys of schema loopsketch.analysis/1 (core/README.md §7).
inline void expectAnalysisSchema(const Json &j)
{
    EXPECT_EQ(at(j, "schema"), "loopsketch.analysis/1");
    expectKeys(j, {"topology", "dc", "margins", "closed_loop", "desensitivity_db", "sensitivity"},
               "top level");
    if (j.contains("topology")) {
        const Json &t = j.at("topology");
        if (t.is_null())
            EXPECT_TRUE(j.contains("reason"));
        else
            expectKeys(t, {"mixing", "sampling", "name", "parameters", "gain_type"}, "topology");
    }
    const Json &dc = at(j, "dc");
    expectKeys(dc, {"exact", "two_port", "return_ratio"}, "dc");
    expectKeys(at(dc, "exact"), {"gain", "z_in", "z_out"}, "dc.exact");
    const Json &tp = at(dc, "two_port");
    if (!tp.is_null()) {
        expectKeys(tp,
                   {"a", "beta", "loop_gain", "closed_loop", "gain", "z_in", "z_out", "error_pct",
                    "loading"},
                   "dc.two_port");
        expectKeys(at(tp, "loading"), {"input_db", "output_db"}, "dc.two_port.loading");
    }
    expectKeys(at(dc, "return_ratio"), {"loop_gain", "gain_inf", "feedthrough", "gain"},
               "dc.return_ratio");
    expectKeys(at(j, "margins"),
               {"crossover_hz", "phase_margin_deg", "gain_margin_db", "phase_crossover_hz"},
               "margins");
    const Json &cl = at(j, "closed_loop");
    expectKeys(cl, {"bandwidth_hz", "peaking_db", "poles", "step"}, "closed_loop");
    EXPECT_TRUE(at(cl, "poles").is_array());
    expectKeys(at(cl, "step"), {"rise_time_s", "overshoot_pct", "settling_time_s"},
               "closed_loop.step");
    EXPECT_TRUE(at(j, "sensitivity").is_object());
}

} // namespace loopsketch::test
