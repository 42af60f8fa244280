// The window refuses oversized work with the same message as the command line (issue 14:
// bounded work, said up front): the document's recomputation reports core's diagnostic.

#ifndef LOOPSKETCH_TEST_DATA_DIR
#define LOOPSKETCH_TEST_DATA_DIR ""
#endif
#include "hostilecorpus.h"

#include "support/qtadapter.h"
#include "window/designdocument.h"

#include "loopsketch/analysis/analysis.h"
#include "loopsketch/design/designfile.h"

#include <QSignalSpy>

#include <gmock/gmock.h>
#include <gtest/gtest.h>

using namespace loopsketch;
using namespace loopsketch::ui;
using ::testing::HasSubstr;

namespace {

void expectSameRefusal(const std::string &feedbackParts, const std::string &expected)
{
    auto design = parseDesign(test::hostileDesign(feedbackParts), "chain");
    ASSERT_TRUE(design.ok()) << design.errorText();
    const auto cli = analyze(*design, "chain.loopsketch");
    ASSERT_FALSE(cli.ok());
    EXPECT_THAT(cli.errorText(), HasSubstr(expected));

    DesignDocument document;
    QSignalSpy spy(&document, &DesignDocument::diagnosticsChanged);
    document.reset(*design, QStringLiteral("chain.loopsketch"));
    EXPECT_TRUE(document.waitForAnalysis());
    ASSERT_GE(spy.count(), 1);
    const QString shown = spy.last().at(0).toString();
    EXPECT_EQ(toStdString(shown), cli.errorText());
    EXPECT_EQ(document.analysis(), nullptr);
}

TEST(WindowWorkBudget, TooManyUnknownsGiveTheCommandLinesMessage)
{
    expectSameRefusal(test::resistorNetwork(2100, true), "the circuit has 2104 unknowns");
}

TEST(WindowWorkBudget, TooMuchWorkGivesTheCommandLinesMessage)
{
    // the sweep at reduced order about 1000 (a chain of 400 resistors fits the budget since
    // its sensitivities take one adjoint solve)
    expectSameRefusal(test::rcLadder(1000), "the analysis would take about");
}

} // namespace
