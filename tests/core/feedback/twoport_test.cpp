// Two-port parameter sets of passive networks (z, y, h, g): closed forms of the T and pi
// networks, the standard conversions between the sets, reciprocity, and a clear message for a
// set that does not exist. The source of every expected value is named beside its check.

#include "loopsketch/feedback/twoport.h"

#include "numeric.h"

#include <gmock/gmock.h>
#include <gtest/gtest.h>

#include <cmath>
#include <complex>
#include <cstdio>
#include <numbers>
#include <string>
#include <vector>

using namespace loopsketch;
using namespace loopsketch::test;
using ::testing::HasSubstr;

// ---------------------------------------------------------------------------------------
// Two-port parameter sets
// ---------------------------------------------------------------------------------------

namespace {

Part passive(const std::string &id, PartType type, const std::string &a, const std::string &b,
             double v)
{
    Part p;
    p.id = id;
    p.type = type;
    p.nodes = {a, b};
    p.fields["value"] = Value{v, {}};
    return p;
}

Part resistor(const std::string &id, const std::string &a, const std::string &b, double r)
{
    return passive(id, PartType::Resistor, a, b, r);
}

TwoPortMatrix direct(const std::vector<Part> &parts, ParameterSet set, cd s)
{
    auto n = TwoPortNetwork::build(parts, "p1", "p2", set);
    EXPECT_TRUE(n.ok()) << toString(set) << ": " << n.errorText();
    if (!n.ok())
        return TwoPortMatrix::Constant(cd(std::nan(""), 0));
    EXPECT_EQ(n->set(), set);
    return n->at(s);
}

double matrixRel(const TwoPortMatrix &got, const TwoPortMatrix &expected)
{
    return (got - expected).norm() / expected.norm();
}

} // namespace

// Closed forms of the T and pi networks (any circuits textbook, common practice): T with
// series arms Ra, Rb and shunt leg Rc: z = [[Ra + Rc, Rc], [Rc, Rb + Rc]]; pi with shunt
// legs Ga, Gb and bridge Gc: y = [[Ga + Gc, -Gc], [-Gc, Gb + Gc]].
TEST(FeedbackTwoPort, TAndPiNetworksMatchClosedForms)
{
    const double ra = 1e3, rb = 4.7e3, rc = 22e3;
    const std::vector<Part> tee = {resistor("RA", "p1", "m", ra), resistor("RB", "m", "p2", rb),
                                   resistor("RC", "m", "0", rc)};
    TwoPortMatrix zt;
    zt << ra + rc, rc, rc, rb + rc;
    EXPECT_LT(matrixRel(direct(tee, ParameterSet::Z, 0.0), zt), 1e-13);
    const std::vector<Part> pi = {resistor("RA", "p1", "0", ra), resistor("RB", "p2", "0", rb),
                                  resistor("RC", "p1", "p2", rc)};
    TwoPortMatrix yp;
    yp << 1 / ra + 1 / rc, -1 / rc, -1 / rc, 1 / rb + 1 / rc;
    EXPECT_LT(matrixRel(direct(pi, ParameterSet::Y, 0.0), yp), 1e-13);
    // A capacitor in the shunt leg: z12 = 1/(s C) at 1 kHz.
    const double c = 10e-9;
    const cd s(0.0, 2 * kPi * 1e3);
    const std::vector<Part> teeC = {resistor("RA", "p1", "m", ra), resistor("RB", "m", "p2", rb),
                                    passive("CC", PartType::Capacitor, "m", "0", c)};
    const TwoPortMatrix z = direct(teeC, ParameterSet::Z, s);
    EXPECT_LT(relErr(z(0, 1), 1.0 / (s * c)), 1e-13);
    EXPECT_LT(relErr(z(0, 0), ra + 1.0 / (s * c)), 1e-13);
}

// Standard two-port conversions (z = y^-1, h = [[det z / z22, z12/z22], [-z21/z22, 1/z22]],
// g = h^-1; any network-theory text, common practice): every conversion of a directly
// computed set must equal the directly computed target set.
TEST(FeedbackTwoPort, ConversionsAgreeWithDirectlyComputedSets)
{
    const std::vector<std::vector<Part>> networks = {
        {resistor("RA", "p1", "m", 1e3), resistor("RB", "m", "p2", 4.7e3),
         resistor("RC", "m", "0", 22e3)}, // T
        {resistor("RA", "p1", "0", 1e3), resistor("RB", "p2", "0", 4.7e3),
         resistor("RC", "p1", "p2", 22e3)}, // pi
        {resistor("R1", "p1", "m", 10e3), passive("C1", PartType::Capacitor, "m", "p2", 1e-9),
         resistor("R2", "m", "0", 3.3e3), passive("C2", PartType::Capacitor, "p1", "p2", 47e-12),
         passive("L1", PartType::Inductor, "m", "k", 1e-3), resistor("R3", "k", "p2", 680.0),
         resistor("R4", "k", "0", 1e5)}, // bridged network with internal nodes m and k
    };
    const ParameterSet sets[]
        = {ParameterSet::Z, ParameterSet::Y, ParameterSet::H, ParameterSet::G};
    double worst = 0.0;
    for (std::size_t n = 0; n < networks.size(); ++n) {
        for (const cd s : {cd(0.0, 0.0), cd(0.0, 2 * kPi * 1e3), cd(0.0, 2 * kPi * 3e6)}) {
            if (n < 2 && s != cd(0.0, 0.0))
                continue;
            TwoPortMatrix m[4];
            for (int k = 0; k < 4; ++k)
                m[k] = direct(networks[n], sets[k], s);
            for (int from = 0; from < 4; ++from) {
                for (int to = 0; to < 4; ++to) {
                    const auto c = convertTwoPort(m[from], sets[from], sets[to]);
                    ASSERT_TRUE(c.has_value()) << n << " " << from << "->" << to;
                    const double e = matrixRel(*c, m[to]);
                    worst = std::max(worst, e);
                    EXPECT_LT(e, 1e-11) << "network " << n << " at s = " << s << ": "
                                        << toString(sets[from]) << " -> " << toString(sets[to]);
                }
            }
            // Reciprocity of a passive network: z12 = z21, y12 = y21, h12 = -h21, g12 = -g21.
            EXPECT_LT(relErr(m[0](0, 1), m[0](1, 0)), 1e-12);
            EXPECT_LT(relErr(m[1](0, 1), m[1](1, 0)), 1e-12);
            EXPECT_LT(relErr(m[2](0, 1), -m[2](1, 0)), 1e-12);
            EXPECT_LT(relErr(m[3](0, 1), -m[3](1, 0)), 1e-12);
        }
    }
    std::printf("worst conversion difference %.2e\n", worst);
}

// A set that does not exist gets a clear message naming it: z of a series-only network
// (nothing to ground, so the current-driven ports float) and y of a direct short (both
// ports on one node, so the two port voltages cannot be set independently).
TEST(FeedbackTwoPort, MissingSetsFailWithAClearMessage)
{
    const auto expectMissing
        = [](const std::vector<Part> &parts, const std::string &port2, ParameterSet set) {
              auto missing = TwoPortNetwork::build(parts, "p1", port2, set);
              ASSERT_FALSE(missing.ok());
              EXPECT_THAT(missing.errorText(), HasSubstr(toString(set) + " parameters"));
              EXPECT_THAT(missing.errorText(), HasSubstr("do not exist"));
          };
    const std::vector<Part> series = {resistor("RA", "p1", "p2", 10e3)};
    expectMissing(series, "p2", ParameterSet::Z);
    // The y set of the same network exists and cannot be converted to z.
    auto y = TwoPortNetwork::build(series, "p1", "p2", ParameterSet::Y);
    ASSERT_TRUE(y.ok()) << y.errorText();
    EXPECT_FALSE(convertTwoPort(y->at(0.0), ParameterSet::Y, ParameterSet::Z).has_value());

    const std::vector<Part> shorted = {resistor("RA", "p1", "0", 10e3)};
    expectMissing(shorted, "p1", ParameterSet::Y);
    auto zs = TwoPortNetwork::build(shorted, "p1", "p1", ParameterSet::Z);
    ASSERT_TRUE(zs.ok()) << zs.errorText();
    EXPECT_NEAR(std::abs(zs->at(0.0)(0, 1)), 10e3, 1e-9);
    EXPECT_FALSE(convertTwoPort(zs->at(0.0), ParameterSet::Z, ParameterSet::Y).has_value());
}
