// The scan command: a map's CSV is core's runScan() row for row, and bad targets are bad
// input naming the file, part and field.

#include "loopsketch/analysis/scan.h"
#include "loopsketch/design/designfile.h"

#include "clitest.h"
#include "designs.h"

#include <gmock/gmock.h>
#include <gtest/gtest.h>

#include <algorithm>
#include <optional>
#include <string>
#include <vector>

using namespace loopsketch;
using namespace loopsketch::test;

namespace {

TEST(CliScan, MapOfTheDemoIsCoresScanRowForRow)
{
    // The command line and the panels share runScan(): the CSV is core's, row for row.
    const CliRun r = runCli({"scan", "demo", "--part", "CF:1p:10p", "--part", "RF", "--csv", "-"});
    ASSERT_EQ(r.exitCode, 0) << r.err;
    const Design demo = loadOrFail(kDesignsDir / "demo.loopsketch");
    std::vector<ScanAxis> axes;
    for (const char *text : {"CF:1p:10p", "RF"}) {
        auto axis = resolveScanAxis(demo, *parseScanTarget(text), std::nullopt);
        ASSERT_TRUE(axis.ok()) << axis.errorText();
        axes.push_back(*axis);
    }
    auto scan = runScan(demo, axes);
    ASSERT_TRUE(scan.ok()) << scan.errorText();
    EXPECT_EQ(r.out, scanToCsv(*scan));
    // CF 1p..10p in E12 (13 values) times RF 100k..10M in E24 (49 values), IEC 60063.
    EXPECT_EQ(std::count(r.out.begin(), r.out.end(), '\n'), 1 + 13 * 49);
    EXPECT_EQ(r.out.substr(0, r.out.find('\n')),
              "CF,RF,gain,bandwidth_hz,phase_margin_deg,gain_margin_db,peaking_db,overshoot_pct,"
              "settling_time_s,output_noise_rms,z_in,z_out,stable,specs_pass");
}

TEST(CliScan, BadTargetsAreBadInputNamingFilePartAndField)
{
    const auto refused = [](const std::vector<std::string> &args, const std::string &says) {
        const CliRun r = runCli(args);
        EXPECT_EQ(r.exitCode, 2) << r.command;
        EXPECT_THAT(r.err, HasSubstr(says)) << r.command;
        EXPECT_TRUE(r.out.empty()) << r.command;
    };
    refused({"scan", "demo", "--part", "CF:1p", "--csv", "-"}, "--part");
    refused({"scan", "demo", "--part", "CF", "--series", "E25", "--csv", "-"}, "E25");
    refused({"scan", "demo", "--part", "CX", "--csv", "-"}, "demo: part CX");
    refused({"scan", "demo", "--part", "RL.q", "--csv", "-"}, "demo: part RL, field q");
    refused({"scan", "demo", "--part", "U1.gbw", "--csv", "-"}, "part U1, field gbw");
    refused({"scan", "demo", "--part", "CF:1x:2p", "--csv", "-"}, "part CF, field value");
    refused({"scan", "demo", "--part", "CF", "--part", "CF", "--csv", "-"}, "named twice");
    refused({"scan", "demo", "--part", "CF"}, "--csv");
}

} // namespace
