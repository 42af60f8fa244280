// `loopsketch export --scan`: the review sheet's scan and map figures against what
// `loopsketch scan` computes for the same targets, and a bad target as bad input.

#include "clirun.h"
#include "sheetcli.h"

#include <QFile>
#include <QStringList>
#include <QTemporaryDir>

#include <gmock/gmock.h>
#include <gtest/gtest.h>

using testing::HasSubstr;

namespace {

// export --scan (issue 16 item 6): each figure's paragraph states the parameters and counts
// that `loopsketch scan` computes for the same targets (IEC 60063 series for the values).
struct ScanCounts
{
    int rows = 0, passing = 0, unstable = 0;
};

ScanCounts countScanCsv(const QString &csv)
{
    ScanCounts c;
    QStringList lines = csv.split(QLatin1Char('\n'), Qt::SkipEmptyParts);
    if (lines.isEmpty() || !lines.front().endsWith(QStringLiteral("stable,specs_pass"))) {
        ADD_FAILURE() << "not a scan CSV: " << csv.left(200).toStdString();
        return c;
    }
    lines.removeFirst();
    for (const QString &line : lines) {
        const QStringList cells = line.split(QLatin1Char(','));
        ++c.rows;
        c.passing += cells.back() == QStringLiteral("1");
        c.unstable += cells[cells.size() - 2] == QStringLiteral("0");
    }
    return c;
}

TEST(ReviewSheetScans, ScanAndMapFiguresStateWhatTheScanCommandComputes)
{
    QTemporaryDir tmp;
    ASSERT_TRUE(tmp.isValid());
    const QString with = tmp.filePath("with.pdf"), without = tmp.filePath("without.pdf");
    const CliRun r = loopsketchCli({"export", designPath("demo"), "--pdf", with, "--spread-trials",
                                    "0", "--scan", "CF:1p:10p", "--scan", "RF,CF"});
    ASSERT_EQ(r.exitCode, 0) << r.err.toStdString();
    ASSERT_EQ(
        loopsketchCli({"export", designPath("demo"), "--pdf", without, "--spread-trials", "0"})
            .exitCode,
        0);
    EXPECT_GT(pageCount(with), pageCount(without));

    const CliRun scan
        = loopsketchCli({"scan", designPath("demo"), "--part", "CF:1p:10p", "--csv", "-"});
    const CliRun map
        = loopsketchCli({"scan", designPath("demo"), "--part", "RF", "--part", "CF", "--csv", "-"});
    ASSERT_EQ(scan.exitCode, 0) << scan.err.toStdString();
    ASSERT_EQ(map.exitCode, 0) << map.err.toStdString();
    const ScanCounts s = countScanCsv(scan.out), m = countScanCsv(map.out);
    ASSERT_EQ(s.rows, 13); // E12 from 1 pF to 10 pF, both ends included
    ASSERT_EQ(m.rows, 49 * 25); // RF 100 kΩ..10 MΩ in E24, CF 220 fF..22 pF in E12
    EXPECT_GT(s.passing, 0);

    const QString sheet
        = run(QStringLiteral("pdftotext"), {QStringLiteral("-raw"), with, "-"}).out.simplified();
    const auto says = [&](const QString &text) {
        EXPECT_TRUE(sheet.contains(text)) << text.toStdString();
    };
    says(QStringLiteral("Scan of CF"));
    says(QStringLiteral("CF (value): 13 values of E12 from 1 pF to 10 pF; the design has 2.2 pF"));
    says(QStringLiteral("Shown: phase margin. %1 of 13 values meet every spec; %2 unstable.")
             .arg(s.passing)
             .arg(s.unstable));
    says(QStringLiteral("Map of RF and CF"));
    says(QStringLiteral("RF (value): 49 values of E24 from 100 kΩ to 10 MΩ; the design has 1 MΩ"));
    says(QStringLiteral("Shown: phase margin. %1 of 1225 pairs meet every spec; %2 unstable.")
             .arg(m.passing)
             .arg(m.unstable));
    EXPECT_FALSE(
        run(QStringLiteral("pdftotext"), {without, "-"}).out.contains(QStringLiteral("Scan of")));
}

TEST(ReviewSheetScans, BadScanTargetIsBadInputAndWritesNothing)
{
    QTemporaryDir tmp;
    ASSERT_TRUE(tmp.isValid());
    const QString pdf = tmp.filePath("sheet.pdf");
    const std::pair<const char *, const char *> cases[] = {
        {"CX", "demo: part CX"},
        {"RL.q", "part RL, field q"},
        {"CF:1x:2p", "part CF, field value"},
        {"CF,CF", "named twice"},
        {"CF,RF,RL", "--scan"},
        {"CF,", "--scan"},
    };
    for (const auto &[target, says] : cases) {
        const CliRun r = loopsketchCli({"export", "demo", "--pdf", pdf, "--scan", target});
        EXPECT_EQ(r.exitCode, 2) << target;
        EXPECT_THAT(r.err.toStdString(), HasSubstr(says)) << target;
        EXPECT_FALSE(QFileInfo::exists(pdf)) << target;
    }
}

} // namespace
