#pragma once

// Exports of the open design from the GUI: the review sheet (PDF), the sweep (CSV) and the
// plots (SVG or PNG). Each export analyses the current design afresh with the command
// line's options, so the GUI writes exactly what `loopsketch export` writes for the same
// design; nothing is written when the design has diagnostics.

#include "sheet/reviewsheet.h"

#include <QString>

#include <functional>
#include <vector>

class QMenu;
class QWidget;

namespace loopsketch::ui {

class DesignDocument;

/// Writes the review sheet of the document's design to `path`. `shownName` goes into the
/// title block. `spread` is the spread section's run (the Spread panel's); without one the
/// command line's default run is made. `scans`: the Scan and Map panels' runs made for the
/// design as it is, each a figure. On failure returns false, sets `error` and leaves no file
/// behind.
bool exportReviewSheet(const DesignDocument &document, const QString &path, SheetPageSize pageSize,
                       const QString &shownName, QString *error,
                       const SheetSpread *spread = nullptr,
                       const std::vector<SheetScan> &scans = {});

/// Writes the sweep CSV (the columns of `loopsketch sweep`) to `path`, atomically.
bool exportSweepCsv(const DesignDocument &document, const QString &path, QString *error);

/// Writes one file per review-sheet plot into `dir`.
bool exportPlots(const DesignDocument &document, const QString &dir, PlotFormat format,
                 QString *error);

/// Adds an "Export" submenu to `menu`. Each action asks for a path, runs the export and
/// reports a failure in a message box. `shownName` gives the design's display name, `spread`
/// the run for the sheet's spread section (nullptr: the default run), `scans` the scans and
/// maps the sheet carries.
void addExportMenu(QMenu *menu, QWidget *parent, const DesignDocument *document,
                   std::function<QString()> shownName,
                   std::function<const SheetSpread *()> spread = {},
                   std::function<std::vector<SheetScan>()> scans = {});

} // namespace loopsketch::ui
