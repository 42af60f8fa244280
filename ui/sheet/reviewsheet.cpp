#include "sheet/reviewsheet.h"

#include "sheet/sheetcandidates.h"
#include "sheet/sheetscans.h"
#include "sheet/sheetsections.h"
#include "sheet/sheetwriter.h"
#include "support/outputfile.h"

#include "loopsketch/design/designfile.h"

#include <QBuffer>
#include <QDir>
#include <QImage>
#include <QPainter>
#include <QPdfWriter>
#include <QSvgGenerator>

#include <cmath>

namespace loopsketch::ui {

using namespace sheet;

QString revisionText(const Design &design)
{
    return q(design.revision);
}

QString designContentHash(const Design &design)
{
    const std::string text = serializeDesign(design);
    std::uint32_t h = 2166136261u; // FNV-1a offset basis and prime (32 bit)
    for (unsigned char c : text) {
        h ^= c;
        h *= 16777619u;
    }
    return QStringLiteral("%1").arg(h, 8, 16, QLatin1Char('0'));
}

namespace {

int paintSheet(QPainter *p, QPaintDevice *device, QPdfWriter *pdf, QSizeF pageMm, double k,
               int totalPages, const Design &d, const Analysis &a, const QString &fileName,
               const SheetSpread *spread, const std::vector<SheetCandidate> &candidates,
               const std::vector<SheetScan> &scans)
{
    SheetWriter w(p, device, pdf, pageMm, k, totalPages);
    titleBlock(w, d, a, fileName, spread);
    warningsSection(w, a);
    sketchSection(w, d);
    partsSection(w, d);
    topologySection(w, a);
    methodSection(w, a);
    metricsSection(w, d, a);
    loopGainSection(w, a);
    noiseSection(w, a);
    candidatesSection(w, d, candidates);
    spreadSection(w, d, a, spread);
    plotsSection(w, a, sheetOverlays(candidates));
    scansSection(w, scans);
    cautionsSection(w);
    w.finish();
    return w.page();
}

void setUpWriter(QPdfWriter &pdf, SheetPageSize size, const QString &title)
{
    pdf.setPageSize(QPageSize(size == SheetPageSize::A4 ? QPageSize::A4 : QPageSize::Letter));
    pdf.setPageMargins(QMarginsF(15, 14, 15, 12), QPageLayout::Millimeter);
    pdf.setTitle(title);
    pdf.setCreator(QStringLiteral("Loopsketch"));
}

QSizeF paintSizeMm(const QPdfWriter &pdf)
{
    return pdf.pageLayout().paintRect(QPageLayout::Millimeter).size();
}

int pageCount(const Design &design, const Analysis &analysis, SheetPageSize pageSize,
              const SheetSpread *spread, const std::vector<SheetCandidate> &candidates,
              const std::vector<SheetScan> &scans)
{
    QPdfWriter pdf(QString{});
    setUpWriter(pdf, pageSize, {});
    return paintSheet(nullptr, &pdf, nullptr, paintSizeMm(pdf), pdf.resolution() / 25.4, 0, design,
                      analysis, {}, spread, candidates, scans);
}

} // namespace

bool computeSheetSpread(const Design &design, int trials, std::uint64_t seed,
                        const std::string &file, std::optional<SheetSpread> *out, QString *error)
{
    out->reset();
    if (trials <= 0)
        return true;
    SpreadOptions options;
    options.trials = trials;
    options.seed = seed;
    if (!spreadQuantities(design, options, file))
        return true;
    auto worst = worstCase(design, options, file);
    if (!worst) {
        if (error)
            *error = q(worst.errorText());
        return false;
    }
    auto mc = monteCarlo(design, options, file);
    if (!mc) {
        if (error)
            *error = q(mc.errorText());
        return false;
    }
    *out = SheetSpread{std::move(worst).value(), std::move(mc).value()};
    return true;
}

int reviewSheetPageCount(const Design &design, const Analysis &analysis, SheetPageSize pageSize,
                         const SheetSpread *spread, const std::vector<SheetScan> &scans)
{
    return pageCount(design, analysis, pageSize, spread, sheetCandidates(design, analysis), scans);
}

bool renderReviewSheet(const Design &design, const Analysis &analysis, const QString &path,
                       SheetPageSize pageSize, const QString &fileName, QString *error,
                       const SheetSpread *spread, const std::vector<SheetScan> &scans)
{
    // The candidates are analysed once, for the measuring pass and the drawing alike.
    const std::vector<SheetCandidate> candidates = sheetCandidates(design, analysis);
    const int pages = pageCount(design, analysis, pageSize, spread, candidates, scans);
    // Rendered whole into memory first: QPdfWriter reports no write errors, so the bytes go to
    // disk through the checked writer, and only a finished document (trailer written) does.
    QBuffer buffer;
    buffer.open(QIODevice::WriteOnly);
    {
        QPdfWriter pdf(&buffer);
        setUpWriter(pdf, pageSize, q(design.title));
        QPainter painter;
        if (!painter.begin(&pdf)) {
            if (error)
                *error = QStringLiteral("%1: cannot write the review sheet: cannot start the PDF")
                             .arg(path);
            return false;
        }
        paintSheet(&painter, &pdf, &pdf, paintSizeMm(pdf), pdf.resolution() / 25.4, pages, design,
                   analysis, fileName, spread, candidates, scans);
        if (!painter.end()) {
            if (error)
                *error = QStringLiteral("%1: cannot write the review sheet: the PDF could not be "
                                        "finished")
                             .arg(path);
            return false;
        }
    }
    const QByteArray &bytes = buffer.data();
    if (!bytes.startsWith("%PDF-") || !bytes.trimmed().endsWith("%%EOF")) {
        if (error)
            *error = QStringLiteral("%1: cannot write the review sheet: the PDF came out "
                                    "incomplete (%2 bytes)")
                         .arg(path)
                         .arg(bytes.size());
        return false;
    }
    return writeOutputFile(path, bytes, QStringLiteral("review sheet"), error);
}

QString plotFileSuffix(PlotFormat format)
{
    return format == PlotFormat::Svg ? QStringLiteral(".svg") : QStringLiteral(".png");
}

bool writeSheetPlots(const Design &design, const Analysis &analysis, const QString &dir,
                     PlotFormat format, QString *error)
{
    const std::vector<SheetCandidate> candidates = sheetCandidates(design, analysis);
    const std::vector<SheetOverlay> overlays = sheetOverlays(candidates);
    if (!QDir().mkpath(dir)) {
        if (error)
            *error = QStringLiteral("%1: cannot create the directory").arg(dir);
        return false;
    }
    // SVG at 90 dpi keeps the drawing's nominal size in viewers; PNG at 150 dpi is sharp
    // enough for slides and documents without being huge.
    const int resolution = format == PlotFormat::Svg ? 90 : 150;
    const double k = resolution / 25.4;
    const QSizeF sizeMm(170, 110);
    const QSize px(static_cast<int>(std::lround(sizeMm.width() * k)),
                   static_cast<int>(std::lround(sizeMm.height() * k)));
    const QRectF plotRect(3 * k, 3 * k, (sizeMm.width() - 6) * k, (sizeMm.height() - 6) * k);
    for (SheetPlot plot : kSheetPlots) {
        const QString path = QDir(dir).filePath(sheetPlotFileStem(plot) + plotFileSuffix(format));
        // Rendered into memory, checked, then handed to the one checked writer.
        QBuffer buffer;
        buffer.open(QIODevice::WriteOnly);
        bool rendered = false;
        if (format == PlotFormat::Svg) {
            QSvgGenerator svg;
            svg.setOutputDevice(&buffer);
            svg.setResolution(resolution);
            svg.setSize(px);
            svg.setViewBox(QRect(QPoint(0, 0), px));
            svg.setTitle(q(analysis.title) + QStringLiteral(" — ") + sheetPlotFileStem(plot));
            QPainter painter;
            if (painter.begin(&svg)) {
                painter.fillRect(QRectF(QPointF(0, 0), QSizeF(px)), Qt::white);
                drawSheetPlot(painter, plotRect, k, plot, analysis, overlays);
                rendered = painter.end() && buffer.data().trimmed().endsWith("</svg>");
            }
        } else {
            QImage image(px, QImage::Format_RGB32);
            const int dotsPerMetre = static_cast<int>(std::lround(resolution / 0.0254));
            image.setDotsPerMeterX(dotsPerMetre); // point-sized fonts scale with the image
            image.setDotsPerMeterY(dotsPerMetre);
            image.fill(Qt::white);
            QPainter painter;
            if (painter.begin(&image)) {
                painter.setRenderHint(QPainter::Antialiasing);
                painter.setRenderHint(QPainter::TextAntialiasing);
                drawSheetPlot(painter, plotRect, k, plot, analysis, overlays);
                if (painter.end()) {
                    image.setText(QStringLiteral("Title"),
                                  q(analysis.title) + QStringLiteral(" — ")
                                      + sheetPlotFileStem(plot));
                    rendered = image.save(&buffer, "PNG") && !buffer.data().isEmpty();
                }
            }
        }
        if (!rendered) {
            if (error)
                *error = QStringLiteral("%1: cannot write the plot: rendering it failed").arg(path);
            return false;
        }
        if (!writeOutputFile(path, buffer.data(), QStringLiteral("plot"), error))
            return false;
    }
    return true;
}

} // namespace loopsketch::ui
