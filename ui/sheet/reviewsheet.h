#pragma once

// The review sheet: a vector PDF of one design and its analysis for a design review, and
// the same plots as SVG files. Every number comes from core's Analysis; this only lays out.

#include "loopsketch/analysis/analysis.h"
#include "loopsketch/analysis/spread.h"
#include "loopsketch/design/design.h"

#include <QRectF>
#include <QString>

#include <cstdint>
#include <optional>
#include <string>
#include <vector>

class QPainter;

namespace loopsketch::ui {

enum class SheetPageSize { A4, Letter };

/// Spread results for the sheet: worst case and Monte Carlo of the sheet's design.
struct SheetSpread
{
    WorstCaseResult worstCase;
    MonteCarloResult monteCarlo;
};

/// The spread a sheet carries when no run is given: Monte Carlo trials and seed (uniform over
/// each part's tolerance, no gain block spread), the defaults of `loopsketch export`.
inline constexpr int kSheetSpreadTrials = kDefaultMonteCarloTrials;
inline constexpr std::uint64_t kSheetSpreadSeed = 1;

/// Worst case and Monte Carlo of `design` for the sheet with `trials` and `seed`. Sets `out`
/// to nullopt when the design has nothing to spread (no tolerances) or `trials` is 0. On a
/// failure of core returns false with its diagnostics in `error`.
bool computeSheetSpread(const Design &design, int trials, std::uint64_t seed,
                        const std::string &file, std::optional<SheetSpread> *out, QString *error);

/// The plots of the sheet, in sheet order.
enum class SheetPlot { LoopGain, Impedance, Desensitivity, Step, Poles, Noise };

/// All plots, in sheet order.
inline constexpr SheetPlot kSheetPlots[]
    = {SheetPlot::LoopGain, SheetPlot::Impedance, SheetPlot::Desensitivity,
       SheetPlot::Step,     SheetPlot::Poles,     SheetPlot::Noise};

/// File name stem of a plot's SVG ("loop-gain", "impedance" ...).
QString sheetPlotFileStem(SheetPlot plot);

/// A candidate's curves drawn over a plot, in the candidate's overlay colour and dash.
struct SheetOverlay
{
    QString name; ///< the candidate's name, in the legend before the quantity
    const Analysis *analysis = nullptr;
};

/// Draws one plot (title, legend, axes, curves) into `rect` (device units); `unitsPerMm`
/// converts the sheet's millimetre sizes to device units. Curves are named, coloured and
/// dashed from the one curve table (support/plotstyle.h), as on screen; each overlay adds the
/// candidate's curves, labelled "candidate: quantity".
void drawSheetPlot(QPainter &painter, const QRectF &rect, double unitsPerMm, SheetPlot plot,
                   const Analysis &analysis, const std::vector<SheetOverlay> &overlays = {});

/// The text of the first revision mention in the notes (e.g. "rev B"), else in the title;
/// empty when neither has one.
QString revisionText(const Design &design);

/// FNV-1a (32 bit) of the design's saved text, as 8 lower-case hex digits.
QString designContentHash(const Design &design);

/// Writes the review sheet as PDF to `path`: rendered into memory, checked to be a finished
/// PDF, then written by core's output writer (atomic for a regular file, so no partial file
/// and the previous one kept on failure; direct for a device or FIFO). `fileName` is shown in the
/// title block. `spread`, when given, adds the spread section. On failure returns false and sets
/// `error` to a message naming the path. Needs a QApplication (the sketch is a scene).
bool renderReviewSheet(const Design &design, const Analysis &analysis, const QString &path,
                       SheetPageSize pageSize, const QString &fileName, QString *error,
                       const SheetSpread *spread = nullptr);

/// The number of pages renderReviewSheet writes for this design, page size and spread.
int reviewSheetPageCount(const Design &design, const Analysis &analysis, SheetPageSize pageSize,
                         const SheetSpread *spread = nullptr);

/// File formats of the plot export.
enum class PlotFormat { Svg, Png };

/// ".svg" / ".png".
QString plotFileSuffix(PlotFormat format);

/// Writes one file per plot (vector SVG, or PNG at 150 dpi) into directory `dir` (created
/// when missing), each rendered into memory and written by core's output writer. The plots
/// carry the design's candidates as the review sheet's do (each analysed with core's
/// applyCandidate() rule). On failure returns false and sets `error` to a message naming the
/// file and the reason.
bool writeSheetPlots(const Design &design, const Analysis &analysis, const QString &dir,
                     PlotFormat format, QString *error);

} // namespace loopsketch::ui
