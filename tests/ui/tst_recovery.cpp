// Unsaved work survives a hard kill, and a failed save loses nothing.
//
// Crash recovery: a real child process (recovery_editor, the window as app/gui.cpp starts
// it) edits the demo with a wheel event, its autosave (LOOPSKETCH_AUTOSAVE_MS) writes the
// recovery file, it is killed with SIGKILL, and a new MainWindow in this process, with the
// same isolated XDG_DATA_HOME, must offer the work and restore it byte for byte as unsaved.
// Failed saves: File > Save onto a disk that is full (RLIMIT_FSIZE, write() fails with EFBIG
// part-way) or read-only (a tmpfs remounted read-only in this process's private mount
// namespace, which stops root too) must show a message naming the path, keep the file
// byte-identical, leave no temporary file and keep the document modified.
// The expected behaviour is Loopsketch's own (ui/README.md §5: atomic saves, recovery offer);
// the one value checked is RF's next E24 step after 1.0 MOhm, 1.1 MOhm (IEC 60063, E24).

#include "faultinjection.h"

#include "window/designdocument.h"
#include "window/mainwindow.h"

#include "loopsketch/design/designfile.h"

#include <QAction>
#include <QApplication>
#include <QDir>
#include <QFile>
#include <QFileInfo>
#include <QMessageBox>
#include <QProcess>
#include <QPushButton>
#include <QStatusBar>
#include <QTemporaryDir>
#include <QTest>
#include <QTimer>

#include <gmock/gmock.h>
#include <gtest/gtest.h>

#include <csignal>
#include <memory>

#include <sys/resource.h>

using namespace loopsketch;
using namespace loopsketch::ui;
using ::testing::HasSubstr;

namespace {

const QString kDemo = QStringLiteral(LOOPSKETCH_DESIGNS_DIR "/demo.loopsketch");
const QString kEditor = QStringLiteral(LOOPSKETCH_RECOVERY_EDITOR);

/// Set up in main(): a directory on a read-only tmpfs holding a copy of the demo, or why not.
QString g_readOnlyDir;
bool g_mounted = false;
std::string g_readOnlyUnavailable = "not set up";

QByteArray readAll(const QString &path)
{
    QFile f(path);
    return f.open(QIODevice::ReadOnly) ? f.readAll() : QByteArray();
}

bool writeAll(const QString &path, const QByteArray &bytes)
{
    QDir().mkpath(QFileInfo(path).absolutePath());
    QFile f(path);
    return f.open(QIODevice::WriteOnly) && f.write(bytes) == bytes.size();
}

QStringList entriesOf(const QString &dir)
{
    return QDir(dir).entryList(QDir::AllEntries | QDir::Hidden | QDir::NoDotAndDotDot, QDir::Name);
}

/// What a message box showed before the watcher pressed its button.
struct SeenBox
{
    bool seen = false;
    QString title;
    QString text;
};

/// Presses `button` on the next modal message box while it lives (the boxes run their own
/// event loop, so a timer inside that loop finds them) and records what the box said.
class BoxWatcher
{
public:
    explicit BoxWatcher(QMessageBox::StandardButton button)
    {
        QObject::connect(&m_timer, &QTimer::timeout, [this, button] {
            auto *box = qobject_cast<QMessageBox *>(QApplication::activeModalWidget());
            if (!box)
                return;
            m_timer.stop();
            m_seen = {true, box->windowTitle(), box->text()};
            if (QAbstractButton *b = box->button(button))
                b->click();
            else
                box->reject();
        });
        m_timer.start(20);
    }
    const SeenBox &seen() const { return m_seen; }

private:
    QTimer m_timer;
    SeenBox m_seen;
};

/// A new window offers no recovery at its start and shows no message box within 100 ms
/// (`answer` the button a box would get); `why` names the case.
void expectNothingOffered(QMessageBox::StandardButton answer, const char *why)
{
    MainWindow window;
    window.setAskBeforeDiscarding(false);
    BoxWatcher box(answer);
    EXPECT_FALSE(window.offerRecovery()) << why;
    QTest::qWait(100);
    EXPECT_FALSE(box.seen().seen) << why;
}

QAction *saveAction(MainWindow &window)
{
    for (QAction *a : window.findChildren<QAction *>()) {
        if (a->text() == QStringLiteral("&Save"))
            return a;
    }
    return nullptr;
}

class RecoveryTest : public ::testing::Test
{
protected:
    void SetUp() override
    {
        ASSERT_TRUE(m_data.isValid());
        qputenv("XDG_DATA_HOME", m_data.path().toLocal8Bit());
        // Isolation: this process and its children use the temporary data directory.
        ASSERT_EQ(MainWindow::recoveryFile(),
                  m_data.path()
                      + QStringLiteral("/Loopsketch/loopsketch/recovery-%1.loopsketch")
                            .arg(QCoreApplication::applicationPid()));
        m_edited = m_data.filePath(QStringLiteral("edited.loopsketch"));
    }

    void startEditor(QProcess &editor, const QStringList &extra = {})
    {
        QProcessEnvironment env = QProcessEnvironment::systemEnvironment();
        env.insert(QStringLiteral("LOOPSKETCH_AUTOSAVE_MS"), QStringLiteral("200"));
        env.insert(QStringLiteral("QT_QPA_PLATFORM"), QStringLiteral("offscreen"));
        editor.setProcessEnvironment(env);
        editor.setProcessChannelMode(QProcess::SeparateChannels);
        editor.start(kEditor, QStringList{kDemo, m_edited} + extra);
        ASSERT_TRUE(editor.waitForStarted(10000)) << editor.errorString().toStdString();
    }

    /// Waits until the child printed `line` (or ended); everything it printed so far.
    static QByteArray waitForLine(QProcess &editor, const QByteArray &line, int ms)
    {
        QByteArray out;
        QDeadlineTimer deadline(ms);
        while (!out.contains(line + '\n') && !deadline.hasExpired()) {
            if (editor.state() == QProcess::NotRunning && editor.bytesAvailable() == 0)
                break;
            editor.waitForReadyRead(100);
            out += editor.readAllStandardOutput();
        }
        return out;
    }

    static std::string childErrors(QProcess &editor)
    {
        return editor.readAllStandardError().toStdString();
    }

    QTemporaryDir m_data;
    QString m_edited;
};

TEST_F(RecoveryTest, KilledEditorsWorkIsOfferedAndRestoredAsUnsaved)
{
    QProcess editor;
    startEditor(editor);
    const QByteArray said = waitForLine(editor, "edited", 60000);
    ASSERT_TRUE(said.contains("edited\n")) << said.toStdString() << childErrors(editor);
    const QByteArray edited = readAll(m_edited);
    auto editedDesign = parseDesign(edited.toStdString(), "edited");
    ASSERT_TRUE(editedDesign.ok()) << editedDesign.errorText();
    // One wheel notch up from 1.0 MOhm: the next E24 value, 1.1 MOhm (IEC 60063, E24).
    EXPECT_NEAR(editedDesign->findPart("RF")->number("value"), 1.1e6, 1e-3);

    const QString recovery = MainWindow::recoveryFileOf(editor.processId());
    EXPECT_TRUE(QTest::qWaitFor([&] { return readAll(recovery) == edited; }, 10000))
        << "the autosave never wrote the edited design to " << recovery.toStdString();
    ASSERT_EQ(::kill(pid_t(editor.processId()), SIGKILL), 0);
    ASSERT_TRUE(editor.waitForFinished(10000));
    EXPECT_EQ(editor.exitStatus(), QProcess::CrashExit);
    ASSERT_EQ(readAll(recovery), edited) << "the killed process left its recovery file";

    MainWindow window;
    window.setAskBeforeDiscarding(false);
    BoxWatcher box(QMessageBox::Yes);
    ASSERT_TRUE(window.offerRecovery());
    EXPECT_TRUE(box.seen().seen);
    EXPECT_THAT(box.seen().text.toStdString(), HasSubstr("did not close normally"));
    EXPECT_EQ(serializeDesign(window.document()->design()), edited.toStdString());
    EXPECT_NEAR(window.document()->design().findPart("RF")->number("value"), 1.1e6, 1e-3);
    EXPECT_TRUE(window.document()->isModified()) << "restored work must count as unsaved";
    EXPECT_TRUE(window.isWindowModified());
    EXPECT_TRUE(window.document()->filePath().isEmpty()) << "the recovery file is no document";

    EXPECT_FALSE(QFile::exists(recovery)) << "restored work leaves the dead copy's file";
    EXPECT_EQ(readAll(MainWindow::recoveryFile()), edited)
        << "restored work is at once in this process's recovery file";
    window.close();
    EXPECT_FALSE(QFile::exists(MainWindow::recoveryFile()))
        << "a normal close removes the recovery file";
}

// Two copies of the application running side by side: the second neither offers nor
// removes the first one's unsaved work, and a normal close of one leaves the other's file.
TEST_F(RecoveryTest, RunningCopysRecoveryFileIsLeftAlone)
{
    QProcess other; // stands in for a second running copy: alive for the whole test
    other.start(QStringLiteral("sleep"), {QStringLiteral("30")});
    ASSERT_TRUE(other.waitForStarted(10000));
    const QByteArray demo = readAll(kDemo);
    const QString othersFile = MainWindow::recoveryFileOf(other.processId());
    ASSERT_TRUE(writeAll(othersFile, demo));
    {
        MainWindow window;
        window.setAskBeforeDiscarding(false);
        BoxWatcher box(QMessageBox::Yes);
        EXPECT_FALSE(window.offerRecovery());
        QTest::qWait(100);
        EXPECT_FALSE(box.seen().seen) << "a running copy's work is not offered";
        window.close();
    }
    EXPECT_EQ(readAll(othersFile), demo) << "a normal close must not touch another copy's file";
    other.kill();
    ASSERT_TRUE(other.waitForFinished(10000));

    // Once that copy is gone, its work is offered.
    MainWindow window;
    window.setAskBeforeDiscarding(false);
    BoxWatcher box(QMessageBox::Yes);
    EXPECT_TRUE(window.offerRecovery());
    EXPECT_TRUE(box.seen().seen);
    EXPECT_EQ(serializeDesign(window.document()->design()), demo.toStdString());
}

TEST_F(RecoveryTest, NormalCloseOfTheEditorRemovesItsRecoveryFile)
{
    QProcess editor;
    startEditor(editor, {QStringLiteral("--close-after-autosave")});
    const qint64 editorPid = editor.processId();
    const QByteArray said = waitForLine(editor, "autosaved", 60000);
    ASSERT_TRUE(editor.waitForFinished(20000)) << said.toStdString();
    EXPECT_EQ(editor.exitStatus(), QProcess::NormalExit);
    EXPECT_EQ(editor.exitCode(), 0) << childErrors(editor);
    EXPECT_TRUE(said.contains("autosaved\n")) << "the recovery file existed before the close";
    EXPECT_FALSE(QFile::exists(MainWindow::recoveryFileOf(editorPid)));

    expectNothingOffered(QMessageBox::Yes, "nothing to offer after a normal close");
}

TEST_F(RecoveryTest, CorruptRecoveryFileIsReportedAndKeptAside)
{
    const QByteArray demo = readAll(kDemo);
    ASSERT_GT(demo.size(), 200);
    const QByteArray corrupt = demo.left(demo.size() / 2); // cut in the middle of the JSON
    // Left by a copy that has ended: the file name of versions before one file per process.
    const QString recovery = QFileInfo(MainWindow::recoveryFile()).absolutePath()
        + QStringLiteral("/recovery.loopsketch");
    ASSERT_TRUE(writeAll(recovery, corrupt));

    {
        MainWindow window;
        window.setAskBeforeDiscarding(false);
        BoxWatcher box(QMessageBox::Ok);
        EXPECT_FALSE(window.offerRecovery());
        ASSERT_TRUE(box.seen().seen) << "a corrupt recovery file must be reported";
        EXPECT_EQ(box.seen().title, QStringLiteral("Restore unsaved work"));
        const std::string text = box.seen().text.toStdString();
        EXPECT_THAT(text, HasSubstr("cannot be restored"));
        EXPECT_THAT(text, HasSubstr(recovery.toStdString())); // the parser names the file
        EXPECT_THAT(text, HasSubstr("line")); // and where it broke off

        const QString dir = QFileInfo(recovery).absolutePath();
        const QStringList kept
            = QDir(dir).entryList({QStringLiteral("recovery-*.unreadable.loopsketch")});
        ASSERT_EQ(kept.size(), 1) << entriesOf(dir).join(' ').toStdString();
        const QString keptPath = dir + QLatin1Char('/') + kept.front();
        EXPECT_THAT(text, HasSubstr(keptPath.toStdString()));
        EXPECT_EQ(readAll(keptPath), corrupt);
        EXPECT_FALSE(QFile::exists(recovery));

        window.close();
        EXPECT_TRUE(QFile::exists(keptPath)) << "a normal close must not remove the kept file";
    }

    expectNothingOffered(QMessageBox::Ok, "the kept file is not offered again at every start");
}

// Autosave that cannot write its recovery file (here under /proc, which takes no new files
// from root either) says so in the status bar, naming the path, instead of failing silently.
TEST(FailedAutosave, IsShownInTheStatusBar)
{
    QTemporaryDir dir;
    ASSERT_TRUE(dir.isValid());
    const QString path = dir.filePath(QStringLiteral("demo.loopsketch"));
    ASSERT_TRUE(QFile::copy(kDemo, path));
    const QByteArray oldData = qgetenv("XDG_DATA_HOME");
    qputenv("XDG_DATA_HOME", "/proc/loopsketch-no-data");
    qputenv("LOOPSKETCH_AUTOSAVE_MS", "50");
    QString message;
    {
        MainWindow window;
        window.setAskBeforeDiscarding(false);
        QString error;
        ASSERT_TRUE(window.openFile(path, &error)) << error.toStdString();
        ASSERT_TRUE(window.document()->waitForAnalysis());
        ASSERT_TRUE(window.document()->stepPart("RF", 1, false));
        for (int i = 0; i < 100 && message.isEmpty(); ++i) {
            QTest::qWait(20);
            message = window.statusBar()->currentMessage();
        }
    }
    qunsetenv("LOOPSKETCH_AUTOSAVE_MS");
    qputenv("XDG_DATA_HOME", oldData);
    EXPECT_THAT(message.toStdString(), HasSubstr("Autosave"));
    EXPECT_THAT(message.toStdString(), HasSubstr("/proc/loopsketch-no-data"));
    EXPECT_FALSE(QFileInfo::exists(QStringLiteral("/proc/loopsketch-no-data")));
}

class FailedSaveTest : public ::testing::Test
{
protected:
    /// Opens `path` in the window and makes one edit, so that there is unsaved work.
    void openAndEdit(const QString &path)
    {
        window.setAskBeforeDiscarding(false);
        QString error;
        ASSERT_TRUE(window.openFile(path, &error)) << error.toStdString();
        ASSERT_TRUE(window.document()->waitForAnalysis());
        ASSERT_TRUE(window.document()->stepPart("RF", 1, false));
        ASSERT_TRUE(window.document()->isModified());
        ASSERT_TRUE(window.isWindowModified());
    }

    /// File > Save with a watcher on the message box; returns what the box said.
    SeenBox saveThroughTheMenu()
    {
        QAction *save = saveAction(window);
        EXPECT_NE(save, nullptr);
        BoxWatcher box(QMessageBox::Ok);
        if (save)
            save->trigger();
        QTest::qWait(50);
        return box.seen();
    }

    MainWindow window;
};

TEST_F(FailedSaveTest, FullDiskShowsThePathKeepsTheFileAndTheDocumentModified)
{
    QTemporaryDir dir;
    ASSERT_TRUE(dir.isValid());
    const QString path = dir.filePath(QStringLiteral("demo.loopsketch"));
    ASSERT_TRUE(QFile::copy(kDemo, path));
    const QByteArray before = readAll(path);
    openAndEdit(path);

    // A file-size limit far below the design's length: write() fails part-way with EFBIG,
    // as on a disk that fills up during the save.
    loopsketch::test::FileSizeLimit limit(256);
    ASSERT_TRUE(limit.ok());
    const SeenBox box = saveThroughTheMenu();
    limit.lift();

    ASSERT_TRUE(box.seen) << "a failed save must be reported";
    EXPECT_EQ(box.title, QStringLiteral("Save design"));
    EXPECT_THAT(box.text.toStdString(), HasSubstr(path.toStdString()));
    EXPECT_THAT(box.text.toStdString(), HasSubstr("write failed"));
    EXPECT_THAT(box.text.toStdString(), HasSubstr("File too large"));
    EXPECT_EQ(readAll(path), before);
    EXPECT_EQ(entriesOf(dir.path()), QStringList{QStringLiteral("demo.loopsketch")})
        << "no temporary file may stay behind";
    EXPECT_TRUE(window.document()->isModified());
    EXPECT_TRUE(window.isWindowModified());
    EXPECT_EQ(window.document()->filePath(), path);

    // With the limit lifted the same menu save works: the failure was the full disk.
    const SeenBox second = saveThroughTheMenu();
    EXPECT_FALSE(second.seen) << second.text.toStdString();
    EXPECT_FALSE(window.document()->isModified());
    EXPECT_EQ(readAll(path).toStdString(), serializeDesign(window.document()->design()));
}

TEST_F(FailedSaveTest, ReadOnlyFileSystemShowsThePathKeepsTheFileAndTheDocumentModified)
{
    if (g_readOnlyDir.isEmpty())
        GTEST_SKIP() << "no read-only mount in a private namespace: " << g_readOnlyUnavailable;
    const QString path = g_readOnlyDir + QStringLiteral("/demo.loopsketch");
    const QByteArray before = readAll(path);
    ASSERT_FALSE(before.isEmpty());
    const QStringList entries = entriesOf(g_readOnlyDir);
    openAndEdit(path);

    const SeenBox box = saveThroughTheMenu();
    ASSERT_TRUE(box.seen) << "a failed save must be reported";
    EXPECT_EQ(box.title, QStringLiteral("Save design"));
    EXPECT_THAT(box.text.toStdString(), HasSubstr(path.toStdString()));
    EXPECT_THAT(box.text.toStdString(), HasSubstr("Read-only file system"));
    EXPECT_EQ(readAll(path), before);
    EXPECT_EQ(entriesOf(g_readOnlyDir), entries);
    EXPECT_TRUE(window.document()->isModified());
    EXPECT_TRUE(window.isWindowModified());
    EXPECT_EQ(window.document()->filePath(), path);
}

TEST_F(FailedSaveTest, SaveToUnderProcFailsForRootTooAndKeepsTheDocument)
{
    QTemporaryDir dir;
    ASSERT_TRUE(dir.isValid());
    const QString path = dir.filePath(QStringLiteral("demo.loopsketch"));
    ASSERT_TRUE(QFile::copy(kDemo, path));
    openAndEdit(path);

    const QString target = QStringLiteral("/proc/loopsketch-gui-check.loopsketch");
    QString error;
    EXPECT_FALSE(window.saveTo(target, &error));
    EXPECT_THAT(error.toStdString(), HasSubstr(target.toStdString()));
    EXPECT_FALSE(QFile::exists(target));
    EXPECT_TRUE(window.document()->isModified());
    EXPECT_TRUE(window.isWindowModified());
    EXPECT_EQ(window.document()->filePath(), path) << "a failed save-as keeps the old path";
}

/// A read-only file system for the read-only save test: a tmpfs with a copy of the demo,
/// remounted read-only inside a mount namespace private to this (still single-threaded)
/// process, so the machine's mounts never change and the mount ends with the process.
void setUpReadOnlyMount(const QString &base)
{
    if (auto why = test::enterPrivateMountNamespace(); !why.empty()) {
        g_readOnlyUnavailable = why;
        return;
    }
    const QString dir = base + QStringLiteral("/ro");
    QDir().mkpath(dir);
    if (auto why = test::mountSmallTmpfs(dir.toStdString(), 64 * 1024); !why.empty()) {
        g_readOnlyUnavailable = why;
        return;
    }
    g_mounted = true;
    if (!QFile::copy(kDemo, dir + QStringLiteral("/demo.loopsketch"))) {
        g_readOnlyUnavailable = "cannot copy the demo onto the tmpfs";
        return;
    }
    if (auto why = test::remountReadOnly(dir.toStdString()); !why.empty()) {
        g_readOnlyUnavailable = why;
        return;
    }
    g_readOnlyDir = dir;
}

} // namespace

int main(int argc, char **argv)
{
    ::testing::InitGoogleTest(&argc, argv);
    if (qEnvironmentVariableIsEmpty("QT_QPA_PLATFORM") && qEnvironmentVariableIsEmpty("DISPLAY"))
        qputenv("QT_QPA_PLATFORM", "offscreen");
    // Settings, caches and the runtime directory of this process and its children stay in
    // a temporary directory; each test gets its own XDG_DATA_HOME (the recovery location).
    QTemporaryDir home;
    if (!home.isValid())
        return 1;
    qputenv("XDG_CONFIG_HOME", (home.path() + "/config").toLocal8Bit());
    qputenv("XDG_CACHE_HOME", (home.path() + "/cache").toLocal8Bit());
    qputenv("XDG_RUNTIME_DIR", home.path().toLocal8Bit());
    if (!GTEST_FLAG_GET(list_tests))
        setUpReadOnlyMount(home.path());
    QApplication app(argc, argv);
    // The names app/gui.cpp uses, so recoveryFile() is the application's own location.
    QApplication::setOrganizationName(QStringLiteral("Loopsketch"));
    QApplication::setApplicationName(QStringLiteral("loopsketch"));
    const int failed = RUN_ALL_TESTS();
    if (g_mounted)
        ::umount2((home.path() + QStringLiteral("/ro")).toLocal8Bit().constData(), MNT_DETACH);
    return failed;
}
