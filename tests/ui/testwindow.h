#pragma once

// The main window as every window test sees it.

#include "window/mainwindow.h"

namespace loopsketch::ui::test {

/// Shows `window` at 1500 x 940, asking nothing before discarding a design.
inline void showTestWindow(MainWindow &window)
{
    window.setAskBeforeDiscarding(false);
    window.resize(1500, 940);
    window.show();
}

} // namespace loopsketch::ui::test
