#include "window/mainwindow.h"

#include "panels/candidatespanel.h"
#include "panels/noisepanel.h"
#include "panels/nyquistpanel.h"
#include "panels/panels.h"
#include "panels/readout.h"
#include "panels/spreadpanel.h"
#include "panels/suggestdialog.h"
#include "sheet/reviewsheet.h"
#include "sketch/designpropertiespanel.h"
#include "sketch/inspector.h"
#include "sketch/partitem.h"
#include "sketch/partspalette.h"
#include "sketch/sketchscene.h"
#include "sketch/sketchview.h"
#include "support/qtadapter.h"
#include "window/designdocument.h"
#include "window/exportactions.h"
#include "window/partclipboard.h"
#include "window/stabilitydocks.h"

#include "loopsketch/design/atomicfile.h"
#include "loopsketch/design/designfile.h"

#include <QAction>
#include <QApplication>
#include <QClipboard>
#include <QCloseEvent>
#include <QDateTime>
#include <QDir>
#include <QDockWidget>
#include <QElapsedTimer>
#include <QFile>
#include <QFileDialog>
#include <QFileInfo>
#include <QLabel>
#include <QLayout>
#include <QListWidget>
#include <QMenuBar>
#include <QMessageBox>
#include <QMimeData>
#include <QRegularExpression>
#include <QScreen>
#include <QScrollArea>
#include <QSettings>
#include <QStandardPaths>
#include <QStatusBar>
#include <QTabBar>
#include <QTimer>

#include <cerrno>

#include <signal.h>

namespace loopsketch::ui {

namespace {

constexpr int kMaxRecent = 8;
const char *kStateKey = "window/state";
const char *kGeometryKey = "window/geometry";
/// The version of the saved dock arrangement: a state saved by an older arrangement (other
/// docks, other places) is not restored; the default one is laid out instead.
constexpr int kLayoutVersion = 2;
/// Below this window width the plots share two tab groups beside the Sketch (compact
/// arrangement), so the Sketch keeps half the width; at and above it they sit right and
/// below it side by side.
constexpr int kCompactWidth = 1400;
constexpr int kLeftDockWidth = 230;
const char *kRecentKey = "recentFiles";

} // namespace

QString MainWindow::recoveryFile()
{
    return recoveryFileOf(QCoreApplication::applicationPid());
}

QString MainWindow::recoveryFileOf(qint64 pid)
{
    const QString dir = QStandardPaths::writableLocation(QStandardPaths::AppDataLocation);
    return dir.isEmpty() ? QString() : dir + QStringLiteral("/recovery-%1.loopsketch").arg(pid);
}

namespace {

/// Recovery files whose process has ended, newest first; the name of versions before one
/// file per process ("recovery.loopsketch") counts as ended too.
QStringList orphanedRecoveryFiles()
{
    const QString dir = QStandardPaths::writableLocation(QStandardPaths::AppDataLocation);
    if (dir.isEmpty())
        return {};
    static const QRegularExpression name(QStringLiteral("^recovery(?:-(\\d+))?\\.loopsketch$"));
    QStringList orphans;
    const QFileInfoList files = QDir(dir).entryInfoList({QStringLiteral("recovery*.loopsketch")},
                                                        QDir::Files, QDir::Time);
    for (const QFileInfo &f : files) {
        const auto m = name.match(f.fileName());
        if (!m.hasMatch())
            continue; // e.g. a kept-aside unreadable file
        if (!m.captured(1).isEmpty()) {
            const qint64 pid = m.captured(1).toLongLong();
            // kill(pid, 0) probes without signalling; only "no such process" means gone.
            if (pid == QCoreApplication::applicationPid() || ::kill(static_cast<pid_t>(pid), 0) == 0
                || errno != ESRCH)
                continue;
        }
        orphans << f.absoluteFilePath();
    }
    return orphans;
}

} // namespace

bool MainWindow::offerRecovery()
{
    for (const QString &path : orphanedRecoveryFiles()) {
        if (offerRecoveryFrom(path))
            return true;
    }
    return false;
}

bool MainWindow::offerRecoveryFrom(const QString &path)
{
    QFile file(path);
    if (!file.exists())
        return false;
    QString problem;
    QByteArray text;
    if (file.open(QIODevice::ReadOnly))
        text = file.readAll();
    else
        problem = tr("%1: %2").arg(path, file.errorString());
    file.close();
    if (problem.isEmpty()) {
        if (auto parsed = parseDesign(text.toStdString(), DesignRules::Draft, toStdString(path));
            !parsed)
            problem = toQString(parsed.errorText());
    }
    if (!problem.isEmpty()) {
        // Kept under another name, so it is neither offered at every start nor lost.
        const QString kept = QFileInfo(path).absolutePath() + QStringLiteral("/recovery-")
            + QDateTime::currentDateTime().toString(QStringLiteral("yyyyMMdd-hhmmss"))
            + QStringLiteral(".unreadable.loopsketch");
        const bool moved = QFile::rename(path, kept);
        QMessageBox::warning(
            this, tr("Restore unsaved work"),
            tr("The unsaved work from the last session cannot be restored:\n%1\n\n%2")
                .arg(problem,
                     moved ? tr("The file was kept as %1.").arg(kept)
                           : tr("It could not be moved aside and stays at %1.").arg(path)));
        return false;
    }
    const auto answer = QMessageBox::question(
        this, tr("Restore unsaved work"),
        tr("Loopsketch did not close normally last time. Restore the design that was being "
           "edited?"),
        QMessageBox::Yes | QMessageBox::No, QMessageBox::Yes);
    if (answer != QMessageBox::Yes) {
        QFile::remove(path);
        return false;
    }
    QString error;
    if (!openText(text.toStdString(), tr("recovered design"), &error)) {
        QMessageBox::warning(this, tr("Restore unsaved work"), error);
        return false;
    }
    m_document->undoStack()->resetClean();
    updateTitle();
    // The work now lives in this process's recovery file; only then the old one goes.
    if (writeRecovery())
        QFile::remove(path);
    return true;
}

MainWindow::MainWindow(QWidget *parent)
    : QMainWindow(parent), m_document(new DesignDocument(this)), m_scene(new SketchScene(this)),
      m_view(new SketchView(m_scene, this)), m_readout(new Readout(this)),
      m_inspector(new Inspector(m_document, this)), m_palette(new PartsPalette(this)),
      m_timing(new QLabel(this)), m_diagnostics(new QLabel(this))
{
    setObjectName(QStringLiteral("MainWindow"));
    setCentralWidget(m_view);
    m_view->setHorizontalScrollBarPolicy(Qt::ScrollBarAlwaysOff);
    m_view->setVerticalScrollBarPolicy(Qt::ScrollBarAlwaysOff);
    m_palette->setMinimumWidth(200);
    m_inspector->setMinimumWidth(220);
    setAcceptDrops(true);
    setDockOptions(AnimatedDocks | AllowNestedDocks | AllowTabbedDocks);
    createDocks();
    createActions();
    statusBar()->addWidget(m_timing);
    statusBar()->addWidget(m_diagnostics, 1);
    m_diagnostics->setStyleSheet(QStringLiteral("color: #b3261e;"));
    m_diagnostics->setWordWrap(false);
    m_diagnostics->setTextInteractionFlags(Qt::TextSelectableByMouse);

    connect(m_document, &DesignDocument::designReset, this, &MainWindow::rebuildSketch);
    connect(m_document, &DesignDocument::analysisChanged, this, &MainWindow::showAnalysis);
    connect(m_document, &DesignDocument::analysisUnavailable, this, &MainWindow::showUnavailable);
    connect(m_document, &DesignDocument::noticeIssued, this,
            [this](const QString &text) { statusBar()->showMessage(text, 15000); });
    connect(m_document, &DesignDocument::diagnosticsChanged, this, [this](const QString &text) {
        m_diagnostics->setText(text.section(QLatin1Char('\n'), 0, 0));
        m_diagnostics->setToolTip(text);
    });
    connect(m_document, &DesignDocument::partChanged, this, [this](const QString &id) {
        m_scene->updatePart(toStdString(id));
        if (const Part *part = m_document->design().findPart(toStdString(id)))
            m_palette->updatePart(*part);
        if (toQString(m_inspector->partId()) == id)
            m_inspector->refresh();
    });
    connect(m_document, &DesignDocument::layoutChanged, this,
            [this] { m_scene->applyLayout(m_document->layout()); });
    connect(m_document, &DesignDocument::filePathChanged, this, &MainWindow::updateTitle);
    connect(m_document->undoStack(), &QUndoStack::cleanChanged, this, &MainWindow::updateTitle);
    connect(m_scene, &QGraphicsScene::selectionChanged, this, &MainWindow::selectionChanged);
    connect(m_scene, &SketchScene::partsMoved, this,
            [this](const QHash<QString, QPointF> &positions) {
                std::map<std::string, std::pair<double, double>> moves;
                for (auto it = positions.begin(); it != positions.end(); ++it)
                    moves[toStdString(it.key())] = {it.value().x(), it.value().y()};
                m_document->moveParts(moves);
            });
    connect(m_view, &SketchView::stepRequested, m_document, &DesignDocument::stepPart);
    connect(m_scene, &SketchScene::stepRequested, m_document, &DesignDocument::stepPart);
    connect(m_view, &SketchView::rotateRequested, m_document, &DesignDocument::rotatePart);
    connect(m_view, &SketchView::deleteRequested, m_document, &DesignDocument::removeParts);
    connect(m_view, &SketchView::connectRequested, m_document, &DesignDocument::connectPins);
    connect(m_view, &SketchView::groundRequested, m_document, &DesignDocument::groundPin);
    connect(m_view, &SketchView::placeRequested, this, &MainWindow::placeSymbol);
    connect(m_view, &SketchView::deleteGroundsRequested, m_document,
            &DesignDocument::removeGrounds);
    connect(m_view, &SketchView::deleteSelectionRequested, this, &MainWindow::deleteSelection);
    connect(m_view, &SketchView::mirrorRequested, m_document, &DesignDocument::mirrorPart);
    connect(m_view, &SketchView::disconnectRequested, m_document, &DesignDocument::disconnectPin);
    connect(m_view, &SketchView::wireDeleteRequested, this,
            [this](const std::string &pa, const std::string &ta, const std::string &pb,
                   const std::string &tb) {
                m_document->removeWires({{{pa, ta}, {pb, tb}}});
            });
    connect(m_view, &SketchView::reattachRequested, this,
            [this](const std::string &kp, const std::string &kt, const std::string &lp,
                   const std::string &lt, const std::string &tp, const std::string &tt) {
                m_document->reattachWire({kp, kt}, {lp, lt}, {tp, tt});
            });
    connect(m_view, &SketchView::movePinRequested, this,
            [this](const std::string &p, const std::string &t, const std::string &tp,
                   const std::string &tt) {
                m_document->movePin({p, t}, {tp, tt});
            });
    connect(m_scene, &SketchScene::groundMoved, this,
            [this](int index, QPointF at) { m_document->moveGround(index, at.x(), at.y()); });
    connect(m_palette, &PartsPalette::placeRequested, this, [this](int symbol) {
        placeSymbol(symbol, m_view->mapToScene(m_view->viewport()->rect().center()));
    });
    connect(m_palette, &PartsPalette::deleteRequested, m_document, &DesignDocument::removeParts);
    connect(m_document, &DesignDocument::structureChanged, this, [this] {
        const std::string selected = m_scene->selectedPartId();
        m_scene->rebuild(&m_document->design(), m_document->layout());
        m_palette->showDesign(m_document->design());
        if (m_document->design().findPart(m_inspector->partId()))
            m_inspector->showPart(m_inspector->partId());
        else
            m_inspector->showPart({});
        if (!selected.empty())
            m_scene->selectPart(selected);
    });
    connect(m_palette, &PartsPalette::partActivated, this,
            [this](const std::string &id) { m_scene->selectPart(id); });

    m_settleTimer = new QTimer(this);
    m_settleTimer->setSingleShot(true);
    m_settleTimer->setInterval(250);
    connect(m_settleTimer, &QTimer::timeout, this, [this] {
        for (PlotPanel *panel : m_panels) {
            panel->setRenderHint(QPainter::Antialiasing, true);
            panel->viewport()->update();
        }
    });

    auto *recovery = new QTimer(this);
    // LOOPSKETCH_AUTOSAVE_MS shortens the interval for tests/ui/tst_recovery.cpp only.
    const int autosaveMs = qEnvironmentVariableIntValue("LOOPSKETCH_AUTOSAVE_MS");
    recovery->setInterval(autosaveMs > 0 ? autosaveMs : 30000);
    connect(recovery, &QTimer::timeout, this, &MainWindow::writeRecovery);
    recovery->start();

    resize(1500, 940);
    // A first start on a smaller screen: the window fits it. (The offscreen platform's
    // nominal 800 x 600 screen is no display; tests size their windows themselves.)
    if (QGuiApplication::platformName() != QStringLiteral("offscreen")) {
        if (const QScreen *s = screen()) {
            const QRect available = s->availableGeometry();
            resize(std::min(width(), available.width() - 16),
                   std::min(height(), available.height() - 48));
            move(available.topLeft() + QPoint(8, 8));
        }
    }
    QSettings settings;
    restoreGeometry(settings.value(kGeometryKey).toByteArray());
    m_sizedDocks = restoreState(settings.value(kStateKey).toByteArray(), kLayoutVersion);
    if (!m_sizedDocks)
        arrangeDocks(width() < kCompactWidth);
    updateTitle();
}

MainWindow::~MainWindow()
{
    // The document is a child, destroyed after this body and after the members; its undo
    // stack emits cleanChanged as it goes, which must not reach the half-destroyed window
    // (updateTitle() on freed members aborted tst_candidates now and then).
    QObject::disconnect(m_document->undoStack(), nullptr, nullptr, nullptr);
    QObject::disconnect(m_document, nullptr, nullptr, nullptr);
    // Likewise the scene: a part still selected when it goes emits selectionChanged.
    QObject::disconnect(m_scene, nullptr, nullptr, nullptr);
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
    auto *inspectorDock = makeDock(tr("Inspector"), QStringLiteral("InspectorDock"), m_inspector,
                                   Qt::LeftDockWidgetArea);
    splitDockWidget(partsDock, inspectorDock, Qt::Vertical);
    m_properties = new DesignPropertiesPanel(m_document, this);
    auto *propertiesScroll = new QScrollArea(this);
    propertiesScroll->setWidget(m_properties);
    propertiesScroll->setWidgetResizable(true);
    propertiesScroll->setFrameShape(QFrame::NoFrame);
    auto *propertiesDock = makeDock(tr("Design"), QStringLiteral("DesignPropertiesDock"),
                                    propertiesScroll, Qt::LeftDockWidgetArea);
    tabifyDockWidget(inspectorDock, propertiesDock);
    inspectorDock->raise();

    m_loopGain = new LoopGainPanel(this);
    auto *impedance = new ImpedancePanel(this);
    auto *desens = new DesensitivityPanel(this);
    auto *step = new StepPanel(this);
    auto *poles = new PolesPanel(this);
    m_panels = {m_loopGain, impedance, desens, step, poles};
    auto *noise = new NoisePanel(this);
    m_panels.push_back(noise);
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
    auto *spreadScroll = new QScrollArea(this);
    spreadScroll->setWidget(m_spread);
    spreadScroll->setWidgetResizable(true);
    spreadScroll->setFrameShape(QFrame::NoFrame);
    auto *spreadDock = makeDock(tr("Spread"), QStringLiteral("SpreadDock"), spreadScroll,
                                Qt::RightDockWidgetArea);

    // Candidates side by side, tabbed with the Impedance panel; pinning brings it forward.
    m_candidates = new CandidatesPanel(m_document, this);
    // Its table scrolls too, so a narrow window can still give the Sketch half its width.
    auto *candidatesScroll = new QScrollArea(this);
    candidatesScroll->setWidget(m_candidates);
    candidatesScroll->setWidgetResizable(true);
    candidatesScroll->setFrameShape(QFrame::NoFrame);
    m_candidatesDock = makeDock(tr("Candidates"), QStringLiteral("CandidatesDock"),
                                candidatesScroll, Qt::RightDockWidgetArea);
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

void MainWindow::showCandidates()
{
    m_candidatesDock->show();
    m_candidatesDock->raise();
    if (auto *loop = findChild<QDockWidget *>(QStringLiteral("LoopGainDock")))
        resizeDocks({loop, m_candidatesDock}, {height() / 2, height() / 2}, Qt::Vertical);
}

void MainWindow::createActions()
{
    QMenu *file = menuBar()->addMenu(tr("&File"));
    QAction *newAction = file->addAction(tr("&New"), this, &MainWindow::newDesign);
    newAction->setShortcut(QKeySequence::New);
    newAction->setObjectName(QStringLiteral("NewDesignAction"));
    QMenu *newMenu = file->addMenu(tr("&New from example"));
    const QStringList examples = QDir(QStringLiteral(":/designs")).entryList({"*.loopsketch"});
    for (const QString &name : examples) {
        QString label = name;
        label.chop(int(QStringLiteral(".loopsketch").size()));
        newMenu->addAction(label, this,
                           [this, name] { newFromExample(QStringLiteral(":/designs/") + name); });
    }
    QAction *open = file->addAction(tr("&Open…"), this, &MainWindow::openDialog);
    open->setShortcut(QKeySequence::Open);
    m_recentMenu = file->addMenu(tr("Open &recent"));
    updateRecentMenu();
    file->addSeparator();
    QAction *saveAction = file->addAction(tr("&Save"), this, [this] { save(); });
    saveAction->setShortcut(QKeySequence::Save);
    QAction *saveAsAction = file->addAction(tr("Save &as…"), this, [this] { saveAs(); });
    saveAsAction->setShortcut(QKeySequence::SaveAs);
    addExportMenu(
        file, this, m_document,
        [this] { return m_displayName.isEmpty() ? tr("untitled") : m_displayName; },
        [this] { return m_spread->completedResult(); });
    file->addSeparator();
    QAction *quit = file->addAction(tr("&Quit"), this, &QWidget::close);
    quit->setShortcut(QKeySequence::Quit);

    QMenu *edit = menuBar()->addMenu(tr("&Edit"));
    QAction *undo = m_document->undoStack()->createUndoAction(this, tr("&Undo"));
    undo->setShortcut(QKeySequence::Undo);
    QAction *redo = m_document->undoStack()->createRedoAction(this, tr("&Redo"));
    redo->setShortcut(QKeySequence::Redo);
    edit->addAction(undo);
    edit->addAction(redo);
    edit->addSeparator();
    createEditActions(edit);

    // Candidates, spread and value suggestions add their actions here.
    m_designMenu = menuBar()->addMenu(tr("&Design"));
    QAction *pin = m_candidates->pinAction();
    pin->setShortcut(Qt::CTRL | Qt::SHIFT | Qt::Key_P);
    m_designMenu->addAction(pin);
    QAction *overlayAll = m_designMenu->addAction(tr("Overlay candidates on every plot"));
    overlayAll->setCheckable(true);
    connect(overlayAll, &QAction::triggered, this, [this](bool on) {
        for (PlotPanel *p : m_panels) {
            if (p->hasOverlays())
                p->overlayAction()->setChecked(on);
        }
    });
    for (PlotPanel *p : m_panels) {
        if (!p->hasOverlays())
            continue;
        connect(p->overlayAction(), &QAction::toggled, overlayAll, [this, overlayAll] {
            bool all = true;
            for (PlotPanel *q : m_panels)
                all = all && (!q->hasOverlays() || q->overlayAction()->isChecked());
            overlayAll->setChecked(all);
        });
    }
    m_designMenu->addSeparator();
    m_designMenu->addAction(tr("&Spread over tolerances"), this, [this] {
        auto *dock = findChild<QDockWidget *>(QStringLiteral("SpreadDock"));
        dock->show();
        dock->raise();
    });
    m_designMenu->addAction(tr("Suggest &values…"), this, [this] {
        SuggestDialog *dialog = suggestDialog();
        dialog->show();
        dialog->raise();
        dialog->activateWindow();
    });
    addStabilityActions(m_designMenu, m_view, this);

    m_viewMenu = menuBar()->addMenu(tr("&View"));
    m_viewMenu->addAction(tr("Fit sketch"), this, [this] { m_view->fitDesign(); });
    QAction *resetLayout
        = m_viewMenu->addAction(tr("Reset layout"), this, &MainWindow::resetLayout);
    resetLayout->setObjectName(QStringLiteral("ResetLayoutAction"));
    resetLayout->setToolTip(tr("Every panel back in its place for this window's size"));
    QAction *resetZoom = m_viewMenu->addAction(tr("Reset plot zoom"), this, [this] {
        for (PlotPanel *p : m_panels)
            p->resetZoom();
    });
    resetZoom->setShortcut(Qt::CTRL | Qt::Key_0);
    resetZoom->setToolTip(tr("Every plot back to its whole range"));
    m_viewMenu->addSeparator();
    for (QDockWidget *dock : m_docks) {
        if (dock->features() != QDockWidget::NoDockWidgetFeatures)
            m_viewMenu->addAction(dock->toggleViewAction());
    }

    QMenu *help = menuBar()->addMenu(tr("&Help"));
    help->addAction(tr("&About Loopsketch"), this, &MainWindow::about);
}

void MainWindow::createEditActions(QMenu *edit)
{
    auto add
        = [&](const QString &text, const char *name, QKeySequence key, void (MainWindow::*slot)()) {
              QAction *a = edit->addAction(text, this, slot);
              a->setObjectName(QString::fromLatin1(name));
              a->setShortcut(key);
              return a;
          };
    add(tr("Cu&t"), "CutAction", QKeySequence::Cut, &MainWindow::cutSelection);
    add(tr("&Copy"), "CopyAction", QKeySequence::Copy, &MainWindow::copySelection);
    add(tr("&Paste"), "PasteAction", QKeySequence::Paste, &MainWindow::pasteParts);
    // No standard key exists for duplicating; Ctrl+D is the common one.
    add(tr("D&uplicate"), "DuplicateAction", QKeySequence(Qt::CTRL | Qt::Key_D),
        &MainWindow::duplicateSelection);
    QAction *remove
        = add(tr("&Delete"), "DeleteAction", QKeySequence::Delete, &MainWindow::deleteSelection);
    edit->addSeparator();
    QAction *all = edit->addAction(tr("Select &all"), this, [this] {
        m_view->setFocus();
        m_scene->selectAllSymbols();
    });
    all->setObjectName(QStringLiteral("SelectAllAction"));
    all->setShortcut(QKeySequence::SelectAll);
    // Delete and Select all act on the Sketch while it has the focus; in the parts list, the
    // Candidates table and the text fields the keys keep their own meaning there.
    for (QAction *a : {remove, all}) {
        a->setShortcutContext(Qt::WidgetWithChildrenShortcut);
        m_view->addAction(a);
    }
}

std::vector<std::string> MainWindow::partsToEdit() const
{
    if (m_palette->partList()->hasFocus()) {
        std::vector<std::string> ids;
        for (QListWidgetItem *item : m_palette->partList()->selectedItems())
            ids.push_back(toStdString(item->data(Qt::UserRole).toString()));
        return ids;
    }
    return m_scene->selectedPartIds();
}

void MainWindow::copySelection()
{
    const std::vector<std::string> ids = partsToEdit();
    if (ids.empty())
        return;
    QGuiApplication::clipboard()->setMimeData(
        partsMimeData(copyParts(m_document->design(), m_document->layout(), ids)));
    statusBar()->showMessage(ids.size() == 1 ? tr("Copied %1").arg(toQString(ids.front()))
                                             : tr("Copied %1 parts").arg(ids.size()),
                             5000);
}

void MainWindow::cutSelection()
{
    const std::vector<std::string> ids = partsToEdit();
    if (ids.empty())
        return;
    QGuiApplication::clipboard()->setMimeData(
        partsMimeData(copyParts(m_document->design(), m_document->layout(), ids)));
    m_document->removeParts(ids);
}

void MainWindow::pasteParts()
{
    const auto fragment = partsFromMimeData(QGuiApplication::clipboard()->mimeData());
    if (!fragment) {
        statusBar()->showMessage(tr("The clipboard holds no Loopsketch parts."), 5000);
        return;
    }
    const auto ids = m_document->pasteParts(
        *fragment,
        fragment->parts.size() == 1 ? tr("Paste %1").arg(toQString(fragment->parts[0].id))
                                    : tr("Paste %1 parts").arg(fragment->parts.size()));
    m_scene->selectParts(ids);
}

void MainWindow::duplicateSelection()
{
    const std::vector<std::string> ids = partsToEdit();
    if (ids.empty())
        return;
    const auto copies
        = m_document->pasteParts(copyParts(m_document->design(), m_document->layout(), ids),
                                 ids.size() == 1 ? tr("Duplicate %1").arg(toQString(ids.front()))
                                                 : tr("Duplicate %1 parts").arg(ids.size()));
    m_scene->selectParts(copies);
}

void MainWindow::deleteSelection()
{
    if (m_palette->partList()->hasFocus()) {
        const std::vector<std::string> ids = partsToEdit();
        if (!ids.empty())
            m_document->removeParts(ids);
        return;
    }
    const std::vector<std::string> ids = m_scene->selectedPartIds();
    const std::vector<int> grounds = m_scene->selectedGrounds();
    std::vector<std::pair<PinRef, PinRef>> wires;
    for (const RoutedWire &w : m_scene->selectedWires()) {
        // A wire to a part that goes anyway needs no step of its own.
        const auto going = [&](const PinRef &pin) {
            return std::find(ids.begin(), ids.end(), pin.part) != ids.end();
        };
        if (!going(w.from) && !going(w.to))
            wires.emplace_back(w.from, w.to);
    }
    const int kinds = int(!ids.empty()) + int(!grounds.empty()) + int(!wires.empty());
    if (kinds == 0)
        return;
    QUndoStack *stack = m_document->undoStack();
    if (kinds > 1)
        stack->beginMacro(tr("Delete selection"));
    if (!wires.empty())
        m_document->removeWires(wires);
    if (!grounds.empty())
        m_document->removeGrounds(grounds);
    if (!ids.empty())
        m_document->removeParts(ids);
    if (kinds > 1)
        stack->endMacro();
}

SuggestDialog *MainWindow::suggestDialog()
{
    if (!m_suggest)
        m_suggest = new SuggestDialog(m_document, this);
    return m_suggest;
}

bool MainWindow::openText(const std::string &text, const QString &name, QString *error)
{
    auto design = parseDesign(text, DesignRules::Draft, toStdString(name));
    if (!design) {
        if (error)
            *error = toQString(design.errorText());
        return false;
    }
    m_displayName = name;
    m_document->reset(std::move(design).value(), QString());
    return true;
}

bool MainWindow::openFile(const QString &path, QString *error)
{
    auto design = loadDesign(toStdString(path), DesignRules::Draft);
    if (!design) {
        if (error)
            *error = toQString(design.errorText());
        return false;
    }
    m_displayName = QFileInfo(path).fileName();
    m_document->reset(std::move(design).value(), path);
    addRecentFile(path);
    return true;
}

bool MainWindow::saveTo(const QString &path, QString *error)
{
    if (!m_document->save(path, error))
        return false;
    m_displayName = QFileInfo(path).fileName();
    addRecentFile(path);
    updateTitle();
    return true;
}

QString MainWindow::statusText() const
{
    return m_timing->text() + QStringLiteral(" ") + m_diagnostics->text();
}

void MainWindow::updateTitle()
{
    const QString name = m_displayName.isEmpty() ? tr("untitled") : m_displayName;
    setWindowTitle(tr("%1[*] — Loopsketch").arg(name));
    setWindowModified(m_document->isModified());
}

void MainWindow::rebuildSketch()
{
    m_scene->rebuild(&m_document->design(), m_document->layout());
    m_palette->showDesign(m_document->design());
    m_inspector->showPart({});
    m_view->fitDesign();
    updateTitle();
}

void MainWindow::showAnalysis(const Analysis &analysis)
{
    QElapsedTimer timer;
    timer.start();
    // Inside a burst of edits (wheel, arrow keys) the panels draw without antialiasing,
    // which saves a few ms a frame; the settled frame is drawn smooth again.
    const qint64 now = QDateTime::currentMSecsSinceEpoch();
    const bool burst = now - m_lastAnalysisAt < 250;
    m_lastAnalysisAt = now;
    if (burst) {
        for (PlotPanel *panel : m_panels)
            panel->setRenderHint(QPainter::Antialiasing, false);
        m_settleTimer->start();
    }
    m_readout->showAnalysis(analysis, m_document->design());
    m_scene->markProblem({});
    for (PlotPanel *panel : m_panels) {
        panel->showUnavailable(QString());
        panel->showAnalysis(analysis);
    }
    m_view->setBadge(topologyBadge(analysis), analysis.topology.has_value());
    const double panelsMs = double(timer.nsecsElapsed()) / 1e6;
    m_timing->setText(tr("recomputed in %1 ms (analysis %2 ms, panels %3 ms)")
                          .arg(m_document->lastAnalysisMs() + panelsMs, 0, 'f', 1)
                          .arg(m_document->lastAnalysisMs(), 0, 'f', 1)
                          .arg(panelsMs, 0, 'f', 1));
}

void MainWindow::selectionChanged()
{
    const std::string id = m_scene->selectedPartId();
    if (id != m_inspector->partId())
        m_inspector->showPart(id);
    m_palette->selectPart(id);
}

void MainWindow::addRecentFile(const QString &path)
{
    QSettings settings;
    QStringList files = settings.value(kRecentKey).toStringList();
    const QString absolute = QFileInfo(path).absoluteFilePath();
    files.removeAll(absolute);
    files.prepend(absolute);
    while (files.size() > kMaxRecent)
        files.removeLast();
    settings.setValue(kRecentKey, files);
    updateRecentMenu();
}

void MainWindow::updateRecentMenu()
{
    if (!m_recentMenu)
        return;
    m_recentMenu->clear();
    const QStringList files = QSettings().value(kRecentKey).toStringList();
    for (const QString &f : files) {
        m_recentMenu
            ->addAction(QFileInfo(f).fileName(), this,
                        [this, f] {
                            if (!maybeSave())
                                return;
                            QString error;
                            if (!openFile(f, &error))
                                QMessageBox::warning(this, tr("Open design"), error);
                        })
            ->setToolTip(f);
    }
    m_recentMenu->setEnabled(!files.isEmpty());
}

void MainWindow::newDesign()
{
    if (!maybeSave())
        return;
    m_displayName.clear();
    m_document->reset(DesignDocument::blankDesign(), QString());
    if (auto *dock = findChild<QDockWidget *>(QStringLiteral("DesignPropertiesDock"))) {
        dock->show();
        dock->raise();
    }
    updateTitle();
}

void MainWindow::placeSymbol(int symbol, QPointF scenePos)
{
    if (symbol < 0) {
        m_document->addGround(scenePos.x(), scenePos.y());
        return;
    }
    if (symbol > int(PartType::Load))
        return;
    const std::string id = m_document->addPart(PartType(symbol), scenePos.x(), scenePos.y());
    m_scene->selectPart(id);
}

void MainWindow::showUnavailable(const QString &reason, const QString &partId)
{
    m_readout->showUnavailable(reason);
    for (PlotPanel *panel : m_panels)
        panel->showUnavailable(reason);
    m_view->setBadge(tr("not analysed"), false);
    m_timing->clear();
    if (!partId.isEmpty())
        m_scene->markProblem(toStdString(partId));
}

void MainWindow::newFromExample(const QString &resource)
{
    if (!maybeSave())
        return;
    QFile file(resource);
    if (!file.open(QIODevice::ReadOnly))
        return;
    const QByteArray text = file.readAll();
    QString error;
    if (!openText(text.toStdString(), tr("untitled"), &error))
        QMessageBox::warning(this, tr("New design"), error);
    m_displayName.clear();
    updateTitle();
}

void MainWindow::openDialog()
{
    if (!maybeSave())
        return;
    const QString path = QFileDialog::getOpenFileName(this, tr("Open design"), QString(),
                                                      tr("Loopsketch designs (*.loopsketch)"));
    if (path.isEmpty())
        return;
    QString error;
    if (!openFile(path, &error))
        QMessageBox::warning(this, tr("Open design"), error);
}

bool MainWindow::save()
{
    if (m_document->filePath().isEmpty())
        return saveAs();
    QString error;
    if (!saveTo(m_document->filePath(), &error)) {
        QMessageBox::warning(this, tr("Save design"), error);
        return false;
    }
    return true;
}

bool MainWindow::saveAs()
{
    QString path = QFileDialog::getSaveFileName(this, tr("Save design"), m_document->filePath(),
                                                tr("Loopsketch designs (*.loopsketch)"));
    if (path.isEmpty())
        return false;
    if (!path.endsWith(QStringLiteral(".loopsketch")))
        path += QStringLiteral(".loopsketch");
    QString error;
    if (!saveTo(path, &error)) {
        QMessageBox::warning(this, tr("Save design"), error);
        return false;
    }
    return true;
}

bool MainWindow::maybeSave()
{
    if (!m_document->isModified() || !m_ask)
        return true;
    const auto answer = QMessageBox::question(
        this, tr("Unsaved changes"),
        tr("%1 has changes that are not saved. Save them first?")
            .arg(m_displayName.isEmpty() ? tr("This design") : m_displayName),
        QMessageBox::Save | QMessageBox::Discard | QMessageBox::Cancel, QMessageBox::Save);
    if (answer == QMessageBox::Save)
        return save();
    return answer == QMessageBox::Discard;
}

void MainWindow::closeEvent(QCloseEvent *event)
{
    if (!maybeSave()) {
        event->ignore();
        return;
    }
    QSettings settings;
    settings.setValue(kGeometryKey, saveGeometry());
    settings.setValue(kStateKey, saveState(kLayoutVersion));
    const QString recovery = recoveryFile();
    if (!recovery.isEmpty())
        QFile::remove(recovery);
    event->accept();
}

void MainWindow::showEvent(QShowEvent *event)
{
    QMainWindow::showEvent(event);
    if (m_sizedDocks)
        return;
    m_sizedDocks = true;
    // Dock sizes only take once the window has its size and its layout ran.
    QTimer::singleShot(0, this, [this] { resetLayout(); });
}

void MainWindow::resetLayout()
{
    const bool compact = width() < kCompactWidth;
    arrangeDocks(compact);
    // Sizes take once the layout has placed the docks, and the Sketch fits its new size
    // once they took.
    // A first arrangement may still be settling on the first pass (the docks moved from the
    // constructor's places), so the sizes are given twice.
    QTimer::singleShot(0, this, [this, compact] {
        sizeDocks(compact);
        QTimer::singleShot(0, this, [this, compact] {
            // Docks that asked for more room than the screen has on the way give it back.
            if (QGuiApplication::platformName() != QStringLiteral("offscreen") && screen()) {
                const QRect available = screen()->availableGeometry();
                if (height() > available.height() - 48 || width() > available.width() - 16)
                    resize(std::min(width(), available.width() - 16),
                           std::min(height(), available.height() - 48));
            }
            sizeDocks(compact);
            m_view->fitDesign();
        });
    });
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

void MainWindow::dragEnterEvent(QDragEnterEvent *event)
{
    if (event->mimeData()->hasUrls())
        event->acceptProposedAction();
}

void MainWindow::dropEvent(QDropEvent *event)
{
    const auto urls = event->mimeData()->urls();
    if (urls.isEmpty() || !urls.front().isLocalFile() || !maybeSave())
        return;
    QString error;
    if (!openFile(urls.front().toLocalFile(), &error))
        QMessageBox::warning(this, tr("Open design"), error);
}

bool MainWindow::writeRecovery()
{
    const QString path = recoveryFile();
    if (path.isEmpty() || !m_document->isModified())
        return false;
    QDir().mkpath(QFileInfo(path).absolutePath());
    auto written = writeFileAtomically(toStdString(path), serializeDesign(m_document->design()));
    if (!written) {
        // Not a dialog every 30 s: a note in the status bar, so the user knows to save.
        statusBar()->showMessage(tr("Autosave of the unsaved work failed (%1); save the design "
                                    "to keep it.")
                                     .arg(toQString(written.errorText())),
                                 20000);
        return false;
    }
    return true;
}

void MainWindow::about()
{
    QMessageBox::about(
        this, tr("About Loopsketch"),
        tr("<h3>Loopsketch %1</h3>"
           "<p>Negative-feedback loop design around amplifiers: two-port estimate, exact "
           "solution and return ratio of one linear circuit, side by side.</p>"
           "<p><b>What the model does not cover.</b> Loopsketch computes a small-signal "
           "linear model. It does not model supply limits, slew rate, output saturation, "
           "common-mode limits, thermal effects, breakdown, or any large-signal behaviour, "
           "and its gain block is a generic linear amplifier, not a model of any real "
           "device. Check a design on the bench. Designs connected to mains, high voltage, "
           "medical equipment or safety functions must follow the applicable standards, "
           "local codes and licensed engineering practice; Loopsketch is not a substitute "
           "for them.</p>")
            .arg(QStringLiteral(LOOPSKETCH_VERSION)));
}

} // namespace loopsketch::ui
