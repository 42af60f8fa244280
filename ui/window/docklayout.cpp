// The window's docks: which panel sits where, the wide and the compact arrangement, their
// default sizes, and the arrangement kept between sessions.
#include "window/mainwindow.h"

#include "panels/candidatespanel.h"
#include "panels/noisepanel.h"
#include "panels/nyquistpanel.h"
#include "panels/panels.h"
#include "panels/readout.h"
#include "panels/spreadpanel.h"
#include "sketch/designpropertiespanel.h"
#include "sketch/inspector.h"
#include "sketch/partspalette.h"
#include "sketch/sketchview.h"
#include "window/designdocument.h"
#include "window/stabilitydocks.h"

#include <QAction>
#include <QDockWidget>
#include <QFrame>
#include <QGuiApplication>
#include <QLayout>
#include <QScreen>
#include <QScrollArea>
#include <QSettings>
#include <QTabBar>
#include <QTimer>

#include <algorithm>

namespace loopsketch::ui {

namespace {

const char *kStateKey = "window/state";
const char *kGeometryKey = "window/geometry";
/// The version of the saved dock arrangement: a state saved by an older arrangement (other
/// docks, other places) is not restored; the default one is laid out instead.
constexpr int kLayoutVersion = 2;
/// Below this window width or height the plots share two tab groups beside the Sketch
/// (compact arrangement), so the Sketch keeps half the width; at and above both they sit right
/// and below it side by side. The side-by-side arrangement needs about 1,000 pixels of height
/// (two plots right, three below), more than a 1440 x 900 screen has.
constexpr int kCompactWidth = 1400;
constexpr int kCompactHeight = 1000;
constexpr int kLeftDockWidth = 230;

/// The screen `window` is on, or nullptr on the offscreen platform of the tests, whose screen
/// is nominal and lets docks grow a window past it.
const QScreen *realScreen(const QWidget *window)
{
    return QGuiApplication::platformName() != QStringLiteral("offscreen") ? window->screen()
                                                                          : nullptr;
}

/// Shrinks `window` to its screen's available room (less a margin for the frame) where it is
/// larger: a geometry saved on a larger screen, or docks that asked for more room on the way.
void fitToScreen(QWidget *window)
{
    const QScreen *screen = realScreen(window);
    if (!screen)
        return;
    const QRect available = screen->availableGeometry();
    if (window->height() > available.height() - 48 || window->width() > available.width() - 16)
        window->resize(std::min(window->width(), available.width() - 16),
                       std::min(window->height(), available.height() - 48));
}

/// `content` in a frameless scroll area: a panel whose fields outgrow the dock scrolls rather
/// than forcing its height on the whole window (the Inspector of a gain block with many poles
/// pushed the window past a 800-pixel screen).
QScrollArea *scrolling(QWidget *content, QWidget *parent)
{
    auto *scroll = new QScrollArea(parent);
    scroll->setWidget(content);
    scroll->setWidgetResizable(true);
    scroll->setFrameShape(QFrame::NoFrame);
    return scroll;
}

} // namespace

void MainWindow::restoreLayout()
{
    QSettings settings;
    restoreGeometry(settings.value(kGeometryKey).toByteArray());
    // So the status line and the dock tabs at the bottom stay reachable.
    fitToScreen(this);
    m_sizedDocks = restoreState(settings.value(kStateKey).toByteArray(), kLayoutVersion);
    if (!m_sizedDocks)
        arrangeDocks(wantsCompactLayout());
}

void MainWindow::saveLayout()
{
    QSettings settings;
    settings.setValue(kGeometryKey, saveGeometry());
    settings.setValue(kStateKey, saveState(kLayoutVersion));
}

void MainWindow::createDocks()
{
    setCorner(Qt::TopLeftCorner, Qt::TopDockWidgetArea);
    setCorner(Qt::TopRightCorner, Qt::TopDockWidgetArea);
    setCorner(Qt::BottomLeftCorner, Qt::LeftDockWidgetArea);
    setCorner(Qt::BottomRightCorner, Qt::BottomDockWidgetArea);

    auto makeDock = [this](const QString &title, const QString &name, QWidget *widget,
                           Qt::DockWidgetArea area) {
        auto *dock = new QDockWidget(title, this);
        dock->setObjectName(name);
        dock->setWidget(widget);
        addDockWidget(area, dock);
        m_docks.push_back(dock);
        return dock;
    };
    auto *readoutDock
        = makeDock(tr("Readout"), QStringLiteral("ReadoutDock"), m_readout, Qt::TopDockWidgetArea);
    readoutDock->setFeatures(QDockWidget::NoDockWidgetFeatures);
    readoutDock->setTitleBarWidget(new QWidget(readoutDock));
    auto *partsDock
        = makeDock(tr("Parts"), QStringLiteral("PartsDock"), m_palette, Qt::LeftDockWidgetArea);
    QScrollArea *inspectorScroll = scrolling(m_inspector, this);
    inspectorScroll->setHorizontalScrollBarPolicy(Qt::ScrollBarAlwaysOff);
    auto *inspectorDock = makeDock(tr("Inspector"), QStringLiteral("InspectorDock"),
                                   inspectorScroll, Qt::LeftDockWidgetArea);
    splitDockWidget(partsDock, inspectorDock, Qt::Vertical);
    m_properties = new DesignPropertiesPanel(m_document, this);
    auto *propertiesDock = makeDock(tr("Design"), QStringLiteral("DesignPropertiesDock"),
                                    scrolling(m_properties, this), Qt::LeftDockWidgetArea);
    tabifyDockWidget(inspectorDock, propertiesDock);
    inspectorDock->raise();

    m_loopGain = new LoopGainPanel(this);
    auto *impedance = new ImpedancePanel(this);
    auto *desens = new DesensitivityPanel(this);
    auto *step = new StepPanel(this);
    auto *poles = new PolesPanel(this);
    m_panels = {m_loopGain, impedance, desens, step, poles};
    auto *noise = new NoisePanel(this);
    m_noise = noise;
    m_panels.push_back(noise);
    // Off screen (a tab behind another, a closed dock) the noise follows the main curves.
    m_document->setNoiseOnScreenProbe(
        [noise] { return noise->isVisible() && !noise->viewport()->visibleRegion().isEmpty(); });
    // The linked frequency cursor: hovering one frequency panel marks the same frequency
    // in all of them.
    for (PlotPanel *source : m_panels) {
        connect(source, &PlotPanel::frequencyHovered, this, [this](double log10Hz) {
            for (PlotPanel *p : m_panels)
                p->showFrequencyCursor(log10Hz);
        });
        connect(source, &PlotPanel::frequencyHovered, noise, &NoisePanel::showValuesAt);
    }
    auto *loopDock = makeDock(tr("Loop gain"), QStringLiteral("LoopGainDock"), m_loopGain,
                              Qt::RightDockWidgetArea);
    auto *impDock = makeDock(tr("Impedance"), QStringLiteral("ImpedanceDock"), impedance,
                             Qt::RightDockWidgetArea);
    splitDockWidget(loopDock, impDock, Qt::Vertical);
    auto *noiseDock
        = makeDock(tr("Noise"), QStringLiteral("NoiseDock"), noise, Qt::RightDockWidgetArea);
    tabifyDockWidget(impDock, noiseDock);
    impDock->raise();
    connect(noiseDock, &QDockWidget::visibilityChanged, noise, &NoisePanel::setOnScreen);
    auto *desDock = makeDock(tr("Desensitivity"), QStringLiteral("DesensitivityDock"), desens,
                             Qt::BottomDockWidgetArea);
    auto *stepDock
        = makeDock(tr("Step"), QStringLiteral("StepDock"), step, Qt::BottomDockWidgetArea);
    auto *polesDock
        = makeDock(tr("Poles"), QStringLiteral("PolesDock"), poles, Qt::BottomDockWidgetArea);
    splitDockWidget(desDock, stepDock, Qt::Horizontal);
    splitDockWidget(stepDock, polesDock, Qt::Horizontal);

    // The Spread panel holds controls, a table and three histograms: it scrolls rather than
    // forcing its height on the whole window.
    m_spread = new SpreadPanel(m_document, this);
    auto *spreadDock = makeDock(tr("Spread"), QStringLiteral("SpreadDock"),
                                scrolling(m_spread, this), Qt::RightDockWidgetArea);

    // Candidates side by side, tabbed with the Impedance panel; pinning brings it forward.
    m_candidates = new CandidatesPanel(m_document, this);
    // Its table scrolls too, so a narrow window can still give the Sketch half its width.
    m_candidatesDock = makeDock(tr("Candidates"), QStringLiteral("CandidatesDock"),
                                scrolling(m_candidates, this), Qt::RightDockWidgetArea);
    tabifyDockWidget(impDock, m_candidatesDock);
    tabifyDockWidget(impDock, spreadDock);
    // Nyquist, Scan and Map (window/stabilitydocks.cpp), tabbed with the others.
    const StabilityDocks stability = makeStabilityDocks(m_document, this);
    m_panels.push_back(stability.nyquist);
    for (QDockWidget *d : stability.docks) {
        addDockWidget(Qt::RightDockWidgetArea, d);
        m_docks.push_back(d);
        tabifyDockWidget(impDock, d);
    }
    impDock->raise();
    connect(m_candidates, &CandidatesPanel::resultsChanged, this, [this] {
        const std::vector<OverlaySource> sources = m_candidates->overlaySources();
        for (PlotPanel *p : m_panels) {
            if (p->hasOverlays())
                p->setOverlaySources(sources);
        }
    });
    connect(m_candidates->pinAction(), &QAction::triggered, this, &MainWindow::showCandidates);
}

void MainWindow::resetLayout()
{
    const bool compact = wantsCompactLayout();
    arrangeDocks(compact);
    // Sizes take once the layout has placed the docks, and the Sketch fits its new size
    // once they took.
    // A first arrangement may still be settling on the first pass (the docks moved from the
    // constructor's places), so the sizes are given twice.
    QTimer::singleShot(0, this, [this, compact] {
        sizeDocks(compact);
        QTimer::singleShot(0, this, [this, compact] {
            fitToScreen(this);
            sizeDocks(compact);
            m_view->fitDesign();
        });
    });
}

bool MainWindow::wantsCompactLayout() const
{
    // The screen's height, not the window's (a first window is smaller than its screen); on
    // the tests' nominal screen only the width counts.
    const QScreen *screen = realScreen(this);
    return width() < kCompactWidth
        || (screen && screen->availableGeometry().height() < kCompactHeight);
}

bool MainWindow::isCompactLayout() const
{
    auto *loop = findChild<QDockWidget *>(QStringLiteral("LoopGainDock"));
    auto *step = findChild<QDockWidget *>(QStringLiteral("StepDock"));
    return loop && step && dockWidgetArea(step) == dockWidgetArea(loop);
}

void MainWindow::arrangeDocks(bool compact)
{
    auto dock = [this](const char *name) {
        return findChild<QDockWidget *>(QLatin1String(name));
    };
    QDockWidget *parts = dock("PartsDock"), *inspector = dock("InspectorDock"),
                *properties = dock("DesignPropertiesDock"), *loop = dock("LoopGainDock"),
                *impedance = dock("ImpedanceDock"), *noise = dock("NoiseDock"),
                *spread = dock("SpreadDock"), *desens = dock("DesensitivityDock"),
                *step = dock("StepDock"), *poles = dock("PolesDock");
    const std::vector<QDockWidget *> stability
        = {dock("NyquistDock"), dock("ScanDock"), dock("MapDock")};
    for (QDockWidget *d : m_docks) {
        d->setFloating(false);
        if (d->features() != QDockWidget::NoDockWidgetFeatures)
            d->show();
    }
    addDockWidget(Qt::LeftDockWidgetArea, parts);
    splitDockWidget(parts, inspector, Qt::Vertical);
    tabifyDockWidget(inspector, properties);
    addDockWidget(Qt::RightDockWidgetArea, loop);
    if (compact) {
        // Two tab groups beside the Sketch: the frequency panels above, the time and
        // s-plane panels below.
        splitDockWidget(loop, step, Qt::Vertical);
        for (QDockWidget *d : {impedance, noise, m_candidatesDock, spread})
            tabifyDockWidget(loop, d);
        for (QDockWidget *d : stability)
            tabifyDockWidget(loop, d);
        for (QDockWidget *d : {poles, desens})
            tabifyDockWidget(step, d);
        step->raise();
        loop->raise();
    } else {
        splitDockWidget(loop, impedance, Qt::Vertical);
        for (QDockWidget *d : {noise, m_candidatesDock, spread})
            tabifyDockWidget(impedance, d);
        for (QDockWidget *d : stability)
            tabifyDockWidget(impedance, d);
        impedance->raise();
        addDockWidget(Qt::BottomDockWidgetArea, desens);
        splitDockWidget(desens, step, Qt::Horizontal);
        splitDockWidget(step, poles, Qt::Horizontal);
    }
    inspector->raise();
    // Tab titles are read whole ("Impedance", not "Impedan…"); a crowded group scrolls.
    for (QTabBar *tabs : findChildren<QTabBar *>(QString(), Qt::FindDirectChildrenOnly)) {
        tabs->setElideMode(Qt::ElideNone);
        tabs->setUsesScrollButtons(true);
    }
}

void MainWindow::sizeDocks(bool compact)
{
    auto dock = [this](const char *name) {
        return findChild<QDockWidget *>(QLatin1String(name));
    };
    QDockWidget *parts = dock("PartsDock"), *inspector = dock("InspectorDock"),
                *loop = dock("LoopGainDock"), *impedance = dock("ImpedanceDock"),
                *desens = dock("DesensitivityDock"), *step = dock("StepDock"),
                *poles = dock("PolesDock");
    // The docks' new places first, so that the sizes apply to them.
    layout()->activate();
    const int w = width(), h = height();
    resizeDocks({parts}, {kLeftDockWidth}, Qt::Horizontal);
    resizeDocks({parts, inspector}, {h / 3, h / 2}, Qt::Vertical);
    if (compact) {
        // The Sketch keeps half the window; the plots take what is left beside it.
        // resizeDocks() leaves a column of tab groups as it is (Qt 6.4): its width is set by
        // holding the groups at the width wanted for one layout pass.
        const int right = std::max(320, w / 2 - kLeftDockWidth - 16);
        for (QDockWidget *d : {loop, step})
            d->setFixedWidth(right);
        layout()->activate();
        for (QDockWidget *d : {loop, step}) {
            d->setMinimumWidth(0);
            d->setMaximumWidth(QWIDGETSIZE_MAX);
        }
        resizeDocks({loop, step}, {h * 11 / 20, h * 9 / 20}, Qt::Vertical);
    } else {
        resizeDocks({loop}, {w * 9 / 20}, Qt::Horizontal);
        resizeDocks({loop, impedance}, {h / 2, h / 2}, Qt::Vertical);
        resizeDocks({desens}, {h * 7 / 25}, Qt::Vertical);
        resizeDocks({desens, step, poles}, {w / 3, w / 3, w / 3}, Qt::Horizontal);
    }
}

} // namespace loopsketch::ui
