// Work budgets (limits.h, workbudget.h): the size of a run is counted before any matrix is
// built, and a run over budget is refused at once with a message saying what to reduce.

#include "loopsketch/analysis/analysis.h"
#include "loopsketch/analysis/spread.h"
#include "loopsketch/analysis/suggest.h"
#include "loopsketch/analysis/workbudget.h"
#include "loopsketch/circuit/circuit.h"
#include "loopsketch/circuit/loopcircuit.h"
#include "loopsketch/design/designfile.h"

#include "hostilecorpus.h"

#include "designs.h"

#include <gmock/gmock.h>
#include <gtest/gtest.h>

using ::testing::HasSubstr;

namespace loopsketch {
using test::parseOrFail;

namespace {

Design chain(std::size_t resistors)
{
    return parseOrFail(test::hostileDesign(test::resistorNetwork(resistors, true)));
}

class CircuitSizeOfChain : public ::testing::TestWithParam<std::size_t>
{
};

// The up-front count must be the size of the nodal system that is then really assembled
// (modified nodal analysis, common practice: one unknown per node, per inductor and voltage
// source branch, and here per gain-block output branch and pole state).
TEST_P(CircuitSizeOfChain, CountsTheUnknownsOfTheAssembledSystem)
{
    const Design d = chain(GetParam());
    const CircuitSize size = circuitSize(d);
    const auto system = assembleSystem(buildLoopNetlist(d));
    ASSERT_TRUE(system.ok()) << system.errorText();
    EXPECT_EQ(size.unknowns, static_cast<std::size_t>(system->size()));
    // nodes in, out and the chain's inner ones; the gain block's branch and its two poles
    EXPECT_EQ(size.unknowns, GetParam() + 1 + 3);
    // c_parallel, CF and the two poles
    EXPECT_EQ(size.reducedOrder, 4u);
    EXPECT_EQ(size.parts, GetParam() + 4);
    EXPECT_EQ(size.sweepPoints, d.sweep.frequencies().size());
}

INSTANTIATE_TEST_SUITE_P(Lengths, CircuitSizeOfChain, ::testing::Values(1, 2, 10, 57));

TEST(WorkBudget, MoreUnknownsThanTheBudgetAreRefusedBeforeAnyMatrix)
{
    const Design d = chain(2100);
    const auto a = analyze(d, "chain.loopsketch");
    ASSERT_FALSE(a.ok());
    EXPECT_THAT(a.errorText(),
                HasSubstr("chain.loopsketch: field parts: the circuit has 2104 "
                          "unknowns (node voltages, branch currents and gain-block "
                          "states); at most 2000 can be analysed: reduce the "
                          "number of parts or nodes"));
    SpreadOptions o;
    o.trials = 10;
    const auto mc = monteCarlo(d, o, "chain.loopsketch");
    ASSERT_FALSE(mc.ok());
    EXPECT_THAT(mc.errorText(), HasSubstr("the circuit has 2104 unknowns"));
}

TEST(WorkBudget, SensitivitiesCostOneDcSolveWhateverTheNumberOfParts)
{
    // The adjoint method (core/src/analysis/sensitivity.h): one LU and one transposed solve
    // for every part, so 404 sensitivities add about one DC gain's work, not 808 of them.
    const Design d = chain(400);
    const CircuitSize size = circuitSize(d);
    EXPECT_EQ(size.sensitivities, 404u); // 400 resistors, CF, RL, the gain block, r_parallel
    const double added = analysisOperations(size, true) - analysisOperations(size, false);
    EXPECT_GE(added, dcGainOperations(size));
    EXPECT_LT(added, 2.0 * dcGainOperations(size));
    ASSERT_LT(analysisOperations(size, true), kMaxWorkOperations);
    AnalysisOptions lean;
    lean.noise = false;
    const auto b = analyze(d, "chain.loopsketch", lean);
    ASSERT_TRUE(b.ok()) << b.errorText();
    ASSERT_TRUE(b->exact.gain.has_value());
    // DC: the 1 MOhm chain as the feedback resistor, about -1 MV/A (common practice:
    // transimpedance = -R_F for a large loop gain)
    EXPECT_NEAR(*b->exact.gain, -1e6, 1e6 * 1e-3);
    EXPECT_EQ(b->sensitivity.size(), 404u);
}

TEST(WorkBudget, MonteCarloOverBudgetSaysHowManyTrialsFit)
{
    const Design d = chain(150);
    SpreadOptions o;
    o.trials = kMaxTrials;
    const auto mc = monteCarlo(d, o, "chain.loopsketch");
    ASSERT_FALSE(mc.ok());
    EXPECT_THAT(mc.errorText(), HasSubstr("field trials: the Monte Carlo run would take about"));
    EXPECT_THAT(mc.errorText(), HasSubstr("1000000 evaluations of 154 unknowns"));
    EXPECT_THAT(mc.errorText(), HasSubstr(": reduce the trials to at most "));
    // the count offered fits, one more does not
    const std::size_t at = mc.errorText().rfind("at most ") + 8;
    const std::size_t fit = std::stoul(mc.errorText().substr(at));
    EXPECT_GT(fit, 100u);
    EXPECT_LT(fit, static_cast<std::size_t>(kMaxTrials));
    const auto grid = coarseGrid(d.sweep, o.pointsPerDecade);
    const double each = trialOperations(circuitSize(d), grid.size());
    EXPECT_TRUE(checkRepeatedBudget(d, {}, fit, each, "x", "y", "z").empty());
    EXPECT_FALSE(checkRepeatedBudget(d, {}, fit + 1, each, "x", "y", "z").empty());
}

TEST(WorkBudget, SuggestOverBudgetIsRefusedBeforeTheSearch)
{
    Design d = chain(150);
    d.findPart("R0")->series = parseESeries("E24");
    d.findPart("R1")->series = parseESeries("E24");
    SuggestOptions o;
    o.parts = {"R0", "R1"};
    o.decades = 12;
    const auto r = suggestValues(d, o, "chain.loopsketch");
    ASSERT_FALSE(r.ok());
    EXPECT_THAT(r.errorText(), HasSubstr("field parts: the search would take about"));
    EXPECT_THAT(r.errorText(),
                HasSubstr("narrow the ranges or pick fewer parts, bringing the combinations to "
                          "at most "));
}

TEST(WorkBudget, TheDemoIsWellWithinEveryBudget)
{
    auto d = parseDesign(test::hostileDesign(test::resistorNetwork(1, true)), "small");
    ASSERT_TRUE(d.ok()) << d.errorText();
    EXPECT_TRUE(checkAnalysisBudget(*d, "small", true).empty());
    EXPECT_LT(analysisOperations(circuitSize(*d), true), kMaxWorkOperations / 1000);
}

TEST(WorkBudget, OperationCountsReadShort)
{
    EXPECT_EQ(operationsText(2e10), "2e10");
    EXPECT_EQ(operationsText(3.56e10), "3.6e10");
    EXPECT_EQ(operationsText(1.4e12), "1.4e12");
    EXPECT_EQ(operationsText(5e9), "5e9");
}

} // namespace
} // namespace loopsketch
