#include "window/stabilitydocks.h"

#include "panels/mappanel.h"
#include "panels/nyquistpanel.h"
#include "panels/scanpanel.h"
#include "sketch/sketchscene.h"
#include "sketch/sketchview.h"
#include "support/qtadapter.h"
#include "window/designdocument.h"

#include <QDockWidget>
#include <QMainWindow>
#include <QMenu>
#include <QScrollArea>

#include <algorithm>

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

/// Shows the panel's dock in front of its tab group; asked for from a menu, it also gets the
/// height a chart needs (at 1280 x 800 the group above the Step panel is about 390 pixels
/// tall: the controls and a legend leave the plot too little of it), taken from the group
/// beside it.
void bringForward(QWidget *panel)
{
    for (QWidget *w = panel; w; w = w->parentWidget())
        if (auto *dock = qobject_cast<QDockWidget *>(w)) {
            dock->show();
            dock->raise();
            auto *window = qobject_cast<QMainWindow *>(dock->parentWidget());
            const int wanted = window ? std::min(window->height() * 3 / 5, 460) : 0;
            if (window && !dock->isFloating() && dock->height() < wanted)
                window->resizeDocks({dock}, {wanted}, Qt::Vertical);
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
    // The parts selected on the Sketch say what to scan or map; with none the panel asks.
    auto *scene = qobject_cast<SketchScene *>(view->scene());
    const auto selected = [scene] {
        return scene ? scene->selectedPartIds() : std::vector<std::string>{};
    };
    QAction *scanAction
        = designMenu->addAction(QObject::tr("S&can a part…"), scan, [scan, selected] {
              bringForward(scan);
              scan->scanSelectedOrAsk(selected());
          });
    scanAction->setToolTip(QObject::tr("Every E-series value of one part: phase margin, "
                                       "bandwidth and the other metrics against it"));
    QAction *mapAction
        = designMenu->addAction(QObject::tr("&Map two parts…"), map, [map, selected] {
              bringForward(map);
              map->mapSelected(selected());
          });
    mapAction->setToolTip(QObject::tr("A heat map over the E-series grid of two parts, the "
                                      "region that meets every spec outlined"));
    QObject::connect(view, &SketchView::scanRequested, scan, [scan](const std::string &id) {
        bringForward(scan);
        scan->scanPart(toQString(id));
    });
}

} // namespace loopsketch::ui
