// The window's menus and actions: File, Edit, View, Analysis and Help, the recent files, and
// the Edit menu's selection commands (copy, cut, paste, duplicate, delete).
#include "window/mainwindow.h"

#include "panels/candidatespanel.h"
#include "panels/panels.h"
#include "panels/spreadpanel.h"
#include "panels/suggestdialog.h"
#include "sketch/partspalette.h"
#include "sketch/sketchscene.h"
#include "sketch/sketchview.h"
#include "support/qtadapter.h"
#include "window/designdocument.h"
#include "window/exportactions.h"
#include "window/helpdialogs.h"
#include "window/partclipboard.h"

#include <QAction>
#include <QApplication>
#include <QClipboard>
#include <QDir>
#include <QDockWidget>
#include <QFileInfo>
#include <QKeySequence>
#include <QListWidget>
#include <QMenuBar>
#include <QMessageBox>
#include <QMimeData>
#include <QSettings>
#include <QStatusBar>
#include <QUndoStack>

namespace loopsketch::ui {

namespace {

constexpr int kMaxRecent = 8;
const char *kRecentKey = "recentFiles";

} // namespace

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
    help->addAction(tr("&Guide"), this, [this] { showGuide(this); })->setObjectName("GuideAction");
    help->addAction(tr("&Keyboard shortcuts"), this, [this] { showShortcuts(this); })
        ->setObjectName("ShortcutsAction");
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

} // namespace loopsketch::ui
