#pragma once

// The fixture of the candidate tests: the demo window (two candidates) with the Candidates
// panel settled, and the checks of an undo step they share.

#include "demowindowtest.h"
#include "designs.h"
#include "panels/candidatespanel.h"

#include "loopsketch/design/designfile.h"

#include <QApplication>
#include <QTest>
#include <QUndoStack>

#include <gtest/gtest.h>

#include <string>
#include <vector>

/// The candidate of `d` named `name`, with a test failure where there is none.
inline const loopsketch::Candidate &candidateNamed(const loopsketch::Design &d,
                                                   const std::string &name)
{
    for (const loopsketch::Candidate &c : d.candidates) {
        if (c.name == name)
            return c;
    }
    ADD_FAILURE() << "no candidate " << name;
    static const loopsketch::Candidate none;
    return none;
}

class CandidatesTest : public DemoWindowTest
{
protected:
    void SetUp() override
    {
        DemoWindowTest::SetUp();
        if (HasFatalFailure())
            return;
        ASSERT_EQ(doc()->design().candidates.size(), 2u);
        settle();
    }

    loopsketch::ui::CandidatesPanel *panel() const { return window->candidatesPanel(); }
    std::string text() const { return loopsketch::serializeDesign(doc()->design()); }

    /// Core's analyses of the panel's columns, worked out here: `design` itself, then each of
    /// its candidates applied by hand.
    static std::vector<loopsketch::Analysis> columnAnalyses(const loopsketch::Design &design)
    {
        std::vector<loopsketch::Analysis> analyses{loopsketch::test::analyzeOrFail(design)};
        for (const loopsketch::Candidate &c : design.candidates)
            analyses.push_back(
                loopsketch::test::analyzeOrFail(loopsketch::test::withCandidateByHand(design, c)));
        return analyses;
    }

    /// Waits until the document's analysis and every candidate column are current.
    void settle()
    {
        ASSERT_TRUE(doc()->waitForAnalysis());
        ASSERT_TRUE(QTest::qWaitFor(
            [this] {
                QApplication::processEvents();
                return panel()->isUpToDate();
            },
            15000));
    }

    /// Undo then redo: the design text goes back to `before` and forward to `after` exactly.
    void expectUndoRedo(const std::string &before, const std::string &after)
    {
        ASSERT_NE(before, after);
        EXPECT_EQ(text(), after);
        doc()->undoStack()->undo();
        EXPECT_EQ(text(), before);
        doc()->undoStack()->redo();
        EXPECT_EQ(text(), after);
    }
};
