// LoopModel::rebuilt(): the loop model re-stamped for new part values, as a scan's worker
// chains it from row to row, must give the numbers of a model built afresh for the same
// values (the reference: LoopModel::build(), the definition of what re-stamping must
// reproduce), to 1e-12 relative, over randomly generated values of one to three parts of each
// example design.

#include "loopsketch/circuit/restamp.h"
#include "loopsketch/feedback/loopmodel.h"

#include "designs.h"
#include "numeric.h"

#include <gtest/gtest.h>

#include <cmath>
#include <numbers>
#include <random>
#include <string>
#include <vector>

using namespace loopsketch;
using namespace loopsketch::test;

namespace {

void expectSame(Complex restamped, Complex fresh, const std::string &what)
{
    if (!std::isfinite(fresh.real()) || !std::isfinite(fresh.imag())) {
        EXPECT_FALSE(std::isfinite(restamped.real()) && std::isfinite(restamped.imag())) << what;
        return;
    }
    EXPECT_LE(relErr(restamped, fresh), 1e-12) << what;
}

void expectSamePoles(const std::vector<Complex> &restamped, const std::vector<Complex> &fresh,
                     const std::string &what)
{
    ASSERT_EQ(restamped.size(), fresh.size()) << what;
    for (std::size_t i = 0; i < fresh.size(); ++i)
        EXPECT_LE(relErr(restamped[i], fresh[i]), 1e-12) << what << " pole " << i;
}

} // namespace

TEST(LoopModelRebuilt, EqualsAFreshBuildOverRandomValues)
{
    std::mt19937 random(4242);
    std::uniform_real_distribution<double> decades(-1.0, 1.0);
    for (const std::string &file : exampleDesigns()) {
        Design design = loadOrFail(kDesignsDir / file);
        // The parts' primary values (resistors, capacitors, inductors): what scans step.
        std::vector<FieldChange> fields;
        for (const Part &p : design.parts)
            if (const std::string_view f = p.primaryField(); !f.empty() && p.has(f)) {
                const double v = p.number(f);
                if (restampable(design, {p.id, std::string(f), v, v}))
                    fields.push_back({p.id, std::string(f), v, v});
            }
        ASSERT_GE(fields.size(), 2u) << file;
        auto model = LoopModel::build(design, SolverPath::Reduced, LoopModelScope::Metrics);
        ASSERT_TRUE(model.ok()) << file << ": " << model.errorText();
        for (int trial = 0; trial < 12; ++trial) {
            std::vector<FieldChange> changes;
            for (std::size_t k = 0;
                 k < fields.size() && k < static_cast<std::size_t>(1 + trial % 3); ++k) {
                FieldChange &f = fields[(trial + k) % fields.size()];
                double to = f.from * std::pow(10.0, decades(random));
                if ((f.from < kImpedanceFormBelowOhms) != (to < kImpedanceFormBelowOhms))
                    to = f.from;
                f.to = to;
                design.findPart(f.part)->fields[f.field] = Value{to, "random"};
                changes.push_back(f);
            }
            auto rebuilt = model->rebuilt(design, changes);
            auto fresh = LoopModel::build(design, SolverPath::Reduced, LoopModelScope::Metrics);
            ASSERT_EQ(rebuilt.ok(), fresh.ok()) << file;
            if (!fresh)
                continue;
            const std::string what = file + " trial " + std::to_string(trial);
            EXPECT_TRUE(rebuilt->restamped()) << what; // and not built afresh
            for (const double hz : {0.0, 1.0, 1e3, 1e5, 1e7, 1e9}) {
                const Complex s(0.0, 2.0 * std::numbers::pi * hz);
                const LoopPoint a = rebuilt->at(s), b = fresh->at(s);
                const std::string at = what + " at " + std::to_string(hz) + " Hz ";
                expectSame(a.gainExact, b.gainExact, at + "gain");
                expectSame(a.zInExact, b.zInExact, at + "z_in");
                expectSame(a.zOutExact, b.zOutExact, at + "z_out");
                expectSame(a.loopGain, b.loopGain, at + "loop gain");
                expectSame(a.feedthrough, b.feedthrough, at + "feedthrough");
                expectSame(a.gainReturnRatio, b.gainReturnRatio, at + "asymptotic gain");
            }
            expectSamePoles(rebuilt->closedLoopPoles(), fresh->closedLoopPoles(), what);
            expectSamePoles(rebuilt->loopGainPoles(), fresh->loopGainPoles(), what);
            EXPECT_EQ(rebuilt->warnings().size(), fresh->warnings().size()) << what;
            EXPECT_EQ(rebuilt->refinedSystems(), fresh->refinedSystems()) << what;
            model = std::move(rebuilt);
            for (FieldChange &f : fields)
                f.from = f.to = design.findPart(f.part)->number(f.field);
        }
    }
}

TEST(LoopModelRebuilt, BuildsAfreshWhereReStampingDoesNotApply)
{
    // The gain block's gain is no passive value: rebuilt() builds afresh, with the same result
    // as build() (a gain ten times lower: the demo's DC loop gain falls tenfold).
    Design design = loadOrFail(kDesignsDir / "demo.loopsketch");
    auto model = LoopModel::build(design, SolverPath::Reduced, LoopModelScope::Metrics);
    ASSERT_TRUE(model.ok());
    const double before = model->at(0.0).loopGain.real();
    const double gain = design.findPart("U1")->number("gain");
    design.findPart("U1")->fields["gain"] = Value{gain / 10, "lower"};
    const FieldChange change[] = {{"U1", "gain", gain, gain / 10}};
    auto rebuilt = model->rebuilt(design, change);
    ASSERT_TRUE(rebuilt.ok());
    EXPECT_FALSE(rebuilt->restamped());
    EXPECT_LE(relErr(rebuilt->at(0.0).loopGain.real(), before / 10), 1e-3);
}
