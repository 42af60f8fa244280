#pragma once

// The main window as every window test sees it, and the round trip of its design through a
// file.

#include "window/designdocument.h"
#include "window/mainwindow.h"

#include "loopsketch/design/designfile.h"

#include <QString>

#include <gtest/gtest.h>

#include <memory>

namespace loopsketch::ui::test {

/// Shows `window` at 1500 x 940, asking nothing before discarding a design.
inline void showTestWindow(MainWindow &window)
{
    window.setAskBeforeDiscarding(false);
    window.resize(1500, 940);
    window.show();
}

/// Saves `window`'s design to `path` (File > Save as), checks that core's loader reads it
/// back (under `rules`) equal to the document's design and that a second window opens it
/// showing the same design (its analysis in place); that second window, to look at, or nullptr
/// (with the failure added) when a step failed.
inline std::unique_ptr<MainWindow> saveAndReopen(MainWindow &window, const QString &path,
                                                 DesignRules rules = DesignRules::Complete)
{
    QString error;
    if (!window.saveTo(path, &error)) {
        ADD_FAILURE() << "saving " << path.toStdString() << ": " << error.toStdString();
        return nullptr;
    }
    auto reloaded = loadDesign(path.toStdString(), rules);
    if (!reloaded.ok()) {
        ADD_FAILURE() << reloaded.errorText();
        return nullptr;
    }
    EXPECT_EQ(*reloaded, window.document()->design());
    auto second = std::make_unique<MainWindow>();
    second->setAskBeforeDiscarding(false);
    if (!second->openFile(path, &error)) {
        ADD_FAILURE() << "opening " << path.toStdString() << ": " << error.toStdString();
        return nullptr;
    }
    EXPECT_TRUE(second->document()->waitForAnalysis());
    EXPECT_EQ(second->document()->design(), window.document()->design());
    return second;
}

} // namespace loopsketch::ui::test
