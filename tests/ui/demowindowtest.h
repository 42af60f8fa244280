#pragma once

// The fixture of the window tests: a shown main window at the screenshots' size (1500 x 940)
// with the demo design open and analysed.

#include "testwindow.h"
#include "window/designdocument.h"
#include "window/mainwindow.h"

#include <QApplication>
#include <QString>

#include <gtest/gtest.h>

#include <memory>

class DemoWindowTest : public ::testing::Test
{
protected:
    void SetUp() override
    {
        window = std::make_unique<loopsketch::ui::MainWindow>();
        loopsketch::ui::test::showTestWindow(*window);
        QString error;
        ASSERT_TRUE(
            window->openFile(QStringLiteral(LOOPSKETCH_DESIGNS_DIR "/demo.loopsketch"), &error))
            << error.toStdString();
        ASSERT_TRUE(doc()->waitForAnalysis());
        ASSERT_NE(doc()->analysis(), nullptr);
    }

    loopsketch::ui::DesignDocument *doc() const { return window->document(); }

    std::unique_ptr<loopsketch::ui::MainWindow> window;
};
