// The desktop application's start: `loopsketch` opens the embedded demo design,
// `loopsketch FILE` opens FILE.

#include "cli.h"
#include "window/mainwindow.h"

#include <QApplication>
#include <QMessageBox>

int runGui(int argc, char **argv)
{
    QApplication app(argc, argv);
    QApplication::setOrganizationName(QStringLiteral("Loopsketch"));
    QApplication::setApplicationName(QStringLiteral("loopsketch"));
    QApplication::setApplicationDisplayName(QStringLiteral("Loopsketch"));
    QApplication::setApplicationVersion(QStringLiteral(LOOPSKETCH_VERSION));

    loopsketch::ui::MainWindow window;
    QString error;
    const QStringList args = QApplication::arguments().mid(1);
    bool opened = window.offerRecovery();
    if (!opened && !args.isEmpty()) {
        opened = window.openFile(args.front(), &error);
        if (!opened)
            QMessageBox::warning(&window, QObject::tr("Open design"), error);
    }
    if (!opened)
        window.openText(std::string(loopsketch::app::demoDesignText()), QStringLiteral("demo"));
    window.show();
    return app.exec();
}
