#include "window/mainwindow.h"

#include "panels/candidatespanel.h"
#include "panels/noisepanel.h"
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
#include "support/vectorstate.h"
#include "window/designdocument.h"
#include "window/exportactions.h"
#include "window/partclipboard.h"

#include "loopsketch/design/atomicfile.h"
#include "loopsketch/design/designfile.h"

#include <QAction>
#include <QApplication>
#include <QCloseEvent>
#include <QDateTime>
#include <QDockWidget>
#include <QElapsedTimer>
#include <QFile>
#include <QFileDialog>
#include <QFileInfo>
#include <QLabel>
#include <QLayout>
#include <QMenuBar>
#include <QMessageBox>
#include <QMimeData>
#include <QScreen>
#include <QStatusBar>
#include <QTimer>

namespace loopsketch::ui {

MainWindow::MainWindow(QWidget *parent)
    : QMainWindow(parent), m_document(new DesignDocument(this)), m_scene(new SketchScene(this)),
      m_view(new SketchView(m_scene, this)), m_readout(new Readout(this)),
      m_inspector(new Inspector(m_document, this)), m_palette(new PartsPalette(this)),
      m_timing(new QLabel(this)), m_diagnostics(new QLabel(this))
{
    // One hook per thread's event loop (support/vectorstate.h: what dirty vector registers
    // cost the UI thread).
    static const bool hooked = (clearUpperVectorStateOnEveryWake(), true);
    (void)hooked;
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

    m_pendingTimer = new QTimer(this);
    m_pendingTimer->setSingleShot(true);
    m_pendingTimer->setInterval(150);
    connect(m_pendingTimer, &QTimer::timeout, this, [this] { m_readout->setEnabled(false); });

    connectDocument();
    connectSketch();

    m_settleTimer = new QTimer(this);
    m_settleTimer->setSingleShot(true);
    m_settleTimer->setInterval(250);
    connect(m_settleTimer, &QTimer::timeout, this, [this] {
        for (PlotPanel *panel : m_panels) {
            panel->setRenderHint(QPainter::Antialiasing, true);
            panel->viewport()->update();
        }
    });

    startAutosave();

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
    restoreLayout();
    updateTitle();
}

void MainWindow::connectDocument()
{
    connect(m_document, &DesignDocument::designReset, this, &MainWindow::rebuildSketch);
    connect(m_document, &DesignDocument::analysisChanged, this, &MainWindow::showAnalysis);
    connect(m_document, &DesignDocument::noiseChanged, this, &MainWindow::showNoise);
    connect(m_document, &DesignDocument::analysisUnavailable, this, &MainWindow::showUnavailable);
    connect(m_document, &DesignDocument::analysisPending, this, &MainWindow::showPending);
    for (PlotPanel *panel : m_panels) {
        for (QWidget *w = panel->parentWidget(); w; w = w->parentWidget()) {
            if (auto *dock = qobject_cast<QDockWidget *>(w)) {
                connect(dock, &QDockWidget::visibilityChanged, this, [this, panel](bool visible) {
                    if (visible)
                        catchUpPanel(panel);
                });
                break;
            }
        }
    }
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
}

void MainWindow::connectSketch()
{
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
    connect(m_palette, &PartsPalette::partActivated, this,
            [this](const std::string &id) { m_scene->selectPart(id); });
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

void MainWindow::showCandidates()
{
    m_candidatesDock->show();
    m_candidatesDock->raise();
    if (auto *loop = findChild<QDockWidget *>(QStringLiteral("LoopGainDock")))
        resizeDocks({loop, m_candidatesDock}, {height() / 2, height() / 2}, Qt::Vertical);
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
    m_pendingTimer->stop();
    m_readout->setEnabled(true);
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
    const bool noiseFollows = m_document->isNoiseFollowing();
    m_readout->showAnalysis(analysis, m_document->design(), noiseFollows);
    m_scene->markProblem({});
    // A panel in a dock out of sight (a tab behind another, a closed dock) catches up when
    // its dock comes on screen (catchUpPanel).
    for (PlotPanel *panel : m_panels) {
        // (A dock behind another tab stays "visible", moved out of the window.)
        // The noise panel, when its noise follows, draws it from showNoise().
        if (!panel->isVisible() || panel->viewport()->visibleRegion().isEmpty()
            || (noiseFollows && panel == m_noise)) {
            m_panelsBehind.insert(panel);
            continue;
        }
        m_panelsBehind.erase(panel);
        // The Readout's update, or the panel before, may leave the vector registers dirty.
        clearUpperVectorState();
        panel->showUnavailable(QString());
        panel->showAnalysis(analysis);
    }
    m_view->setBadge(topologyBadge(analysis), analysis.topology.has_value());
    const double panelsMs = double(timer.nsecsElapsed()) / 1e6;
    if (m_document->isShownCoarse())
        m_timing->setText(tr("coarse sweep (%1 points per decade), the full one follows "
                             "(analysis %2 ms, panels %3 ms)")
                              .arg(DesignDocument::kCoarsePointsPerDecade)
                              .arg(m_document->lastAnalysisMs(), 0, 'f', 1)
                              .arg(panelsMs, 0, 'f', 1));
    else
        m_timing->setText(tr("recomputed in %1 ms (analysis %2 ms, panels %3 ms)")
                              .arg(m_document->lastAnalysisMs() + panelsMs, 0, 'f', 1)
                              .arg(m_document->lastAnalysisMs(), 0, 'f', 1)
                              .arg(panelsMs, 0, 'f', 1));
    if (noiseFollows)
        m_timing->setText(m_timing->text() + tr("; the noise follows"));
}

void MainWindow::catchUpPanel(PlotPanel *panel)
{
    // Shown now without its noise, the noise panel waits for showNoise().
    if (panel == m_noise && m_document->isNoiseFollowing())
        return;
    if (!m_panelsBehind.erase(panel))
        return;
    if (const Analysis *shown = m_document->shownAnalysis()) {
        clearUpperVectorState();
        panel->showUnavailable(QString());
        panel->showAnalysis(*shown);
    }
}

void MainWindow::showNoise(const Analysis &analysis)
{
    QElapsedTimer timer;
    timer.start();
    // Only the noise cell: the noise follows only where no spec reads it.
    m_readout->showNoise(analysis, m_document->design());
    if (m_noise->isVisible() && !m_noise->viewport()->visibleRegion().isEmpty()) {
        m_panelsBehind.erase(m_noise);
        clearUpperVectorState();
        m_noise->showUnavailable(QString());
        m_noise->showAnalysis(analysis);
    } else {
        m_panelsBehind.insert(m_noise);
    }
    if (!m_document->isShownCoarse())
        m_timing->setText(tr("%1; the noise followed in %2 ms (panels %3 ms)")
                              .arg(m_timing->text().section(QStringLiteral(";"), 0, 0))
                              .arg(m_document->lastNoiseMs(), 0, 'f', 1)
                              .arg(double(timer.nsecsElapsed()) / 1e6, 0, 'f', 1));
}

void MainWindow::showPending()
{
    m_timing->setText(tr("analysing the change…"));
    // A slow design: the Readout greys while its numbers are those of the previous values.
    if (!m_pendingTimer->isActive() && m_readout->isEnabled())
        m_pendingTimer->start();
}

void MainWindow::selectionChanged()
{
    const std::string id = m_scene->selectedPartId();
    if (id != m_inspector->partId())
        m_inspector->showPart(id);
    m_palette->selectPart(id);
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
    m_pendingTimer->stop();
    m_readout->setEnabled(true);
    m_readout->showUnavailable(reason);
    for (PlotPanel *panel : m_panels)
        panel->showUnavailable(reason);
    m_panelsBehind.clear();
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
    saveLayout();
    // No autosave may write the file again between the close and the end of the process.
    if (auto *timer = findChild<QTimer *>(QStringLiteral("RecoveryTimer")))
        timer->stop();
    const QString recovery = recoveryFile();
    if (!recovery.isEmpty())
        QFile::remove(recovery);
    event->accept();
}

void MainWindow::showEvent(QShowEvent *event)
{
    QMainWindow::showEvent(event);
    if (auto *timer = findChild<QTimer *>(QStringLiteral("RecoveryTimer"));
        timer && !timer->isActive())
        timer->start(); // shown again after a close
    if (m_sizedDocks)
        return;
    m_sizedDocks = true;
    // Dock sizes only take once the window has its size and its layout ran.
    QTimer::singleShot(0, this, [this] { resetLayout(); });
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
