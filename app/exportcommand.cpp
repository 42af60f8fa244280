#include "exportcommand.h"

#include "cli.h"
#include "reviewsheet.h"

#include "loopsketch/designfile.h"
#include "loopsketch/spread.h"

#include <QApplication>
#include <QFileInfo>

#include <memory>
#include <optional>
#include <ostream>

namespace loopsketch::app {

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
    // The spread section: worst case and Monte Carlo over the parts' tolerances (uniform, no
    // gain block spread), when the design has any.
    std::optional<ui::SheetSpread> spread;
    if (request.spreadTrials > 0) {
        SpreadOptions options;
        options.trials = request.spreadTrials;
        options.seed = request.spreadSeed;
        if (spreadQuantities(design, options, request.file)) {
            auto worst = worstCase(design, options, request.file);
            auto mc = worst ? monteCarlo(design, options, request.file) : worst.diagnostics();
            if (!worst || !mc) {
                err << "loopsketch: " << (worst ? mc.errorText() : worst.errorText()) << "\n";
                return kExitBadInput;
            }
            spread = ui::SheetSpread{*worst, *mc};
        }
    }
    QString error;
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
        auto written = writeFileAtomically(request.csvOut, sweepToCsv(analysis));
        if (!written) {
            err << "loopsketch: " << written.errorText() << "\n";
            return kExitBadInput;
        }
    }
    if (!request.svgDir.empty()
        && !ui::writeSheetPlotsSvg(analysis, QString::fromStdString(request.svgDir), &error)) {
        err << "loopsketch: " << error.toStdString() << "\n";
        return kExitBadInput;
    }
    return kExitOk;
}

} // namespace loopsketch::app
