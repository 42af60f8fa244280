// The window's recovery files: one per process, written every 30 s while the design has
// unsaved changes, offered back after a crash and removed on a clean close.
#include "window/mainwindow.h"

#include "support/qtadapter.h"
#include "window/designdocument.h"

#include "loopsketch/design/atomicfile.h"
#include "loopsketch/design/designfile.h"

#include <QCoreApplication>
#include <QDateTime>
#include <QDir>
#include <QFile>
#include <QFileInfo>
#include <QMessageBox>
#include <QRegularExpression>
#include <QStandardPaths>
#include <QStatusBar>
#include <QTimer>

#include <cerrno>

#include <signal.h>

namespace loopsketch::ui {

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

void MainWindow::startAutosave()
{
    auto *recovery = new QTimer(this);
    recovery->setObjectName(QStringLiteral("RecoveryTimer"));
    // LOOPSKETCH_AUTOSAVE_MS shortens the interval for tests/ui/tst_recovery.cpp only.
    const int autosaveMs = qEnvironmentVariableIntValue("LOOPSKETCH_AUTOSAVE_MS");
    recovery->setInterval(autosaveMs > 0 ? autosaveMs : 30000);
    connect(recovery, &QTimer::timeout, this, &MainWindow::writeRecovery);
    recovery->start();
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

} // namespace loopsketch::ui
