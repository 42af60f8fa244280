// The main() of the desktop application's GoogleTest programs: offscreen unless a display
// is set, a QApplication, settings and data in Qt's test locations, named after the test
// program so that programs running side by side never share a settings file.

#include <QApplication>
#include <QFileInfo>
#include <QStandardPaths>

#include <gtest/gtest.h>

int main(int argc, char **argv)
{
    ::testing::InitGoogleTest(&argc, argv);
    if (qEnvironmentVariableIsEmpty("QT_QPA_PLATFORM") && qEnvironmentVariableIsEmpty("DISPLAY"))
        qputenv("QT_QPA_PLATFORM", "offscreen");
    QStandardPaths::setTestModeEnabled(true);
    QApplication app(argc, argv);
    QApplication::setOrganizationName(QStringLiteral("LoopsketchTests"));
    QApplication::setApplicationName(QFileInfo(QString::fromLocal8Bit(argv[0])).fileName());
    return RUN_ALL_TESTS();
}
