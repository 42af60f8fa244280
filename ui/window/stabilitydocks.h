#pragma once

// The Nyquist, Scan and Map docks and their entries in the Design menu and the Sketch's part
// menu, kept out of mainwindow.cpp: the window calls these two functions and adds the
// returned docks to its layout like any other.

#include "sheet/reviewsheet.h"

#include <vector>

class QDockWidget;
class QMainWindow;
class QMenu;

namespace loopsketch::ui {

class DesignDocument;
class MapPanel;
class NyquistPanel;
class ScanPanel;
class SketchView;

struct StabilityDocks
{
    NyquistPanel *nyquist = nullptr;
    ScanPanel *scan = nullptr;
    MapPanel *map = nullptr;
    std::vector<QDockWidget *> docks; ///< NyquistDock, ScanDock, MapDock
};

/// Makes the three panels, each in a dock of `window` with an object name (not yet placed).
StabilityDocks makeStabilityDocks(DesignDocument *document, QMainWindow *window);

/// "Scan a part…" and "Map two parts…" in the Design menu, and the Sketch's "Scan <part>":
/// each brings its dock forward and starts the run.
void addStabilityActions(QMenu *designMenu, SketchView *view, QMainWindow *window);

/// The Scan and Map panels' latest runs made for the design as it is (ScanPanel::sheetScan()),
/// scan first: the figures the review sheet carries.
std::vector<SheetScan> sheetScans(const QMainWindow *window);

} // namespace loopsketch::ui
