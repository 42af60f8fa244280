#include "window/stabilitydocks.h"

#include "panels/mappanel.h"
#include "panels/nyquistpanel.h"
#include "panels/scanpanel.h"
#include "sketch/sketchview.h"
#include "support/qtadapter.h"
#include "window/designdocument.h"

#include <QDockWidget>
#include <QMainWindow>
#include <QMenu>
#include <QScrollArea>

namespace loopsketch::ui {

namespace {

/// The panel in a scroll area, as the Spread panel is: its row of controls must not force
/// its width on the whole right-hand side (the Sketch keeps half a narrow window).
QWidget *scrolled(QWidget *panel, QWidget *parent)
{
    auto *scroll = new QScrollArea(parent);
    scroll->setWidget(panel);
    scroll->setWidgetResizable(true);
    scroll->setFrameShape(QFrame::NoFrame);
    return scroll;
}

QDockWidget *dockOf(QMainWindow *window, const QString &title, const QString &name, QWidget *widget)
{
    auto *dock = new QDockWidget(title, window);
    dock->setObjectName(name);
    dock->setWidget(widget);
    return dock;
}

void bringForward(QWidget *panel)
{
    for (QWidget *w = panel; w; w = w->parentWidget())
        if (auto *dock = qobject_cast<QDockWidget *>(w)) {
            dock->show();
            dock->raise();
            return;
        }
}

} // namespace

StabilityDocks makeStabilityDocks(DesignDocument *document, QMainWindow *window)
{
    StabilityDocks s;
    s.nyquist = new NyquistPanel(window);
    s.scan = new ScanPanel(document, window);
    s.map = new MapPanel(document, window);
    s.docks = {
        dockOf(window, QObject::tr("Nyquist"), QStringLiteral("NyquistDock"), s.nyquist),
        dockOf(window, QObject::tr("Scan"), QStringLiteral("ScanDock"), scrolled(s.scan, window)),
        dockOf(window, QObject::tr("Map"), QStringLiteral("MapDock"), scrolled(s.map, window))};
    return s;
}

std::vector<SheetScan> sheetScans(const QMainWindow *window)
{
    std::vector<SheetScan> scans;
    if (auto *scan = window->findChild<ScanPanel *>())
        if (auto s = scan->sheetScan())
            scans.push_back(*s);
    if (auto *map = window->findChild<MapPanel *>())
        if (auto s = map->sheetScan())
            scans.push_back(*s);
    return scans;
}

void addStabilityActions(QMenu *designMenu, SketchView *view, QMainWindow *window)
{
    auto *scan = window->findChild<ScanPanel *>();
    auto *map = window->findChild<MapPanel *>();
    if (!scan || !map)
        return;
    designMenu->addSeparator();
    QAction *scanAction = designMenu->addAction(QObject::tr("S&can a part…"), scan, [scan] {
        bringForward(scan);
        scan->run();
    });
    scanAction->setToolTip(QObject::tr("Every E-series value of one part: phase margin, "
                                       "bandwidth and the other metrics against it"));
    QAction *mapAction = designMenu->addAction(QObject::tr("&Map two parts…"), map, [map] {
        bringForward(map);
        map->run();
    });
    mapAction->setToolTip(QObject::tr("A heat map over the E-series grid of two parts, the "
                                      "region that meets every spec outlined"));
    QObject::connect(view, &SketchView::scanRequested, scan, [scan](const std::string &id) {
        bringForward(scan);
        scan->scanPart(toQString(id));
    });
}

} // namespace loopsketch::ui
