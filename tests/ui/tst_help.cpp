// Help > Guide and Help > Keyboard shortcuts: the guide covers the six tasks of a design
// session, and the shortcut list, made from the window's own actions, names every action
// that has a key.

#include "window/helpdialogs.h"
#include "window/mainwindow.h"

#include "demowindowtest.h"

#include <QAction>
#include <QFile>
#include <QRegularExpression>
#include <QTableWidget>
#include <QTest>
#include <QTextBrowser>

#include <gtest/gtest.h>

using namespace loopsketch::ui;

namespace {

class HelpTest : public DemoWindowTest
{
protected:
    template<typename Dialog> Dialog *open(const char *actionName)
    {
        auto *action = window->findChild<QAction *>(QLatin1String(actionName));
        EXPECT_NE(action, nullptr) << actionName;
        if (!action)
            return nullptr;
        action->trigger();
        QApplication::processEvents();
        const QList<Dialog *> dialogs = window->findChildren<Dialog *>();
        EXPECT_EQ(dialogs.size(), 1);
        return dialogs.isEmpty() ? nullptr : dialogs.front();
    }
};

QString withoutMnemonic(QString text)
{
    text.remove(QRegularExpression(QStringLiteral("&(?!&)")));
    text.remove(QChar(0x2026));
    return text.trimmed();
}

TEST_F(HelpTest, GuideCoversEveryTaskOfADesignSession)
{
    GuideDialog *guide = open<GuideDialog>("GuideAction");
    ASSERT_NE(guide, nullptr);
    EXPECT_TRUE(guide->isVisible());
    const QString text = guide->browser()->toPlainText();
    // The tasks issue 13 asks the guide to cover, in order.
    qsizetype at = -1;
    for (const char *task : {"Build a loop", "Step parts", "Read the panels", "Pin candidates",
                             "Run a spread", "Export"}) {
        const qsizetype found = text.indexOf(QLatin1String(task));
        EXPECT_GT(found, at) << task;
        at = std::max(at, found);
    }
    // Every menu entry the guide names (in bold: "File &gt; New") exists in the window.
    QFile source(QStringLiteral(":/guide/guide.html"));
    ASSERT_TRUE(source.open(QIODevice::ReadOnly));
    const QString html = QString::fromUtf8(source.readAll());
    const QRegularExpression path(
        QStringLiteral("<b>(File|Edit|Design|View|Help) &gt; ([^<]+)</b>"));
    int named = 0;
    for (auto it = path.globalMatch(html); it.hasNext();) {
        const auto m = it.next();
        const QString entry = m.captured(2).simplified();
        bool found = false;
        for (const QAction *a : window->findChildren<QAction *>())
            found = found || withoutMnemonic(a->text()) == entry;
        EXPECT_TRUE(found) << m.captured(0).toStdString();
        ++named;
    }
    EXPECT_GE(named, 5);
    guide->close();
    QApplication::processEvents();
    EXPECT_TRUE(window->findChildren<GuideDialog *>().isEmpty()) << "closed dialog not deleted";
}

TEST_F(HelpTest, ShortcutListNamesEveryActionWithAKey)
{
    ShortcutsDialog *dialog = open<ShortcutsDialog>("ShortcutsAction");
    ASSERT_NE(dialog, nullptr);
    const QTableWidget *table = dialog->table();
    auto hasRow = [table](const QString &action, const QString &keys) {
        for (int r = 0; r < table->rowCount(); ++r) {
            if (table->item(r, 1)->text() == action && table->item(r, 2)->text().contains(keys))
                return true;
        }
        return false;
    };
    int withKeys = 0;
    for (const QAction *a : window->findChildren<QAction *>()) {
        for (const QKeySequence &k : a->shortcuts()) {
            if (k.isEmpty())
                continue;
            ++withKeys;
            EXPECT_TRUE(hasRow(withoutMnemonic(a->text()), k.toString(QKeySequence::NativeText)))
                << a->text().toStdString() << " " << k.toString().toStdString();
        }
    }
    // Undo, redo, new, open, save, save as, quit, cut, copy, paste, duplicate, delete, select
    // all, pin, reset plot zoom at the least.
    EXPECT_GE(withKeys, 15);
    // The Sketch's own keys are listed too.
    bool rotate = false;
    for (int r = 0; r < table->rowCount(); ++r)
        rotate
            = rotate || (table->item(r, 0)->text() == "Sketch" && table->item(r, 2)->text() == "R");
    EXPECT_TRUE(rotate);
}

TEST_F(HelpTest, ShortcutListFollowsAShortcutAddedLater)
{
    // The list is made when it opens: a key given to an action afterwards appears.
    auto *fit = new QAction(QStringLiteral("Test fit"), window.get());
    fit->setShortcut(QKeySequence(Qt::CTRL | Qt::ALT | Qt::Key_F));
    window->addAction(fit);
    const std::vector<ShortcutEntry> entries = collectShortcuts(window.get());
    bool found = false;
    for (const ShortcutEntry &e : entries)
        found = found
            || (e.action == "Test fit"
                && e.keys == fit->shortcut().toString(QKeySequence::NativeText));
    EXPECT_TRUE(found);
}

} // namespace
