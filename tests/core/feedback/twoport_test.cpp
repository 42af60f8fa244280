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

// A series chain from port 1 to port 2 (C, a 992 H inductor, R, L, R) with ten parts from
// port 2 to ground: the source side of fuzz seed 487. By Kirchhoff's laws (common practice),
// with port 2 shorted all of I1 flows through the chain into the short (h11 = the chain's
// impedance, h21 = -1), and with port 1 open no current flows in the chain (h12 = 1,
// h22 = the shunt admittance). Above 10 MHz the inductor is 1e11..2e13 ohm beside shunts
// of ohms; there the sweep's elimination once gave h21 = +0.28 and h11 off by a factor 3,
// inside the careful solve's own error bound, so the check switched nothing. h12 is left out:
// with port 1 open the chain's current is an exact 0 whose rounding the nodal equations
// multiply by s L3 (the careful solve's h12 is off by 3e-5 at 10 MHz and more above it), a
// limit of the formulation that this change does not lift.
TEST(FeedbackTwoPort, SeriesChainOfTeraohmsBesideOhmsKeepsItsHybridParameters)
{
    const auto part = [](const std::string &id, PartType type, const std::string &a,
                         const std::string &b, double v) {
        return passive(id, type, a, b, v);
    };
    using T = PartType;
    const std::vector<Part> parts = {part("C5", T::Capacitor, "p1", "s10", 0.00036733323869322899),
                                     part("L3", T::Inductor, "s10", "s11", 991.98566133453721),
                                     part("R7", T::Resistor, "s11", "s12", 2696784.6554503059),
                                     part("L4", T::Inductor, "s12", "s13", 1.7278819308167455e-09),
                                     part("R8", T::Resistor, "s13", "p2", 2.7960185869564493),
                                     part("R9", T::Resistor, "p2", "0", 40881273996.706528),
                                     part("R10", T::Resistor, "p2", "0", 36648073180.986137),
                                     part("L5", T::Inductor, "p2", "0", 9.3558425535805388e-09),
                                     part("L6", T::Inductor, "p2", "0", 2.1006427988440746e-06),
                                     part("C6", T::Capacitor, "p2", "0", 7.5642242565817872e-12),
                                     part("R11", T::Resistor, "p2", "0", 209.1751414375718),
                                     part("C7", T::Capacitor, "p2", "0", 6.4892959910315554e-08),
                                     part("R12", T::Resistor, "p2", "0", 0.80030843879089519),
                                     part("C8", T::Capacitor, "p2", "0", 1.48873909358289e-12),
                                     part("R13", T::Resistor, "p2", "0", 19202.449994564704)};
    auto built = TwoPortNetwork::build(parts, "p1", "p2", ParameterSet::H);
    ASSERT_TRUE(built.ok()) << built.errorText();
    TwoPortNetwork network = std::move(built).value();
    std::vector<cd> s;
    for (int i = 0; i <= 60; ++i)
        s.push_back({0.0, 2.0 * kPi * 1e7 * std::pow(10.0, i / 25.0)});
    // As the loop model does: checked at DC and the sweep's ends and middle first.
    const cd probes[] = {0.0, s.front(), s[30], s.back()};
    EXPECT_TRUE(network.checkAccuracy(probes, 1e-8)) << "the fast path met no miss";
    const std::vector<TwoPortMatrix> h = network.sweep(s);
    for (std::size_t i = 0; i < s.size(); ++i) {
        cd chain = 0.0, shunt = 0.0;
        for (const Part &p : parts) {
            const double v = p.fields.at("value").si;
            const cd z = p.type == T::Resistor ? cd(v)
                : p.type == T::Inductor        ? s[i] * v
                                               : 1.0 / (s[i] * v);
            (p.nodes[1] == "0" ? shunt : chain) += p.nodes[1] == "0" ? 1.0 / z : z;
        }
        const double hz = s[i].imag() / (2.0 * kPi);
        EXPECT_LT(relErr(h[i](0, 0), chain), 1e-9) << "h11 at " << hz << " Hz";
        EXPECT_LT(std::abs(h[i](1, 0) + 1.0), 1e-9) << "h21 at " << hz << " Hz";
        EXPECT_LT(relErr(h[i](1, 1), shunt), 1e-9) << "h22 at " << hz << " Hz";
    }
}
