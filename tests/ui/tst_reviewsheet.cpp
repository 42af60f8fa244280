// `loopsketch export` run headless on the example designs: the review sheet's page count,
// its extracted text against `analyze --json`, the CSV against the sweep, and the errors.
// pdfinfo and pdftotext are Debian's poppler-utils (packaging/build-deps.txt).

#include "clirun.h"
#include "designs.h"
#include "sheetcli.h"

#include "loopsketch/analysis/analysis.h"
#include "loopsketch/base/value.h"
#include "loopsketch/design/candidate.h"
#include "loopsketch/design/designfile.h"

#include <QDir>
#include <QFile>
#include <QFileInfo>
#include <QImage>
#include <QJsonArray>
#include <QJsonDocument>
#include <QJsonObject>
#include <QRegularExpression>
#include <QStringList>
#include <QTemporaryDir>

#include <gmock/gmock.h>
#include <gtest/gtest.h>

#include <algorithm>
#include <cmath>

using testing::HasSubstr;

namespace {

// Formatted the way the review sheet formats them (sheetwriter.cpp's eng(), support/qtadapter's
// degrees()).
QString sheetNumber(double v, std::string_view unit)
{
    return QString::fromStdString(loopsketch::formatEngineering(v, 4, unit));
}

struct SheetCase
{
    const char *design;
    // the layout: first page title to metrics; noise, candidates, spread and plots on the
    // following pages, cautions last
    int pages;
};

// Parts: every field of every part (partSpec() lists them) on one line of the sheet with
// its quantity, its value in engineering notation with the unit, and the RKM code where
// the value has one; a field left out or cut short ("…") fails. Common practice.
void expectEveryPartField(const QString &design, const QString &sheetText)
{
    auto parts = loopsketch::loadDesign(design.toStdString());
    ASSERT_TRUE(parts) << parts.errorText();
    const QStringList sheetLines = sheetText.split('\n');
    const std::string sheet = sheetText.toStdString();
    for (const loopsketch::Part &part : parts->parts) {
        EXPECT_THAT(sheet, HasSubstr(part.id));
        const auto rows = loopsketch::partFieldTexts(part);
        for (const loopsketch::FieldSpec &spec : loopsketch::partSpec(part.type).fields)
            if (spec.kind != loopsketch::ValueKind::Tolerance || part.has(spec.name)) {
                EXPECT_TRUE(std::any_of(rows.begin(), rows.end(),
                                        [&](const auto &r) { return r.field == spec.name; }))
                    << part.id << "." << spec.name;
            }
        for (const loopsketch::PartFieldText &row : rows) {
            // compared without spaces: pdftotext drops the narrow one in "0 F"
            const auto squeezed = [](QString t) {
                return t.remove(QLatin1Char(' '));
            };
            const auto has = [&](const QString &line) {
                return line.contains(QString::fromStdString(" " + row.field + " "))
                    && line.contains(QString::fromStdString(row.label))
                    && squeezed(line).contains(squeezed(QString::fromStdString(row.value)))
                    && line.contains(QString::fromStdString(row.rkm))
                    && !line.contains(QStringLiteral("…"));
            };
            EXPECT_TRUE(std::any_of(sheetLines.begin(), sheetLines.end(), has))
                << part.id << "." << row.field << ": " << row.label << " " << row.value << " "
                << row.rkm;
        }
    }
}

// Provenance on the first page: version, design hash, sweep, temperature, noise band,
// Monte Carlo trials and seed.
void expectProvenance(const std::string &sheet)
{
    const std::string first = sheet.substr(0, sheet.find('\f'));
    EXPECT_THAT(first, HasSubstr("Loopsketch " LOOPSKETCH_PROJECT_VERSION));
    EXPECT_THAT(first, HasSubstr("Design hash"));
    EXPECT_THAT(first, HasSubstr("points per decade"));
    EXPECT_THAT(first, HasSubstr(" K ("));
    EXPECT_THAT(first, HasSubstr("noise band"));
    EXPECT_THAT(first, HasSubstr("2000 trials"));
    EXPECT_THAT(first, HasSubstr("seed 1"));
}

// No heading at the foot of a page without its first lines: the last line of each page
// above the footer is never a section heading.
void expectNoHeadingAtPageFoot(const QString &sheetText)
{
    const QStringList headings{"Sketch",
                               "Parts",
                               "Topology",
                               "Methods side by side (DC)",
                               "Key metrics against the specs",
                               "Noise",
                               "Candidates",
                               "Spread over tolerances",
                               "Plots",
                               "What the model does not cover"};
    const QStringList pageTexts = sheetText.split('\f');
    for (qsizetype p = 0; p < pageTexts.size(); ++p) {
        QStringList lines = pageTexts[p].split('\n');
        lines.removeIf([](const QString &l) {
            return l.trimmed().isEmpty() || l.contains(QStringLiteral("Loopsketch review sheet"));
        });
        if (!lines.isEmpty()) {
            EXPECT_FALSE(headings.contains(lines.last().trimmed()))
                << "page " << p + 1 << " ends with the heading " << lines.last().toStdString();
        }
    }
}

// CSV: the exact gain column against the sweep of the same design, the noise densities'
// columns named with their units.
void expectCsvMatchesSweep(const QString &csv, const QString &designFile,
                           const std::string &outUnit, const std::string &inUnit)
{
    auto design = loopsketch::loadDesign(designFile.toStdString());
    ASSERT_TRUE(design) << design.errorText();
    auto analysis = loopsketch::analyze(*design);
    ASSERT_TRUE(analysis) << analysis.errorText();
    QFile csvFile(csv);
    ASSERT_TRUE(csvFile.open(QIODevice::ReadOnly | QIODevice::Text));
    const QStringList lines = QString::fromUtf8(csvFile.readAll()).split('\n', Qt::SkipEmptyParts);
    ASSERT_EQ(lines.size(), static_cast<qsizetype>(analysis->frequenciesHz.size() + 1));
    const QStringList header = lines.front().split(',');
    const qsizetype fCol = header.indexOf("f_hz"), gCol = header.indexOf("gain_exact_db");
    ASSERT_GE(fCol, 0);
    ASSERT_GE(gCol, 0);
    // The noise densities' columns carry their units as the other columns do.
    const QString outCol
        = QStringLiteral("output_noise_%1_per_rthz").arg(QString::fromStdString(outUnit).toLower());
    const QString inCol
        = QStringLiteral("input_noise_%1_per_rthz").arg(QString::fromStdString(inUnit).toLower());
    const qsizetype nCol = header.indexOf(outCol);
    EXPECT_GE(nCol, 0) << lines.front().toStdString();
    EXPECT_GE(header.indexOf(inCol), 0) << lines.front().toStdString();
    for (std::size_t i = 0; i < analysis->frequenciesHz.size(); ++i) {
        const QStringList cells = lines[static_cast<qsizetype>(i + 1)].split(',');
        ASSERT_EQ(cells.size(), header.size()) << "row " << i;
        bool okF = false, okG = false;
        const double f = cells[fCol].toDouble(&okF), g = cells[gCol].toDouble(&okG);
        ASSERT_TRUE(okF && okG) << "row " << i;
        const double fExpected = analysis->frequenciesHz[i];
        EXPECT_NEAR(f, fExpected, 1e-6 * fExpected) << "row " << i;
        // 20 log10 |G| (common practice); the CSV has 10 significant digits
        const double gExpected = 20.0 * std::log10(std::abs(analysis->curves.gainExact[i]));
        EXPECT_NEAR(g, gExpected, 1e-6 * std::max(1.0, std::abs(gExpected))) << "row " << i;
        if (nCol >= 0 && analysis->noise) {
            const double want = analysis->noise->outputDensity[i];
            EXPECT_NEAR(cells[nCol].toDouble(), want, 1e-8 * want) << "row " << i;
        }
    }
}

class ReviewSheetExport : public testing::TestWithParam<SheetCase>
{
};

TEST_P(ReviewSheetExport, MatchesAnalyzeJsonAndSweep)
{
    const SheetCase c = GetParam();
    QTemporaryDir tmp;
    ASSERT_TRUE(tmp.isValid());
    const QString pdf = tmp.filePath("sheet.pdf"), csv = tmp.filePath("sweep.csv"),
                  svg = tmp.filePath("plots");
    const CliRun exported
        = loopsketchCli({QStringLiteral("export"), designPath(c.design), QStringLiteral("--pdf"),
                         pdf, QStringLiteral("--csv"), csv, QStringLiteral("--svg"), svg});
    ASSERT_EQ(exported.exitCode, 0) << exported.err.toStdString();
    ASSERT_TRUE(QFileInfo::exists(pdf));
    for (const char *stem : {"loop-gain", "impedance", "desensitivity", "step", "poles", "noise"}) {
        QFile f(QDir(svg).filePath(QLatin1String(stem) + ".svg"));
        ASSERT_TRUE(f.open(QIODevice::ReadOnly)) << stem;
        EXPECT_THAT(f.readAll().toStdString(), HasSubstr("<polyline")) << stem;
    }

    const CliRun info = run(QStringLiteral("pdfinfo"), {pdf});
    ASSERT_EQ(info.exitCode, 0) << info.err.toStdString();
    const auto pages = QRegularExpression(QStringLiteral("Pages:\\s+(\\d+)")).match(info.out);
    ASSERT_TRUE(pages.hasMatch());
    const int pageCount = pages.captured(1).toInt();
    EXPECT_EQ(pageCount, c.pages);
    // A4 is 210 mm x 297 mm (ISO 216) = 595 pt x 842 pt, rounded
    EXPECT_THAT(info.out.toStdString(), HasSubstr("595 x 842 pts"));

    const CliRun text = run(QStringLiteral("pdftotext"), {QStringLiteral("-layout"), pdf, "-"});
    ASSERT_EQ(text.exitCode, 0) << text.err.toStdString();
    const std::string sheet = text.out.toStdString();
    for (int i = 1; i <= pageCount; ++i)
        EXPECT_THAT(sheet,
                    HasSubstr(QStringLiteral("page %1 of %2").arg(i).arg(pageCount).toStdString()));
    EXPECT_THAT(sheet, HasSubstr("What the model does not cover"));

    ASSERT_NO_FATAL_FAILURE(expectEveryPartField(designPath(c.design), text.out));
    expectProvenance(sheet);
    expectNoHeadingAtPageFoot(text.out);

    const CliRun json = loopsketchCli({QStringLiteral("analyze"), designPath(c.design), "--json"});
    ASSERT_EQ(json.exitCode, 0) << json.err.toStdString();
    const QJsonObject a = QJsonDocument::fromJson(json.out.toUtf8()).object();
    const std::string unit = a["gain_unit"].toString().toStdString();
    const QJsonValue gain = a["dc"].toObject()["exact"].toObject()["gain"];
    const QJsonValue pm = a["margins"].toObject()["phase_margin_deg"];
    const QJsonValue bw = a["closed_loop"].toObject()["bandwidth_hz"];
    ASSERT_TRUE(gain.isDouble());
    EXPECT_THAT(sheet, HasSubstr(sheetNumber(gain.toDouble(), unit).toStdString()));
    if (pm.isDouble()) {
        EXPECT_THAT(sheet, HasSubstr(loopsketch::formatEngineering(pm.toDouble(), 3) + "°"));
    }
    if (bw.isDouble()) {
        EXPECT_THAT(sheet, HasSubstr(sheetNumber(bw.toDouble(), "Hz").toStdString()));
    }
    EXPECT_THAT(sheet, HasSubstr(a["title"].toString().toStdString()));
    // The A circuit's gain a and β are both on the sheet, so a reviewer can recompute the loop
    // gain T = a·β (handbook relation of the two-port method); a·β is checked against the
    // loop gain `analyze --json` prints, to 1e-9.
    const QJsonObject tp = a["dc"].toObject()["two_port"].toObject();
    if (tp["a"].isDouble() && tp["beta"].isDouble() && tp["loop_gain"].isDouble()) {
        EXPECT_THAT(sheet, HasSubstr("A circuit gain a"));
        EXPECT_THAT(sheet, HasSubstr(sheetNumber(tp["a"].toDouble(), unit).toStdString()));
        const double t = tp["a"].toDouble() * tp["beta"].toDouble();
        EXPECT_NEAR(t, tp["loop_gain"].toDouble(), 1e-9 * std::abs(t));
    }

    // T near the crossover as `analyze --json` lists it, row by row; 180° plus the phase in the
    // |T| = 1 row is the phase margin (definition of phase margin, common practice).
    const QJsonArray nearCrossover = a["margins"].toObject()["loop_gain_near_crossover"].toArray();
    if (pm.isDouble()) {
        EXPECT_FALSE(nearCrossover.isEmpty());
        EXPECT_THAT(sheet, HasSubstr("Loop gain T near the crossings"));
    }
    for (const QJsonValue &v : nearCrossover) {
        const QJsonObject t = v.toObject();
        EXPECT_THAT(sheet, HasSubstr(loopsketch::formatFixed(t["phase_deg"].toDouble(), 2) + "°"));
        if (std::abs(t["magnitude"].toDouble() - 1.0) < 1e-9 && pm.isDouble()) {
            EXPECT_NEAR(180.0 + t["phase_deg"].toDouble(), pm.toDouble(), 1e-9);
        }
    }

    // Noise totals and band as the sheet formats them (4 digits, as eng()), from the same
    // numbers `analyze --json` prints; the largest source's share of the power with it.
    const QJsonObject noise = a["noise"].toObject();
    ASSERT_FALSE(noise.isEmpty());
    const std::string outUnit = noise["output_unit"].toString().toStdString();
    const std::string inUnit = noise["input_unit"].toString().toStdString();
    ASSERT_TRUE(noise["output_rms"].isDouble());
    ASSERT_TRUE(noise["input_rms"].isDouble());
    EXPECT_THAT(sheet,
                HasSubstr("Output noise "
                          + sheetNumber(noise["output_rms"].toDouble(), outUnit).toStdString()
                          + " rms, input-referred "
                          + sheetNumber(noise["input_rms"].toDouble(), inUnit).toStdString()
                          + " rms"));
    const QJsonObject band = noise["band"].toObject();
    EXPECT_THAT(sheet,
                HasSubstr("over " + sheetNumber(band["low_hz"].toDouble(), "Hz").toStdString() + "–"
                          + sheetNumber(band["high_hz"].toDouble(), "Hz").toStdString()));
    double topShare = 0;
    for (const QJsonValue &source : noise["contributions"].toArray())
        topShare = std::max(topShare, source.toObject()["share_pct"].toDouble());
    EXPECT_GT(topShare, 0);
    EXPECT_THAT(sheet, HasSubstr(QString::number(topShare, 'f', 2).toStdString() + " %"));
    EXPECT_THAT(sheet, HasSubstr("Noise density, output and input-referred"));

    expectCsvMatchesSweep(csv, designPath(c.design), outUnit, inUnit);
}

INSTANTIATE_TEST_SUITE_P(ExampleDesigns, ReviewSheetExport,
                         testing::Values(SheetCase{"demo", 6}, SheetCase{"contact-mic-preamp", 6},
                                         SheetCase{"excitation-current-driver", 6},
                                         SheetCase{"gas-cell-current-amplifier", 6},
                                         SheetCase{"turbidity-probe-front-end", 6}),
                         [](const testing::TestParamInfo<SheetCase> &param) {
                             std::string name = param.param.design;
                             std::erase(name, '-');
                             return name;
                         });

// `loopsketch analyze FILE` (text): the noise lines carry core's totals, band and largest
// sources, formatted as the text form formats every value (5 digits).
TEST(AnalyzeText, NoiseTotalsBandAndLargestSources)
{
    const CliRun text = loopsketchCli({QStringLiteral("analyze"), designPath("demo")});
    ASSERT_EQ(text.exitCode, 0) << text.err.toStdString();
    const CliRun json = loopsketchCli({QStringLiteral("analyze"), designPath("demo"), "--json"});
    ASSERT_EQ(json.exitCode, 0) << json.err.toStdString();
    const QJsonObject noise
        = QJsonDocument::fromJson(json.out.toUtf8()).object()["noise"].toObject();
    ASSERT_FALSE(noise.isEmpty());
    const std::string out = text.out.toStdString();
    const auto five = [](double v, std::string_view unit) {
        return loopsketch::formatEngineering(v, 5, unit);
    };
    EXPECT_THAT(out, HasSubstr("Noise ("));
    EXPECT_THAT(
        out, HasSubstr("output, rms               " + five(noise["output_rms"].toDouble(), "V")));
    EXPECT_THAT(out,
                HasSubstr("input-referred, rms       " + five(noise["input_rms"].toDouble(), "A")));
    const QJsonObject band = noise["band"].toObject();
    EXPECT_THAT(out,
                HasSubstr(five(band["low_hz"].toDouble(), "Hz") + " – "
                          + five(band["high_hz"].toDouble(), "Hz")));
    // The demo's noise is set by its 1 MΩ feedback resistor (core: share 99.8 %).
    EXPECT_THAT(out, HasSubstr("largest sources           RF thermal: "));
    const auto lines = QString::fromStdString(out).split('\n');
    const qsizetype at = lines.indexOf(QRegularExpression(QStringLiteral("^  largest sources.*")));
    ASSERT_GE(at, 0);
    ASSERT_LT(at + 2, lines.size());
    EXPECT_THAT(lines[at + 1].toStdString(), HasSubstr("% of the power"));
    EXPECT_THAT(lines[at + 2].toStdString(), HasSubstr("% of the power"));
    EXPECT_THAT(out, testing::Not(HasSubstr("nan")));
}

// An unstable design's sheet says UNSTABLE on its first page, above the sketch, with the
// poles of analyze --json; the closed-loop metrics read unstable and every spec fails.
// A non-inverting amplifier around an ideal gain block (no input or output resistance, as one
// places it on a blank page): z_in has no finite value and z_out is zero at every frequency
// (handbook relation z_out = r_out / (1 + T), r_out = 0), so the log-ohm plot has nothing to
// draw; the sheet says so in words instead of showing an empty plot.
TEST(ReviewSheetImpedance, CurvesWithNothingToDrawAreSaidInWords)
{
    QTemporaryDir tmp;
    ASSERT_TRUE(tmp.isValid());
    const QString design = tmp.filePath("ideal.loopsketch");
    QFile file(design);
    ASSERT_TRUE(file.open(QIODevice::WriteOnly));
    file.write(loopsketch::test::idealNonInvertingDesign("10k").c_str());
    file.close();
    const QString pdf = tmp.filePath("sheet.pdf");
    const CliRun r = loopsketchCli({"export", design, "--pdf", pdf});
    ASSERT_EQ(r.exitCode, 0) << r.err.toStdString();
    const CliRun text = run(QStringLiteral("pdftotext"), {pdf, "-"});
    ASSERT_EQ(text.exitCode, 0) << text.err.toStdString();
    EXPECT_THAT(text.out.toStdString(), HasSubstr("z_out: zero at every frequency"));
    EXPECT_THAT(text.out.toStdString(), HasSubstr("z_in: no finite value to draw"));
    // The demo draws both curves and has no such line.
    const QString demoPdf = tmp.filePath("demo.pdf");
    ASSERT_EQ(loopsketchCli({"export", designPath("demo"), "--pdf", demoPdf}).exitCode, 0);
    const CliRun demo = run(QStringLiteral("pdftotext"), {demoPdf, "-"});
    EXPECT_THAT(demo.out.toStdString(), testing::Not(HasSubstr("at every frequency")));
}

TEST(ReviewSheetUnstable, FirstPageSaysUnstableWithThePoles)
{
    QTemporaryDir tmp;
    ASSERT_TRUE(tmp.isValid());
    const QString design
        = QStringLiteral(LOOPSKETCH_TEST_DATA_DIR "/stability/unstable-preamp.loopsketch");
    const QString pdf = tmp.filePath("sheet.pdf");
    const CliRun r = loopsketchCli({"export", design, "--pdf", pdf});
    ASSERT_EQ(r.exitCode, 0) << r.err.toStdString();
    const CliRun first
        = run(QStringLiteral("pdftotext"),
              {QStringLiteral("-f"), "1", "-l", "1", QStringLiteral("-layout"), pdf, "-"});
    ASSERT_EQ(first.exitCode, 0) << first.err.toStdString();
    const std::string page = first.out.toStdString();
    const auto unstable = page.find("UNSTABLE");
    ASSERT_NE(unstable, std::string::npos) << page;
    EXPECT_LT(unstable, page.find("Sketch"));
    EXPECT_THAT(page, HasSubstr("2 closed-loop poles in the right half-plane"));
    auto loaded = loopsketch::loadDesign(design.toStdString());
    ASSERT_TRUE(loaded.ok());
    auto analysis = loopsketch::analyze(*loaded);
    ASSERT_TRUE(analysis.ok());
    // The sheet writes each right-half-plane pole's real part with three digits.
    ASSERT_EQ(analysis->rhpPoles, 2);
    for (const loopsketch::ClosedLoopPole &p : analysis->poles) {
        if (p.s.real() > 0) {
            EXPECT_THAT(page, HasSubstr(loopsketch::formatEngineering(p.s.real(), 3)));
        }
    }
    const CliRun all = run(QStringLiteral("pdftotext"), {QStringLiteral("-layout"), pdf, "-"});
    const std::string sheet = all.out.toStdString();
    EXPECT_THAT(sheet, HasSubstr("fail: unstable"));
    EXPECT_THAT(sheet, HasSubstr("No noise rms: the loop is unstable."));
    EXPECT_THAT(sheet, ::testing::Not(HasSubstr("nan")));
    EXPECT_THAT(sheet, ::testing::Not(HasSubstr(" pass")));
    const CliRun png = run(QStringLiteral("pdftoppm"),
                           {QStringLiteral("-f"), "1", "-l", "1", "-r", "60", "-png", pdf,
                            QStringLiteral(LOOPSKETCH_SCREENSHOT_DIR "/sheet-unstable")});
    EXPECT_EQ(png.exitCode, 0) << png.err.toStdString();
}

TEST(ReviewSheetSpread, StatesTrialsSeedAndTheNumbersOfSpreadJson)
{
    QTemporaryDir tmp;
    ASSERT_TRUE(tmp.isValid());
    const QString pdf = tmp.filePath("sheet.pdf");
    const CliRun r = loopsketchCli({"export", designPath("demo"), "--pdf", pdf, "--spread-trials",
                                    "700", "--spread-seed", "42"});
    ASSERT_EQ(r.exitCode, 0) << r.err.toStdString();
    const CliRun text = run(QStringLiteral("pdftotext"), {QStringLiteral("-layout"), pdf, "-"});
    ASSERT_EQ(text.exitCode, 0);
    const std::string sheet = text.out.toStdString();
    EXPECT_THAT(sheet, HasSubstr("Spread over tolerances"));
    EXPECT_THAT(sheet, HasSubstr("700 trials (700 completed), uniform distribution, seed 42"));
    EXPECT_THAT(sheet, HasSubstr("all 4 corners")); // RF and CF toleranced: 2^2 vertices

    // The same run by the spread command (same defaults: uniform, no gain block spread).
    const CliRun json = loopsketchCli(
        {"spread", designPath("demo"), "--trials", "700", "--seed", "42", "--json"});
    ASSERT_EQ(json.exitCode, 0) << json.err.toStdString();
    const QJsonObject j = QJsonDocument::fromJson(json.out.toUtf8()).object();
    const std::string unit = j["gain_unit"].toString().toStdString();
    const QJsonObject mc = j["monte_carlo"].toObject();
    const QJsonObject gain = mc["gain"].toObject();
    ASSERT_TRUE(gain["mean"].isDouble());
    EXPECT_THAT(sheet, HasSubstr(sheetNumber(gain["mean"].toDouble(), unit).toStdString()));
    EXPECT_THAT(sheet, HasSubstr(sheetNumber(gain["std"].toDouble(), unit).toStdString()));
    const QJsonObject wcGain = j["worst_case"].toObject()["gain"].toObject();
    EXPECT_THAT(sheet, HasSubstr(sheetNumber(wcGain["min"].toDouble(), unit).toStdString()));
    EXPECT_THAT(sheet, HasSubstr(sheetNumber(wcGain["max"].toDouble(), unit).toStdString()));
    const QJsonObject bw = mc["bandwidth_hz"].toObject();
    EXPECT_THAT(sheet, HasSubstr(sheetNumber(bw["mean"].toDouble(), "Hz").toStdString()));
    ASSERT_TRUE(mc["yield"].isDouble());
    EXPECT_THAT(sheet,
                HasSubstr(QStringLiteral("Yield against the specs: %1 % (%2 of 700")
                              .arg(mc["yield"].toDouble() * 100.0, 0, 'f', 2)
                              .arg(mc["passed"].toInt())
                              .toStdString()));
}

TEST(ReviewSheetSpread, ZeroTrialsOrNoTolerancesLeaveTheSectionOut)
{
    QTemporaryDir tmp;
    ASSERT_TRUE(tmp.isValid());
    const QString withSpread = tmp.filePath("with.pdf"), without = tmp.filePath("without.pdf");
    ASSERT_EQ(loopsketchCli({"export", designPath("demo"), "--pdf", withSpread}).exitCode, 0);
    ASSERT_EQ(
        loopsketchCli({"export", designPath("demo"), "--pdf", without, "--spread-trials", "0"})
            .exitCode,
        0);
    EXPECT_EQ(pageCount(withSpread), 6); // the noise figures (issue 18) take the demo to 6
    EXPECT_LE(pageCount(without), pageCount(withSpread));
    const CliRun text = run(QStringLiteral("pdftotext"), {without, "-"});
    EXPECT_THAT(text.out.toStdString(), testing::Not(HasSubstr("Spread over tolerances")));

    // The demo with every tolerance removed: nothing to spread, so no section and no error.
    QFile in(designPath("demo"));
    ASSERT_TRUE(in.open(QIODevice::ReadOnly));
    QByteArray design = in.readAll();
    design.replace(", \"tolerance\": \"1%\"", "").replace(", \"tolerance\": \"10%\"", "");
    ASSERT_FALSE(design.contains("tolerance"));
    const QString plain = tmp.filePath("plain.loopsketch");
    QFile out(plain);
    ASSERT_TRUE(out.open(QIODevice::WriteOnly));
    out.write(design);
    out.close();
    const QString plainPdf = tmp.filePath("plain.pdf");
    const CliRun r = loopsketchCli({"export", plain, "--pdf", plainPdf});
    ASSERT_EQ(r.exitCode, 0) << r.err.toStdString();
    EXPECT_LE(pageCount(plainPdf), pageCount(withSpread));
    EXPECT_THAT(run(QStringLiteral("pdftotext"), {plainPdf, "-"}).out.toStdString(),
                testing::Not(HasSubstr("Spread over tolerances")));
}

TEST(ReviewSheetSpread, BadSpreadTrialsIsBadInput)
{
    for (const char *n : {"-1", "x", "1000001"}) {
        const CliRun r = loopsketchCli(
            {"export", designPath("demo"), "--pdf", "/tmp/unused.pdf", "--spread-trials", n});
        EXPECT_EQ(r.exitCode, 2) << n;
        EXPECT_THAT(r.err.toStdString(), HasSubstr("--spread-trials")) << n;
    }
}

TEST(ReviewSheetLetter, PagesAreLetterAndNumbered)
{
    QTemporaryDir tmp;
    ASSERT_TRUE(tmp.isValid());
    const QString pdf = tmp.filePath("letter.pdf");
    const CliRun r = loopsketchCli({"export", designPath("demo"), "--letter", "--pdf", pdf});
    ASSERT_EQ(r.exitCode, 0) << r.err.toStdString();
    const CliRun info = run(QStringLiteral("pdfinfo"), {pdf});
    // US Letter is 8.5 in x 11 in = 612 pt x 792 pt (ANSI/ASME Y14.1)
    EXPECT_THAT(info.out.toStdString(), HasSubstr("612 x 792 pts"));
    const auto pages = QRegularExpression(QStringLiteral("Pages:\\s+(\\d+)")).match(info.out);
    ASSERT_TRUE(pages.hasMatch());
    const int n = pages.captured(1).toInt();
    const CliRun text = run(QStringLiteral("pdftotext"), {QStringLiteral("-layout"), pdf, "-"});
    for (int i = 1; i <= n; ++i)
        EXPECT_THAT(text.out.toStdString(),
                    HasSubstr(QStringLiteral("page %1 of %2").arg(i).arg(n).toStdString()));
    EXPECT_THAT(text.out.toStdString(),
                testing::Not(HasSubstr(QStringLiteral("page %1 of").arg(n + 1).toStdString())));
}

TEST(ReviewSheetPlots, PngFilesAreWholeImages)
{
    QTemporaryDir tmp;
    ASSERT_TRUE(tmp.isValid());
    const QString pdf = tmp.filePath("sheet.pdf"), png = tmp.filePath("png");
    const CliRun r = loopsketchCli({"export", designPath("demo"), "--pdf", pdf, "--png", png});
    ASSERT_EQ(r.exitCode, 0) << r.err.toStdString();
    for (const char *stem : {"loop-gain", "impedance", "desensitivity", "step", "poles"}) {
        const QImage image(QDir(png).filePath(QLatin1String(stem) + ".png"));
        ASSERT_FALSE(image.isNull()) << stem;
        // 170 mm x 110 mm at 150 dpi (reviewsheet.cpp), 25.4 mm per inch
        EXPECT_EQ(image.width(), 1004) << stem;
        EXPECT_EQ(image.height(), 650) << stem;
        // Drawn, not blank: the curves and text leave many non-white pixels.
        int inked = 0;
        for (int y = 0; y < image.height(); y += 4)
            for (int x = 0; x < image.width(); x += 4)
                inked += image.pixel(x, y) != qRgb(255, 255, 255);
        EXPECT_GT(inked, 500) << stem;
    }
}

TEST(ReviewSheetPlots, PlotFilesCarryTheCandidatesAsTheSheetDoes)
{
    // The demo's two candidates (resources/designs/demo.loopsketch) are drawn on every plot
    // file, SVG and PNG alike, with the legend entries the sheet and the panels give them.
    QTemporaryDir tmp;
    ASSERT_TRUE(tmp.isValid());
    const QString pdf = tmp.filePath("sheet.pdf"), svg = tmp.filePath("svg"),
                  png = tmp.filePath("png");
    const CliRun r
        = loopsketchCli({"export", designPath("demo"), "--pdf", pdf, "--svg", svg, "--png", png});
    ASSERT_EQ(r.exitCode, 0) << r.err.toStdString();
    const std::pair<const char *, const char *> expected[] = {
        {"loop-gain", ": T, gain"}, {"impedance", ": z_in, z_out"}, {"desensitivity", ": |1 + T|"},
        {"step", ": step"},         {"poles", ": poles"},           {"noise", ": output noise"}};
    for (const auto &[stem, quantities] : expected) {
        QFile f(QDir(svg).filePath(QLatin1String(stem) + ".svg"));
        ASSERT_TRUE(f.open(QIODevice::ReadOnly)) << stem;
        const QString text = QString::fromUtf8(f.readAll());
        for (const char *candidate : {"Fast", "High gain"}) {
            EXPECT_TRUE(text.contains(QLatin1String(candidate) + QLatin1String(quantities)))
                << stem << ": no legend entry for " << candidate;
        }
    }
    // The PNG of the poles shows the candidates' rings: more coloured pixels than the same
    // design without candidates gives.
    auto loaded = loopsketch::loadDesign(designPath("demo").toStdString());
    ASSERT_TRUE(loaded) << loaded.errorText();
    loopsketch::Design bare = *loaded;
    bare.candidates.clear();
    const QString barePath = tmp.filePath("bare.loopsketch"), barePng = tmp.filePath("bare");
    {
        QFile f(barePath);
        ASSERT_TRUE(f.open(QIODevice::WriteOnly));
        f.write(QByteArray::fromStdString(loopsketch::serializeDesign(bare)));
    }
    const CliRun b
        = loopsketchCli({"export", barePath, "--pdf", tmp.filePath("bare.pdf"), "--png", barePng});
    ASSERT_EQ(b.exitCode, 0) << b.err.toStdString();
    const auto coloured = [](const QString &path) {
        const QImage image(path);
        int n = 0;
        for (int y = 0; y < image.height(); ++y)
            for (int x = 0; x < image.width(); ++x)
                n += image.pixelColor(x, y).hsvSaturation() > 100;
        return n;
    };
    const int with = coloured(QDir(png).filePath(QStringLiteral("poles.png")));
    const int without = coloured(QDir(barePng).filePath(QStringLiteral("poles.png")));
    EXPECT_GT(with, without + 100)
        << with << " coloured pixels with candidates, " << without << " without";
}

TEST(ReviewSheetCandidates, ComparisonShowsEachCandidatesAnalysis)
{
    QTemporaryDir tmp;
    ASSERT_TRUE(tmp.isValid());
    const QString pdf = tmp.filePath("sheet.pdf");
    const CliRun r = loopsketchCli({"export", designPath("demo"), "--pdf", pdf});
    ASSERT_EQ(r.exitCode, 0) << r.err.toStdString();
    const std::string sheet
        = run(QStringLiteral("pdftotext"), {QStringLiteral("-layout"), pdf, "-"}).out.toStdString();
    auto design = loopsketch::loadDesign(designPath("demo").toStdString());
    ASSERT_TRUE(design) << design.errorText();
    ASSERT_GE(design->candidates.size(), 2u);
    for (const loopsketch::Candidate &c : design->candidates) {
        auto applied = loopsketch::applyCandidate(*design, c);
        ASSERT_TRUE(applied) << applied.errorText();
        auto a = loopsketch::analyze(*applied);
        ASSERT_TRUE(a) << a.errorText();
        EXPECT_THAT(sheet, HasSubstr(c.name)) << c.name;
        // As core's comparison writes them (report/candidatecomparison.h), the Candidates
        // panel alike.
        ASSERT_TRUE(a->bandwidthHz) << c.name;
        EXPECT_THAT(sheet, HasSubstr(loopsketch::formatEngineering(*a->bandwidthHz, 3, "Hz")))
            << c.name;
        ASSERT_TRUE(a->exact.zIn) << c.name;
        EXPECT_THAT(sheet, HasSubstr(loopsketch::formatEngineering(*a->exact.zIn, 3, "Ω")))
            << c.name;
        ASSERT_TRUE(a->noise && a->noise->outputRms) << c.name;
        EXPECT_THAT(sheet, HasSubstr(loopsketch::formatEngineering(*a->noise->outputRms, 3, "V")))
            << c.name;
    }
}

TEST(ReviewSheetErrors, UnwritablePathLeavesNothing)
{
    QTemporaryDir tmp;
    ASSERT_TRUE(tmp.isValid());
    const QString pdf = tmp.filePath("missing-dir/sheet.pdf");
    const CliRun r = loopsketchCli({"export", designPath("demo"), "--pdf", pdf});
    EXPECT_EQ(r.exitCode, 2);
    EXPECT_THAT(r.err.toStdString(), HasSubstr("cannot write the review sheet"));
    EXPECT_THAT(r.err.toStdString(), HasSubstr(pdf.toStdString()));
    EXPECT_FALSE(QFileInfo::exists(pdf));
    EXPECT_TRUE(QDir(tmp.path()).entryList(QDir::NoDotAndDotDot | QDir::AllEntries).isEmpty());
}

TEST(ReviewSheetErrors, DesignWithDiagnosticsWritesNoFile)
{
    QTemporaryDir tmp;
    ASSERT_TRUE(tmp.isValid());
    QFile in(designPath("demo"));
    ASSERT_TRUE(in.open(QIODevice::ReadOnly));
    QByteArray text = in.readAll();
    const QByteArray good = "\"value\": \"1M\"";
    ASSERT_TRUE(text.contains(good));
    text.replace(good, "\"value\": \"12kk\"");
    const QString bad = tmp.filePath("bad.loopsketch");
    QFile out(bad);
    ASSERT_TRUE(out.open(QIODevice::WriteOnly));
    out.write(text);
    out.close();
    const QString pdf = tmp.filePath("sheet.pdf");
    const CliRun r = loopsketchCli({"export", bad, "--pdf", pdf});
    EXPECT_EQ(r.exitCode, 2);
    EXPECT_THAT(r.err.toStdString(), HasSubstr("RF"));
    EXPECT_THAT(r.err.toStdString(), HasSubstr("12kk"));
    EXPECT_FALSE(QFileInfo::exists(pdf));
}

TEST(ReviewSheetErrors, ExportNeedsPdf)
{
    const CliRun r = loopsketchCli({"export", designPath("demo")});
    EXPECT_EQ(r.exitCode, 2);
    EXPECT_THAT(r.err.toStdString(), HasSubstr("--pdf"));
}

} // namespace

// `revision` is shown as the design file writes it, and left out when it gives none (never
// guessed from the title or the notes, whatever they say).
TEST(ReviewSheetRevision, AsWrittenOrLeftOut)
{
    auto design = loopsketch::loadDesign(designPath("demo").toStdString());
    ASSERT_TRUE(design) << design.errorText();
    ASSERT_TRUE(design->revision.empty());
    QTemporaryDir tmp;
    ASSERT_TRUE(tmp.isValid());
    const auto sheetOf = [&](const loopsketch::Design &d) {
        const QString file = tmp.filePath("d.loopsketch"), pdf = tmp.filePath("d.pdf");
        QFile f(file);
        EXPECT_TRUE(f.open(QIODevice::WriteOnly));
        f.write(QByteArray::fromStdString(loopsketch::serializeDesign(d)));
        f.close();
        const CliRun r = run(QStringLiteral(LOOPSKETCH_BIN),
                             {QStringLiteral("export"), file, QStringLiteral("--pdf"), pdf,
                              QStringLiteral("--spread-trials"), QStringLiteral("0")});
        EXPECT_EQ(r.exitCode, 0) << r.err.toStdString();
        return run(QStringLiteral("pdftotext"), {QStringLiteral("-layout"), pdf, "-"})
            .out.toStdString();
    };
    loopsketch::Design d = *design;
    d.notes += " Rev Z appears in the notes.";
    const std::string without = sheetOf(d);
    EXPECT_THAT(without, testing::Not(HasSubstr("Revision")));
    EXPECT_THAT(without, testing::Not(HasSubstr("not stated")));
    d.revision = "B.7 (bench)";
    const std::string with = sheetOf(d);
    EXPECT_THAT(with, HasSubstr("Revision"));
    EXPECT_THAT(with, HasSubstr("B.7 (bench)"));
}
