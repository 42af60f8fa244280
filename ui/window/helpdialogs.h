#pragma once

// Help > Guide and Help > Keyboard shortcuts. The guide is a page of our own built into the
// program (resources/guide/guide.html); the shortcut list is made from the window's own
// actions when it opens, so it always says what the keys do now.

#include <QDialog>
#include <QString>

#include <vector>

class QMainWindow;
class QTableWidget;
class QTextBrowser;

namespace loopsketch::ui {

/// The task-oriented guide in a text browser.
class GuideDialog : public QDialog
{
    Q_OBJECT

public:
    explicit GuideDialog(QWidget *parent = nullptr);
    QTextBrowser *browser() const { return m_browser; }

private:
    QTextBrowser *m_browser;
};

/// One row of the shortcut list: where the action lives, what it is called, its keys.
struct ShortcutEntry
{
    QString place; ///< menu path ("Edit"), the panel ("Candidates"), "Sketch" or "Window"
    QString action; ///< the action's text without mnemonics or ellipsis
    QString keys; ///< every shortcut of the action, in the platform's text, "; " apart
};

/// Every action of `window` that has a shortcut, found through its menus first (with their
/// path) and then among the window's other actions, followed by the Sketch's keys.
std::vector<ShortcutEntry> collectShortcuts(const QMainWindow *window);

/// The shortcut list as a table.
class ShortcutsDialog : public QDialog
{
    Q_OBJECT

public:
    explicit ShortcutsDialog(const QMainWindow *window, QWidget *parent = nullptr);
    QTableWidget *table() const { return m_table; }

private:
    QTableWidget *m_table;
};

/// Help > Guide and Help > Keyboard shortcuts: a new dialog, deleted when closed.
void showGuide(QWidget *parent);
void showShortcuts(QMainWindow *window);

} // namespace loopsketch::ui
