// Exports from the GUI (File > Export): the review sheet, the sweep and the plots written
// from the open document must be what `loopsketch export` writes for the same design, and a
// failed export leaves nothing behind. pdftotext and pdfinfo are Debian's poppler-utils.

#include "clirun.h"
#include "faultinjection.h"

#include "support/qtadapter.h"
#include "window/designdocument.h"
#include "window/exportactions.h"

#include "loopsketch/analysis/analysis.h"
#include "loopsketch/design/designfile.h"

#include <QApplication>
#include <QDir>
#include <QFile>
#include <QFileInfo>
#include <QImage>
#include <QRegularExpression>
#include <QTemporaryDir>

#include <gmock/gmock.h>
#include <gtest/gtest.h>

#include <csignal>

#include <sys/resource.h>

using namespace loopsketch;
using namespace loopsketch::ui;
using ::testing::HasSubstr;

namespace {

const QString kDemo = QStringLiteral(LOOPSKETCH_DESIGNS_DIR "/demo.loopsketch");

QByteArray readAll(const QString &path)
{
    QFile f(path);
    return f.open(QIODevice::ReadOnly) ? f.readAll() : QByteArray();
}

int pdfPages(const QString &pdf)
{
    const CliRun info = run(QStringLiteral("pdfinfo"), {pdf});
    const auto m = QRegularExpression(QStringLiteral("Pages:\\s+(\\d+)")).match(info.out);
    return m.hasMatch() ? m.captured(1).toInt() : -1;
}

QString pdfText(const QString &pdf)
{
    return run(QStringLiteral("pdftotext"), {QStringLiteral("-layout"), pdf, QStringLiteral("-")})
        .out;
}

class GuiExport : public ::testing::Test
{
protected:
    void SetUp() override
    {
        ASSERT_TRUE(tmp.isValid());
        auto design = loadDesign(toStdString(kDemo));
        ASSERT_TRUE(design) << design.errorText();
        document.reset(*design, kDemo);
        EXPECT_TRUE(document.waitForAnalysis());
        ASSERT_NE(document.analysis(), nullptr);
    }

    QTemporaryDir tmp;
    DesignDocument document;
};

TEST_F(GuiExport, ReviewSheetEqualsCommandLineSheet)
{
    const QString gui = tmp.filePath("gui.pdf"), cli = tmp.filePath("cli.pdf");
    QString error;
    ASSERT_TRUE(exportReviewSheet(document, gui, SheetPageSize::A4,
                                  QStringLiteral("demo.loopsketch"), &error))
        << error.toStdString();
    const CliRun r = run(QStringLiteral(LOOPSKETCH_BIN), {"export", kDemo, "--pdf", cli});
    ASSERT_EQ(r.exitCode, 0) << r.err.toStdString();
    const int pages = pdfPages(gui);
    EXPECT_GE(pages, 3);
    EXPECT_EQ(pages, pdfPages(cli));
    const QString text = pdfText(gui);
    EXPECT_THAT(text.toStdString(), HasSubstr("demo.loopsketch"));
    EXPECT_EQ(text, pdfText(cli)); // same numbers, layout, date and content hash
}

TEST_F(GuiExport, SweepCsvEqualsCoreSweep)
{
    const QString csv = tmp.filePath("sweep.csv");
    QString error;
    ASSERT_TRUE(exportSweepCsv(document, csv, &error)) << error.toStdString();
    auto analysis = analyze(document.design(), toStdString(kDemo));
    ASSERT_TRUE(analysis) << analysis.errorText();
    EXPECT_EQ(readAll(csv).toStdString(), sweepToCsv(*analysis));
}

TEST_F(GuiExport, PlotsInBothFormats)
{
    QString error;
    const QString svg = tmp.filePath("svg"), png = tmp.filePath("png");
    ASSERT_TRUE(exportPlots(document, svg, PlotFormat::Svg, &error)) << error.toStdString();
    ASSERT_TRUE(exportPlots(document, png, PlotFormat::Png, &error)) << error.toStdString();
    for (SheetPlot plot : kSheetPlots) {
        const QString stem = sheetPlotFileStem(plot);
        EXPECT_THAT(readAll(QDir(svg).filePath(stem + ".svg")).toStdString(), HasSubstr("<svg"))
            << stem.toStdString();
        EXPECT_FALSE(QImage(QDir(png).filePath(stem + ".png")).isNull()) << stem.toStdString();
    }
}

TEST_F(GuiExport, DesignWithDiagnosticsWritesNothing)
{
    document.removeParts({"PD1"}); // no signal source: the design cannot be analysed
    EXPECT_TRUE(document.waitForAnalysis());
    ASSERT_FALSE(document.lastDiagnostics().isEmpty());
    const QString pdf = tmp.filePath("sheet.pdf"), csv = tmp.filePath("sweep.csv");
    QString error;
    EXPECT_FALSE(exportReviewSheet(document, pdf, SheetPageSize::A4, "demo", &error));
    EXPECT_THAT(error.toStdString(), HasSubstr("nothing was exported"));
    EXPECT_THAT(error.toStdString(), HasSubstr("source"));
    EXPECT_FALSE(exportSweepCsv(document, csv, &error));
    EXPECT_FALSE(exportPlots(document, tmp.filePath("plots"), PlotFormat::Png, &error));
    EXPECT_TRUE(QDir(tmp.path()).entryList(QDir::NoDotAndDotDot | QDir::AllEntries).isEmpty());
}

TEST_F(GuiExport, UnwritablePathNamesItAndLeavesNothing)
{
    const QString pdf = tmp.filePath("no-such-folder/sheet.pdf");
    QString error;
    EXPECT_FALSE(exportReviewSheet(document, pdf, SheetPageSize::A4, "demo", &error));
    EXPECT_THAT(error.toStdString(), HasSubstr(pdf.toStdString()));
    EXPECT_TRUE(QDir(tmp.path()).entryList(QDir::NoDotAndDotDot | QDir::AllEntries).isEmpty());
}

// A reader (a PDF viewer, a mail client) holding the old sheet open keeps reading the old
// file whole; the path gets the complete new sheet, never a mix (atomic replace).
TEST_F(GuiExport, SheetOpenElsewhereIsReplacedWhole)
{
    const QString pdf = tmp.filePath("sheet.pdf");
    const QByteArray old(100000, 'x');
    {
        QFile f(pdf);
        ASSERT_TRUE(f.open(QIODevice::WriteOnly));
        ASSERT_EQ(f.write(old), old.size());
    }
    QFile reader(pdf);
    ASSERT_TRUE(reader.open(QIODevice::ReadOnly));
    ASSERT_EQ(reader.read(10), old.left(10));
    QString error;
    ASSERT_TRUE(exportReviewSheet(document, pdf, SheetPageSize::A4, "demo", &error))
        << error.toStdString();
    EXPECT_EQ(reader.readAll(), old.mid(10));
    EXPECT_TRUE(readAll(pdf).startsWith("%PDF-"));
    EXPECT_GE(pdfPages(pdf), 3);
    EXPECT_EQ(QDir(tmp.path()).entryList(QDir::NoDotAndDotDot | QDir::AllEntries),
              QStringList{QStringLiteral("sheet.pdf")});
}

// File > Export onto the open design's own file is refused before any work, in any spelling.
TEST_F(GuiExport, ExportOntoTheOpenDesignIsRefused)
{
    const QString design = tmp.filePath("mine.loopsketch");
    ASSERT_TRUE(QFile::copy(kDemo, design));
    auto loaded = loadDesign(toStdString(design));
    ASSERT_TRUE(loaded) << loaded.errorText();
    document.reset(*loaded, design);
    EXPECT_TRUE(document.waitForAnalysis());
    const QByteArray before = readAll(design);
    ASSERT_TRUE(QFile::link(design, tmp.filePath("link.pdf")));
    QString error;
    for (const QString &path :
         {design, tmp.filePath("./mine.loopsketch"), tmp.filePath("link.pdf")}) {
        EXPECT_FALSE(exportReviewSheet(document, path, SheetPageSize::A4, "mine", &error))
            << path.toStdString();
        EXPECT_THAT(error.toStdString(), HasSubstr("refused"));
        EXPECT_THAT(error.toStdString(), HasSubstr(path.toStdString()));
        EXPECT_FALSE(exportSweepCsv(document, path, &error)) << path.toStdString();
        EXPECT_THAT(error.toStdString(), HasSubstr("refused"));
        EXPECT_EQ(readAll(design), before) << path.toStdString();
    }
}

// A file-size limit (RLIMIT_FSIZE, write() fails with EFBIG once SIGXFSZ is ignored, as
// app/main.cpp does) while File > Export writes: the previous files stay, the message names
// the path and the reason, no temporary file remains.
TEST_F(GuiExport, SizeLimitDuringExportKeepsThePreviousFiles)
{
    const QString pdf = tmp.filePath("sheet.pdf"), csv = tmp.filePath("sweep.csv");
    const QString plots = tmp.filePath("plots");
    ASSERT_TRUE(QDir().mkpath(plots));
    const QString png
        = QDir(plots).filePath(sheetPlotFileStem(kSheetPlots[0]) + plotFileSuffix(PlotFormat::Png));
    const QByteArray previous("previous export, must survive\n");
    for (const QString &path : {pdf, csv, png}) {
        QFile f(path);
        ASSERT_TRUE(f.open(QIODevice::WriteOnly));
        ASSERT_EQ(f.write(previous), previous.size());
    }
    const QStringList entries
        = QDir(tmp.path()).entryList(QDir::NoDotAndDotDot | QDir::AllEntries | QDir::Hidden);

    loopsketch::test::FileSizeLimit limit(4096);
    ASSERT_TRUE(limit.ok());
    QString pdfError, csvError, pngError;
    const bool pdfOk = exportReviewSheet(document, pdf, SheetPageSize::A4, "demo", &pdfError);
    const bool csvOk = exportSweepCsv(document, csv, &csvError);
    const bool pngOk = exportPlots(document, plots, PlotFormat::Png, &pngError);
    limit.lift();

    EXPECT_FALSE(pdfOk);
    EXPECT_FALSE(csvOk);
    EXPECT_FALSE(pngOk);
    const std::pair<QString, QString> cases[] = {{pdf, pdfError}, {csv, csvError}, {png, pngError}};
    for (const auto &[path, error] : cases) {
        EXPECT_THAT(error.toStdString(), HasSubstr(path.toStdString()));
        EXPECT_THAT(error.toStdString(), HasSubstr("File too large"));
        EXPECT_EQ(readAll(path), previous) << path.toStdString();
    }
    EXPECT_EQ(QDir(tmp.path()).entryList(QDir::NoDotAndDotDot | QDir::AllEntries | QDir::Hidden),
              entries);
    EXPECT_EQ(QDir(plots).entryList(QDir::NoDotAndDotDot | QDir::AllEntries | QDir::Hidden),
              QStringList{QFileInfo(png).fileName()});
}

} // namespace
