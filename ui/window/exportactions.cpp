#include "window/exportactions.h"

#include "support/outputfile.h"
#include "support/qtadapter.h"
#include "window/designdocument.h"

#include "loopsketch/analysis/analysis.h"
#include "loopsketch/design/designfile.h"

#include <QDir>
#include <QFileDialog>
#include <QFileInfo>
#include <QMenu>
#include <QMessageBox>

namespace loopsketch::ui {

namespace {

/// The analysis export writes: the command line's options on the current design.
std::optional<Analysis> analyseForExport(const DesignDocument &document, QString *error)
{
    auto result = analyze(document.design(), toStdString(document.filePath()));
    if (!result) {
        if (error)
            *error = QStringLiteral("The design has problems, so nothing was exported:\n%1")
                         .arg(toQString(result.errorText()));
        return std::nullopt;
    }
    return std::move(result).value();
}

void reportFailure(QWidget *parent, const QString &what, const QString &error)
{
    QMessageBox::warning(parent, QObject::tr("Export %1").arg(what), error);
}

} // namespace

bool exportReviewSheet(const DesignDocument &document, const QString &path, SheetPageSize pageSize,
                       const QString &shownName, QString *error, const SheetSpread *spread)
{
    if (!checkOutputPath(path, QStringLiteral("review sheet"), error, document.filePath()))
        return false;
    const auto analysis = analyseForExport(document, error);
    if (!analysis)
        return false;
    std::optional<SheetSpread> defaultSpread;
    if (!spread) {
        if (!computeSheetSpread(document.design(), kSheetSpreadTrials, kSheetSpreadSeed,
                                toStdString(document.filePath()), &defaultSpread, error))
            return false;
        spread = defaultSpread ? &*defaultSpread : nullptr;
    }
    return renderReviewSheet(document.design(), *analysis, path, pageSize, shownName, error,
                             spread);
}

bool exportSweepCsv(const DesignDocument &document, const QString &path, QString *error)
{
    const QString what = QStringLiteral("sweep");
    if (!checkOutputPath(path, what, error, document.filePath()))
        return false;
    const auto analysis = analyseForExport(document, error);
    if (!analysis)
        return false;
    const std::string csv = sweepToCsv(*analysis);
    return writeOutputFile(path, QByteArray(csv.data(), qsizetype(csv.size())), what, error,
                           document.filePath());
}

bool exportPlots(const DesignDocument &document, const QString &dir, PlotFormat format,
                 QString *error)
{
    if (QFileInfo(dir).isDir()) {
        for (SheetPlot plot : kSheetPlots) {
            const QString path
                = QDir(dir).filePath(sheetPlotFileStem(plot) + plotFileSuffix(format));
            if (!checkOutputPath(path, QStringLiteral("plot"), error, document.filePath()))
                return false;
        }
    }
    const auto analysis = analyseForExport(document, error);
    return analysis && writeSheetPlots(document.design(), *analysis, dir, format, error);
}

void addExportMenu(QMenu *menu, QWidget *parent, const DesignDocument *document,
                   std::function<QString()> shownName, std::function<const SheetSpread *()> spread)
{
    QMenu *exportMenu = menu->addMenu(QObject::tr("E&xport"));
    exportMenu->addAction(QObject::tr("Review sheet (PDF)…"), parent, [=] {
        const QString a4 = QObject::tr("PDF, A4 (*.pdf)");
        const QString letter = QObject::tr("PDF, US Letter (*.pdf)");
        QString filter = a4;
        QString path = QFileDialog::getSaveFileName(parent, QObject::tr("Export review sheet"),
                                                    QString(), a4 + ";;" + letter, &filter);
        if (path.isEmpty())
            return;
        if (!path.endsWith(QStringLiteral(".pdf"), Qt::CaseInsensitive))
            path += QStringLiteral(".pdf");
        QString error;
        if (!exportReviewSheet(*document, path,
                               filter == letter ? SheetPageSize::Letter : SheetPageSize::A4,
                               shownName(), &error, spread ? spread() : nullptr))
            reportFailure(parent, QObject::tr("review sheet"), error);
    });
    exportMenu->addAction(QObject::tr("Sweep (CSV)…"), parent, [=] {
        QString path = QFileDialog::getSaveFileName(parent, QObject::tr("Export sweep"), QString(),
                                                    QObject::tr("CSV (*.csv)"));
        if (path.isEmpty())
            return;
        if (!path.endsWith(QStringLiteral(".csv"), Qt::CaseInsensitive))
            path += QStringLiteral(".csv");
        QString error;
        if (!exportSweepCsv(*document, path, &error))
            reportFailure(parent, QObject::tr("sweep"), error);
    });
    const std::pair<QString, PlotFormat> formats[]
        = {{QObject::tr("Plots (SVG)…"), PlotFormat::Svg},
           {QObject::tr("Plots (PNG)…"), PlotFormat::Png}};
    for (const auto &[label, format] : formats) {
        exportMenu->addAction(label, parent, [=] {
            const QString dir = QFileDialog::getExistingDirectory(
                parent, QObject::tr("Export plots into folder"));
            if (dir.isEmpty())
                return;
            QString error;
            if (!exportPlots(*document, dir, format, &error))
                reportFailure(parent, QObject::tr("plots"), error);
        });
    }
}

} // namespace loopsketch::ui
