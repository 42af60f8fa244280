// Re-stamping (issue 15, item 5): a system whose passive values are rewritten from its stamp
// list must be the system a fresh assembly of the changed design gives. The reference is that
// fresh assembly (there is no outside source for an internal shortcut: re-stamping is correct
// exactly when it reproduces the assembly), checked over randomly generated values of every
// restampable field of the example designs, in every circuit variant the analyses build.

#include "loopsketch/circuit/loopcircuit.h"
#include "loopsketch/circuit/restamp.h"

#include "designs.h"
#include "numeric.h"

#include <gtest/gtest.h>

#include <cmath>
#include <random>
#include <string>
#include <vector>

using namespace loopsketch;
using namespace loopsketch::test;

namespace {

/// Every field of `design` that restampable() accepts at its own value.
std::vector<FieldChange> restampableFields(const Design &design)
{
    std::vector<FieldChange> fields;
    for (const Part &p : design.parts)
        for (const FieldSpec &f : partSpec(p.type).fields) {
            const FieldChange c{p.id, std::string(f.name), p.number(f.name), p.number(f.name)};
            if (p.has(f.name) && restampable(design, c))
                fields.push_back(c);
        }
    return fields;
}

/// A value log-uniform over a decade either side of `v`, kept on v's side of 1 ohm (the
/// impedance form's threshold) so that the circuit keeps its elements.
double randomNear(double v, std::mt19937 &random)
{
    std::uniform_real_distribution<double> decades(-1.0, 1.0);
    double x = v * std::pow(10.0, decades(random));
    if ((v < kImpedanceFormBelowOhms) != (x < kImpedanceFormBelowOhms))
        x = v;
    return x;
}

std::vector<LoopCircuitOptions> variants()
{
    using Source = LoopCircuitOptions::Source;
    std::vector<LoopCircuitOptions> all(6);
    all[1].source = Source::Removed;
    all[2].source = Source::Zeroed;
    all[2].load = false;
    for (int i = 3; i < 6; ++i) {
        all[i] = all[i - 3];
        all[i].testDriven = true;
    }
    return all;
}

void expectSameMatrix(const Eigen::MatrixXd &restamped, const Eigen::MatrixXd &fresh,
                      const std::string &what)
{
    ASSERT_EQ(restamped.rows(), fresh.rows()) << what;
    ASSERT_EQ(restamped.cols(), fresh.cols()) << what;
    for (Eigen::Index i = 0; i < fresh.rows(); ++i)
        for (Eigen::Index j = 0; j < fresh.cols(); ++j)
            ASSERT_LE(relErr(restamped(i, j), fresh(i, j)), 1e-12)
                << what << " (" << i << ", " << j << ")";
}

} // namespace

TEST(Restamp, RandomValuesGiveTheFreshAssemblyInEveryVariant)
{
    std::mt19937 random(20261203);
    for (const std::string &file : exampleDesigns()) {
        const Design base = loadOrFail(kDesignsDir / file);
        std::vector<FieldChange> fields = restampableFields(base);
        ASSERT_GE(fields.size(), 3u) << file; // resistors, capacitors, the load at least
        for (const LoopCircuitOptions &options : variants()) {
            auto stamped = assembleSystem(buildLoopNetlist(base, options));
            ASSERT_TRUE(stamped.ok()) << file;
            DescriptorSystem system = *stamped;
            Design design = base;
            for (int trial = 0; trial < 20; ++trial) {
                // One, two or every field at a time, as scans, maps and spreads change them.
                std::vector<FieldChange> changes;
                const std::size_t count = trial % 3 == 0 ? fields.size() : 1 + trial % 2;
                for (std::size_t k = 0; k < count; ++k) {
                    FieldChange &field = fields[(trial + k * 7) % fields.size()];
                    if (std::any_of(changes.begin(), changes.end(), [&](const FieldChange &c) {
                            return c.part == field.part && c.field == field.field;
                        }))
                        continue;
                    field.to = randomNear(field.from, random);
                    Part *p = design.findPart(field.part);
                    p->fields[field.field] = Value{field.to, "random"};
                    ASSERT_TRUE(restampable(design, field)) << field.part << "." << field.field;
                    changes.push_back(field);
                }
                ASSERT_TRUE(restamp(system, changes)) << file << " trial " << trial;
                auto fresh = assembleSystem(buildLoopNetlist(design, options));
                ASSERT_TRUE(fresh.ok()) << file;
                const std::string what = file + " trial " + std::to_string(trial);
                expectSameMatrix(system.G, fresh->G, what + " G");
                expectSameMatrix(system.C, fresh->C, what + " C");
                expectSameMatrix(system.B, fresh->B, what + " B");
                expectSameMatrix(system.L, fresh->L, what + " L");
                ASSERT_EQ(system.stamps.size(), fresh->stamps.size()) << what;
                for (std::size_t s = 0; s < system.stamps.size(); ++s)
                    ASSERT_LE(relErr(system.stamps[s].value, fresh->stamps[s].value), 1e-12)
                        << what;
                for (FieldChange &c : fields)
                    for (const FieldChange &done : changes)
                        if (c.part == done.part && c.field == done.field)
                            c.from = done.to;
            }
            for (FieldChange &c : fields) // the next variant starts from the design as loaded
                c.from = c.to = base.findPart(c.part)->number(c.field);
        }
    }
}

TEST(Restamp, RefusesChangesThatAlterTheCircuit)
{
    Design d = loadOrFail(kDesignsDir / "demo.loopsketch");
    // A resistor crossing 1 ohm changes form (a current of its own below it).
    d.findPart("RF")->fields["value"] = Value{0.5, "0.5"};
    EXPECT_FALSE(restampable(d, {"RF", "value", 1e6, 0.5}));
    d.findPart("RF")->fields["value"] = Value{2.2e6, "2M2"};
    EXPECT_TRUE(restampable(d, {"RF", "value", 1e6, 2.2e6}));
    // Not a passive value carried one to one (the gain block's gain and poles).
    EXPECT_FALSE(restampable(d, {"U1", "gain", 3.16e5, 1e5}));
    // A value the design does not hold, a zero (an element left out) or a field not given.
    EXPECT_FALSE(restampable(d, {"RF", "value", 1e6, 3.3e6}));
    d.findPart("RL")->fields["c"] = Value{0.0, "0"};
    EXPECT_FALSE(restampable(d, {"RL", "c", 47e-12, 0.0}));
    EXPECT_FALSE(restampable(d, {"U1", "c_cm", 1e-12, 1e-12}));
}

TEST(Restamp, AWrongStartingValueLeavesTheSystemUntouched)
{
    const Design d = loadOrFail(kDesignsDir / "demo.loopsketch");
    auto stamped = assembleSystem(buildLoopNetlist(d, {}));
    ASSERT_TRUE(stamped.ok());
    DescriptorSystem system = *stamped;
    const FieldChange wrong[] = {{"CF", "value", 3.3e-12, 1e-12}}; // the demo holds 2.2 pF
    EXPECT_FALSE(restamp(system, wrong));
    expectSameMatrix(system.C, stamped->C, "C");
    expectSameMatrix(system.G, stamped->G, "G");
    EXPECT_TRUE(stampsField(system, wrong[0]));
    EXPECT_FALSE(stampsField(system, {"U1", "c_cm", 0, 0}));
}
