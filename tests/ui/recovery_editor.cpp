// Child process for tst_recovery: the desktop window started the way app/gui.cpp starts it
// (same organisation and application names, hence the same recovery location), one edit
// made with a real wheel event over RF on the Sketch, the edited design written to
// EDITED_OUT, then "edited" on stdout. Without a third argument it then runs until it is
// killed; with --close-after-autosave it closes its window normally once the autosave
// (LOOPSKETCH_AUTOSAVE_MS) has written the recovery file.
//
//   recovery_editor DESIGN EDITED_OUT [--close-after-autosave]

#include "sketch/partitem.h"
#include "sketch/sketchscene.h"
#include "sketch/sketchview.h"
#include "window/designdocument.h"
#include "window/mainwindow.h"

#include "loopsketch/design/atomicfile.h"
#include "loopsketch/design/designfile.h"

#include <QApplication>
#include <QFile>
#include <QTest>
#include <QTimer>
#include <QWheelEvent>

#include <iostream>

using namespace loopsketch;
using namespace loopsketch::ui;

int main(int argc, char **argv)
{
    if (qEnvironmentVariableIsEmpty("QT_QPA_PLATFORM"))
        qputenv("QT_QPA_PLATFORM", "offscreen");
    QApplication app(argc, argv);
    QApplication::setOrganizationName(QStringLiteral("Loopsketch"));
    QApplication::setApplicationName(QStringLiteral("loopsketch"));
    const QStringList args = QApplication::arguments();
    if (args.size() < 3) {
        std::cerr << "usage: recovery_editor DESIGN EDITED_OUT [--close-after-autosave]\n";
        return 2;
    }
    const bool closeAfterAutosave = args.size() > 3 && args[3] == "--close-after-autosave";

    MainWindow window;
    window.setAskBeforeDiscarding(false);
    QString error;
    if (!window.openFile(args[1], &error)) {
        std::cerr << "recovery_editor: " << error.toStdString() << "\n";
        return 2;
    }
    window.resize(1500, 940);
    window.show();
    if (!QTest::qWaitForWindowExposed(&window)) {
        std::cerr << "recovery_editor: the window was never exposed\n";
        return 3;
    }

    PartItem *item = window.sketchScene()->partItem("RF");
    if (!item) {
        std::cerr << "recovery_editor: the design has no part RF\n";
        return 3;
    }
    SketchView *view = window.sketchView();
    const QPoint pos = view->mapFromScene(item->mapToScene(QPointF(0, 0)));
    QWheelEvent wheel(QPointF(pos), QPointF(view->viewport()->mapToGlobal(pos)), QPoint(),
                      QPoint(0, 120), Qt::NoButton, Qt::NoModifier, Qt::NoScrollPhase, false);
    QApplication::sendEvent(view->viewport(), &wheel);
    if (!QTest::qWaitFor([&] { return window.document()->isModified(); }, 5000)) {
        std::cerr << "recovery_editor: the wheel event made no edit\n";
        return 3;
    }
    const auto written
        = writeFileAtomically(args[2].toStdString(), serializeDesign(window.document()->design()));
    if (!written) {
        std::cerr << "recovery_editor: " << written.errorText() << "\n";
        return 3;
    }
    std::cout << "edited" << std::endl;

    QTimer poll;
    if (closeAfterAutosave) {
        QObject::connect(&poll, &QTimer::timeout, &window, [&] {
            if (!QFile::exists(MainWindow::recoveryFile()))
                return;
            poll.stop();
            std::cout << "autosaved" << std::endl;
            window.close();
        });
        poll.start(20);
    }
    return app.exec();
}
