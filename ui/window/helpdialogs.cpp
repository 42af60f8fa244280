#include "window/helpdialogs.h"

#include "sketch/sketchview.h"

#include <QAction>
#include <QDialogButtonBox>
#include <QDockWidget>
#include <QFile>
#include <QHeaderView>
#include <QMainWindow>
#include <QMenu>
#include <QMenuBar>
#include <QRegularExpression>
#include <QSet>
#include <QTableWidget>
#include <QTextBrowser>
#include <QVBoxLayout>

namespace loopsketch::ui {

namespace {

QString plainText(const QAction *action)
{
    QString text = action->text();
    text.remove(QRegularExpression(QStringLiteral("&(?!&)")));
    if (text.endsWith(QChar(0x2026)))
        text.chop(1);
    if (text.endsWith(QStringLiteral("...")))
        text.chop(3);
    return text.trimmed();
}

QString keysOf(const QAction *action)
{
    QStringList keys;
    for (const QKeySequence &k : action->shortcuts()) {
        if (!k.isEmpty())
            keys << k.toString(QKeySequence::NativeText);
    }
    return keys.join(QStringLiteral("; "));
}

void collectMenu(const QMenu *menu, const QString &path, std::vector<ShortcutEntry> &out,
                 QSet<const QAction *> &seen)
{
    for (QAction *action : menu->actions()) {
        if (action->isSeparator())
            continue;
        if (QMenu *sub = action->menu()) {
            collectMenu(sub, path + QStringLiteral(" > ") + plainText(sub->menuAction()), out,
                        seen);
            continue;
        }
        seen.insert(action);
        const QString keys = keysOf(action);
        if (!keys.isEmpty())
            out.push_back({path, plainText(action), keys});
    }
}

} // namespace

GuideDialog::GuideDialog(QWidget *parent) : QDialog(parent), m_browser(new QTextBrowser(this))
{
    setWindowTitle(tr("Loopsketch guide"));
    QFile file(QStringLiteral(":/guide/guide.html"));
    if (file.open(QIODevice::ReadOnly))
        m_browser->setHtml(QString::fromUtf8(file.readAll()));
    else
        m_browser->setPlainText(
            tr("The guide is missing from this build (%1).").arg(file.fileName()));
    m_browser->setOpenExternalLinks(false);
    auto *buttons = new QDialogButtonBox(QDialogButtonBox::Close, this);
    connect(buttons, &QDialogButtonBox::rejected, this, &QDialog::reject);
    auto *layout = new QVBoxLayout(this);
    layout->addWidget(m_browser);
    layout->addWidget(buttons);
    resize(640, 620);
}

std::vector<ShortcutEntry> collectShortcuts(const QMainWindow *window)
{
    std::vector<ShortcutEntry> out;
    QSet<const QAction *> seen;
    for (QAction *top : window->menuBar()->actions()) {
        if (QMenu *menu = top->menu())
            collectMenu(menu, plainText(top), out, seen);
    }
    // Actions with keys that sit on widgets rather than in a menu.
    for (const QAction *action : window->findChildren<QAction *>()) {
        if (seen.contains(action) || action->menu())
            continue;
        const QString keys = keysOf(action);
        if (keys.isEmpty())
            continue;
        // Named after the panel it works in (the dock's title), else the window.
        QString place = QObject::tr("Window");
        for (QObject *o = action->parent(); o; o = o->parent()) {
            if (auto *dock = qobject_cast<QDockWidget *>(o)) {
                place = dock->windowTitle();
                break;
            }
        }
        out.push_back({place, plainText(action), keys});
    }
    for (const auto &[keys, what] : SketchView::keyHelp())
        out.push_back({QObject::tr("Sketch"), what, keys});
    return out;
}

ShortcutsDialog::ShortcutsDialog(const QMainWindow *window, QWidget *parent)
    : QDialog(parent), m_table(new QTableWidget(this))
{
    setWindowTitle(tr("Keyboard shortcuts"));
    const std::vector<ShortcutEntry> entries = collectShortcuts(window);
    m_table->setColumnCount(3);
    m_table->setHorizontalHeaderLabels({tr("Where"), tr("Action"), tr("Keys")});
    m_table->setRowCount(int(entries.size()));
    for (int row = 0; row < int(entries.size()); ++row) {
        const ShortcutEntry &e = entries[std::size_t(row)];
        m_table->setItem(row, 0, new QTableWidgetItem(e.place));
        m_table->setItem(row, 1, new QTableWidgetItem(e.action));
        m_table->setItem(row, 2, new QTableWidgetItem(e.keys));
    }
    m_table->setEditTriggers(QAbstractItemView::NoEditTriggers);
    m_table->setSelectionMode(QAbstractItemView::NoSelection);
    m_table->verticalHeader()->hide();
    m_table->horizontalHeader()->setSectionResizeMode(QHeaderView::ResizeToContents);
    m_table->horizontalHeader()->setStretchLastSection(true);
    auto *buttons = new QDialogButtonBox(QDialogButtonBox::Close, this);
    connect(buttons, &QDialogButtonBox::rejected, this, &QDialog::reject);
    auto *layout = new QVBoxLayout(this);
    layout->addWidget(m_table);
    layout->addWidget(buttons);
    resize(620, 520);
}

void showGuide(QWidget *parent)
{
    auto *dialog = new GuideDialog(parent);
    dialog->setAttribute(Qt::WA_DeleteOnClose);
    dialog->show();
}

void showShortcuts(QMainWindow *window)
{
    auto *dialog = new ShortcutsDialog(window, window);
    dialog->setAttribute(Qt::WA_DeleteOnClose);
    dialog->show();
}

} // namespace loopsketch::ui
