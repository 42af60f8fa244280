#include "exportcommand.h"

#include "cli.h"
#include "sheet/reviewsheet.h"

#include "loopsketch/design/atomicfile.h"
#include "loopsketch/design/designfile.h"

#include <QApplication>
#include <QDir>
#include <QFileInfo>

#include <memory>
#include <optional>
#include <ostream>
#include <utility>

namespace loopsketch::app {

Result<std::vector<std::string>> plotOutputPaths(const std::string &dir, bool svg)
{
    const QFileInfo info(QString::fromStdString(dir));
    if (!info.exists())
        return std::vector<std::string>{};
    if (!info.isDir())
        return Diagnostic{dir, "", "", "cannot write the plots: this is not a directory"};
    std::vector<std::string> paths;
    const ui::PlotFormat format = svg ? ui::PlotFormat::Svg : ui::PlotFormat::Png;
    for (ui::SheetPlot plot : ui::kSheetPlots)
        paths.push_back(QDir(QString::fromStdString(dir))
                            .filePath(ui::sheetPlotFileStem(plot) + ui::plotFileSuffix(format))
                            .toStdString());
    return paths;
}

int runExport(const Design &design, const Analysis &analysis, const ExportRequest &request,
              std::ostream &err)
{
    std::unique_ptr<QApplication> owned;
    if (!QApplication::instance()) {
        if (qEnvironmentVariableIsEmpty("QT_QPA_PLATFORM") && qEnvironmentVariableIsEmpty("DISPLAY")
            && qEnvironmentVariableIsEmpty("WAYLAND_DISPLAY"))
            qputenv("QT_QPA_PLATFORM", "offscreen");
        static int argc = 1;
        static char name[] = "loopsketch";
        static char *argv[] = {name, nullptr};
        owned = std::make_unique<QApplication>(argc, argv);
    }
    // The spread section: worst case and Monte Carlo over the parts' tolerances, when the
    // design has any.
    std::optional<ui::SheetSpread> spread;
    QString error;
    if (!ui::computeSheetSpread(design, request.spreadTrials, request.spreadSeed, request.file,
                                &spread, &error)) {
        err << "loopsketch: " << error.toStdString() << "\n";
        return kExitBadInput;
    }
    const QString shownName = request.file == "demo"
        ? QStringLiteral("demo")
        : QFileInfo(QString::fromStdString(request.file)).fileName();
    if (!ui::renderReviewSheet(design, analysis, QString::fromStdString(request.pdfOut),
                               request.letter ? ui::SheetPageSize::Letter : ui::SheetPageSize::A4,
                               shownName, &error, spread ? &*spread : nullptr)) {
        err << "loopsketch: " << error.toStdString() << "\n";
        return kExitBadInput;
    }
    if (!request.csvOut.empty()) {
        auto target = resolveOutput(request.csvOut, true);
        auto written = target ? writeOutput(*target, sweepToCsv(analysis))
                              : Result<bool>(target.diagnostics());
        if (!written) {
            for (const auto &d : written.diagnostics())
                err << "loopsketch: " << d.file << ": cannot write the sweep: " << d.message
                    << "\n";
            return kExitBadInput;
        }
    }
    const std::pair<const std::string &, ui::PlotFormat> plotDirs[]
        = {{request.svgDir, ui::PlotFormat::Svg}, {request.pngDir, ui::PlotFormat::Png}};
    for (const auto &[dir, format] : plotDirs) {
        if (!dir.empty()
            && !ui::writeSheetPlots(design, analysis, QString::fromStdString(dir), format,
                                    &error)) {
            err << "loopsketch: " << error.toStdString() << "\n";
            return kExitBadInput;
        }
    }
    return kExitOk;
}

} // namespace loopsketch::app
