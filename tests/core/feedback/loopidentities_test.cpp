// The loop model's consistency identities, on every example and reference design and on
// randomised circuits of all four topologies: the asymptotic gain model, Blackman's formula and
// the gain sensitivity, at DC and over the sweep. The source of each identity is named beside
// its check.

#include "loopsketch/analysis/analysis.h"
#include "loopsketch/design/designfile.h"
#include "loopsketch/feedback/loopmodel.h"

#include "designs.h"
#include "numeric.h"

#include <gmock/gmock.h>
#include <gtest/gtest.h>

#include <algorithm>
#include <array>
#include <cmath>
#include <complex>
#include <cstdio>
#include <filesystem>
#include <random>
#include <sstream>
#include <string>
#include <vector>

using namespace loopsketch;
using namespace loopsketch::test;
using ::testing::HasSubstr;

namespace {

const Part &gainBlock(const Design &d)
{
    const Part *p = d.uniquePart(PartType::GainBlock);
    EXPECT_NE(p, nullptr);
    static const Part none;
    return p ? *p : none;
}

bool bothNan(cd a, cd b)
{
    return !std::isfinite(std::abs(a)) && !std::isfinite(std::abs(b));
}

/// Largest relative difference between two curves; a frequency where both are NaN (the
/// quantity does not exist there) is skipped, NaN in one only counts as a failure.
double worstCurveDifference(const Curve &got, const Curve &expected)
{
    EXPECT_EQ(got.size(), expected.size());
    double worst = 0.0;
    for (std::size_t i = 0; i < std::min(got.size(), expected.size()); ++i) {
        if (bothNan(got[i], expected[i]))
            continue;
        const double e = relErr(got[i], expected[i]);
        worst = std::max(worst, std::isfinite(e) ? e : 1e300);
    }
    return worst;
}

} // namespace

// ---------------------------------------------------------------------------------------
// Consistency identities: asymptotic gain model, Blackman, sensitivity
// ---------------------------------------------------------------------------------------

namespace {

/// Checks the identities that hold for every design, to round-off:
/// - asymptotic gain model G = G_inf T/(1+T) + G_0/(1+T) equals the exact gain (Wikipedia
///   "Asymptotic gain model"; Rosenstark, IEEE Trans. Education E-17, 1974, from memory),
/// - Blackman's Z = Z_D (1 + T_sc)/(1 + T_oc) equals the exact z_in and z_out (Blackman,
///   Bell System Technical Journal 22, 1943, via reference-values.md section 4),
/// at DC and over the sweep;
/// - the gain block's gain sensitivity S = dG/G / (da/a) = (1 - G_0/G)/(1 + T), which is
///   1/(1 + T) when there is no feed-through (derived from the asymptotic gain model with
///   T proportional to a).
/// Returns the worst relative differences for the report.
struct IdentityErrors
{
    double gainDc = 0, zInDc = 0, zOutDc = 0, gainSweep = 0, zInSweep = 0, zOutSweep = 0,
           sensitivity = 0;

    /// Each error the larger of this one's and `e`'s.
    void keepWorst(const IdentityErrors &e)
    {
        gainDc = std::max(gainDc, e.gainDc);
        zInDc = std::max(zInDc, e.zInDc);
        zOutDc = std::max(zOutDc, e.zOutDc);
        gainSweep = std::max(gainSweep, e.gainSweep);
        zInSweep = std::max(zInSweep, e.zInSweep);
        zOutSweep = std::max(zOutSweep, e.zOutSweep);
        sensitivity = std::max(sensitivity, e.sensitivity);
    }

    /// One line: "gain dc .. sweep ..; z_in ...; z_out ...; sensitivity ...".
    std::string text() const
    {
        char line[200];
        std::snprintf(line, sizeof line,
                      "gain dc %.2e sweep %.2e; z_in dc %.2e sweep %.2e; z_out dc %.2e sweep "
                      "%.2e; sensitivity %.2e",
                      gainDc, gainSweep, zInDc, zInSweep, zOutDc, zOutSweep, sensitivity);
        return line;
    }
};

/// Relative difference of two DC values that may be absent: both absent (the quantity
/// does not exist, e.g. the infinite input impedance of an ideal input) is agreement; one
/// absent is a failure.
double optionalRel(const OptionalNumber &got, const OptionalNumber &expected,
                   const std::string &what)
{
    if (!got && !expected)
        return 0.0;
    if (!got || !expected) {
        ADD_FAILURE() << what << ": return ratio " << (got ? std::to_string(*got) : "null")
                      << ", exact " << (expected ? std::to_string(*expected) : "null");
        return std::numeric_limits<double>::infinity();
    }
    if (*expected == 0.0)
        return std::abs(*got);
    return relErr(*got, *expected);
}

IdentityErrors checkIdentities(const Design &design, const std::string &label)
{
    IdentityErrors e;
    SCOPED_TRACE(label);
    const Analysis a = analyzeOrFail(design);
    if (a.frequenciesHz.empty())
        return e;
    const double g = valueOf(a.exact.gain);
    e.gainDc = optionalRel(a.returnRatio.gain, a.exact.gain, "gain");
    EXPECT_LT(e.gainDc, 1e-9);
    e.zInDc = optionalRel(a.returnRatio.zIn, a.exact.zIn, "z_in");
    EXPECT_LT(e.zInDc, 1e-9);
    e.zOutDc = optionalRel(a.returnRatio.zOut, a.exact.zOut, "z_out");
    EXPECT_LT(e.zOutDc, 1e-9);
    e.gainSweep = worstCurveDifference(a.curves.gainReturnRatio, a.curves.gainExact);
    EXPECT_LT(e.gainSweep, 1e-8);
    e.zInSweep = worstCurveDifference(a.curves.zInReturnRatio, a.curves.zInExact);
    EXPECT_LT(e.zInSweep, 1e-8);
    e.zOutSweep = worstCurveDifference(a.curves.zOutReturnRatio, a.curves.zOutExact);
    EXPECT_LT(e.zOutSweep, 1e-8);

    const std::string id = gainBlock(design).id;
    const auto it = a.sensitivity.find(id);
    EXPECT_NE(it, a.sensitivity.end()) << "no sensitivity to " << id;
    if (it != a.sensitivity.end()) {
        const double t = valueOf(a.returnRatio.loopGain);
        const double g0 = valueOf(a.returnRatio.feedthrough);
        const double expected = (1.0 - g0 / g) / (1.0 + t);
        // Central difference with a 1e-6 step: truncation ~1e-12; round-off of the
        // difference of two gains ~1e-16/1e-6 relative to G, i.e. an absolute floor.
        // That floor is ~1e-16/2e-6 ~ 1e-10 %/% absolute; allow 1e-9.
        e.sensitivity = std::abs(it->second - expected) / std::abs(expected);
        EXPECT_LE(std::abs(it->second - expected), 1e-5 * std::abs(expected) + 1e-9)
            << "S " << it->second << " expected " << expected;
    }
    return e;
}

/// Full paths of every example and reference design.
std::vector<std::string> exampleAndReferenceDesigns()
{
    std::vector<std::string> files;
    for (const auto &entry : std::filesystem::directory_iterator(LOOPSKETCH_DESIGNS_DIR))
        if (entry.path().extension() == ".loopsketch")
            files.push_back(entry.path().string());
    for (const auto &entry :
         std::filesystem::directory_iterator(std::string(LOOPSKETCH_TEST_DATA_DIR) + "/reference"))
        if (entry.path().extension() == ".loopsketch")
            files.push_back(entry.path().string());
    std::sort(files.begin(), files.end());
    return files;
}

} // namespace

TEST(FeedbackIdentities, HoldOnEveryExampleAndReferenceDesign)
{
    const auto files = exampleAndReferenceDesigns();
    ASSERT_GE(files.size(), 4u);
    IdentityErrors worst;
    for (const auto &f : files) {
        auto d = loadDesign(f);
        ASSERT_TRUE(d.ok()) << d.errorText();
        const IdentityErrors e = checkIdentities(*d, f);
        worst.keepWorst(e);
        // Every candidate of an example design too.
        for (const Candidate &c : d->candidates) {
            Design v = *d;
            for (const auto &[id, val] : c.values)
                v.findPart(id)->fields[std::string(v.findPart(id)->primaryField())] = val;
            checkIdentities(v, f + " candidate " + c.name);
        }
    }
    std::printf("worst relative: %s\n", worst.text().c_str());
}

// Canonical forms (ideal terminals: no r_in, r_out = 0) have no feed-through, so the
// sensitivity of the closed-loop gain to the gain block's gain is exactly 1/(1 + T)
// (common practice).
TEST(FeedbackIdentities, GainSensitivityIsOneOverDesensitivityForCanonicalForms)
{
    for (const char *file :
         {"series-shunt-noninverting-rid-ro.loopsketch", "shunt-shunt-transresistance.loopsketch",
          "franco-1-10b-inverting.loopsketch"}) {
        Design d = loadReference(file);
        Part *u = d.findPart(gainBlock(d).id);
        u->fields.erase("r_in");
        u->fields["r_out"] = Value{0.0, {}};
        for (double g : {30.0, 3e3, 3e5}) {
            u->fields["gain"] = Value{g, {}};
            const Analysis a = analyzeOrFail(d);
            EXPECT_NEAR(valueOf(a.returnRatio.feedthrough), 0.0, 1e-15);
            const double expected = 1.0 / (1.0 + valueOf(a.returnRatio.loopGain));
            EXPECT_LT(relErr(a.sensitivity.at(u->id), expected), 1e-5) << file << " gain " << g;
        }
    }
    // Derived from Franco (3rd ed.), example 1.8(a)'s givens (value derived in
    // reference-values.md section 3.3): a = 1e5, b = 1e-3 -> a 10 % change of a moves A by
    // 0.0901 %, i.e. about 10 % / (1 + T) with T = 100. Here R1 = 1k, R2 = 999k, ideal ends.
    Design d = loadReference("franco-1-9a-noninverting.loopsketch");
    Part *u = d.findPart("U1");
    u->fields.erase("r_in");
    u->fields["r_out"] = Value{0.0, {}};
    u->fields["gain"] = Value{1e5, {}};
    const double a0 = valueOf(analyzeOrFail(d).exact.gain);
    u->fields["gain"] = Value{1.1e5, {}};
    const double a1 = valueOf(analyzeOrFail(d).exact.gain);
    EXPECT_NEAR((a1 - a0) / a0 * 100.0, 0.0901, 0.00005);
}

namespace {

double logUniform(std::mt19937_64 &rng, double lo, double hi)
{
    std::uniform_real_distribution<double> u(std::log10(lo), std::log10(hi));
    return std::pow(10.0, u(rng));
}

/// A random circuit of one of the four topologies: values spread over decades, one or two
/// gain-block poles, optional input/output capacitances and a feedback capacitor.
std::string randomDesign(std::mt19937_64 &rng, int topology)
{
    std::ostringstream s;
    s.precision(17);
    const auto v = [&](double lo, double hi) {
        return logUniform(rng, lo, hi);
    };
    std::bernoulli_distribution coin(0.5);
    s << R"({"schema": "loopsketch.design/1", "title": "random", "parts": [)";
    const bool currentSource = topology == 1 || topology == 3 ? coin(rng) : false;
    const bool shuntMixing = topology == 1 || topology == 3;
    if (shuntMixing && currentSource)
        s << R"({"id": "SRC", "type": "isource", "to": "in", "from": "0", "r_parallel": )"
          << v(1e3, 1e9) << R"(, "c_parallel": )" << v(1e-13, 1e-10) << "},";
    else
        s << R"({"id": "SRC", "type": "vsource", "pos": "in", "neg": "0", "r_series": )"
          << v(1, 1e5) << "},";
    const double gain = v(10, 1e6);
    std::ostringstream poles;
    poles.precision(17);
    poles << '[' << v(1, 1e4);
    if (coin(rng))
        poles << ", " << v(1e5, 1e8);
    poles << ']';
    const std::string inP = shuntMixing ? "0" : "in";
    const std::string inN = shuntMixing ? "in" : "fb";
    s << R"({"id": "U1", "type": "gain_block", "in_p": ")" << inP << R"(", "in_n": ")" << inN
      << R"(", "out": "out", "gain": )" << gain << R"(, "poles_hz": )" << poles.str()
      << R"(, "r_in": )" << v(1e3, 1e10) << R"(, "c_in": )" << v(1e-13, 1e-11) << R"(, "r_out": )"
      << v(1, 1e3) << "},";
    switch (topology) {
    case 0: // series-shunt
        s << R"({"id": "R2", "type": "resistor", "a": "out", "b": "fb", "value": )" << v(1e2, 1e7)
          << "},"
          << R"({"id": "R1", "type": "resistor", "a": "fb", "b": "0", "value": )" << v(1e1, 1e6)
          << "},";
        if (coin(rng))
            s << R"({"id": "C2", "type": "capacitor", "a": "out", "b": "fb", "value": )"
              << v(1e-13, 1e-9) << "},";
        s << R"({"id": "RL", "type": "load", "a": "out", "b": "0", "r": )" << v(1e2, 1e6)
          << R"(, "c": )" << v(1e-12, 1e-9) << "}";
        break;
    case 1: // shunt-shunt
        if (currentSource) {
            s << R"({"id": "RF", "type": "resistor", "a": "in", "b": "out", "value": )"
              << v(1e3, 1e8) << "},";
        } else {
            // A voltage source behind r_series at the inverting input, and a two-resistor
            // chain RI + RF from there to the output as the network.
            s << R"({"id": "RF", "type": "resistor", "a": "n", "b": "out", "value": )"
              << v(1e3, 1e8) << "},"
              << R"({"id": "RI", "type": "resistor", "a": "in", "b": "n", "value": )" << v(1e2, 1e6)
              << "},";
        }
        if (coin(rng))
            s << R"({"id": "CF", "type": "capacitor", "a": ")" << (currentSource ? "in" : "n")
              << R"(", "b": "out", "value": )" << v(1e-13, 1e-10) << "},";
        s << R"({"id": "RL", "type": "load", "a": "out", "b": "0", "r": )" << v(1e2, 1e6)
          << R"(, "c": )" << v(1e-12, 1e-9) << "}";
        break;
    case 2: // series-series
        s << R"({"id": "RS", "type": "resistor", "a": "fb", "b": "0", "value": )" << v(1, 1e4)
          << "},";
        if (coin(rng))
            s << R"({"id": "CS", "type": "capacitor", "a": "fb", "b": "0", "value": )"
              << v(1e-12, 1e-8) << "},";
        s << R"({"id": "RL", "type": "load", "a": "out", "b": "fb", "r": )" << v(1e1, 1e5)
          << R"(, "c": )" << v(1e-12, 1e-9) << "}";
        break;
    default: // shunt-series
        s << R"({"id": "R1", "type": "resistor", "a": "x", "b": "in", "value": )" << v(1e2, 1e6)
          << "},"
          << R"({"id": "R2", "type": "resistor", "a": "x", "b": "0", "value": )" << v(1, 1e4)
          << "},";
        s << R"({"id": "RL", "type": "load", "a": "out", "b": "x", "r": )" << v(1e1, 1e5)
          << R"(, "c": )" << v(1e-12, 1e-9) << "}";
        break;
    }
    const bool currentOut = topology == 2 || topology == 3;
    s << R"(], "input": "SRC", "output": ")" << (currentOut ? "current" : "voltage")
      << R"(", "sweep": {"start": 1, "stop": 1e9, "points_per_decade": 10}})";
    return s.str();
}

} // namespace

/// DC closed forms of a transimpedance stage (current source with r_parallel into the
/// inverting input, RF to the output, load to ground) by nodal analysis by hand, as in
/// DemoDcValuesMatchNodalAnalysisByHand: {gain, z_in, z_out}, free of cancellation.
std::array<double, 3> transimpedanceByHand(const Design &d)
{
    const Part &u = gainBlock(d);
    const double a = u.number("gain"), ro = u.number("r_out"), rin = u.number("r_in");
    const double rf = d.findPart("RF")->number("value");
    const double rl = d.findPart("RL")->number("r");
    const double rs = d.findPart("SRC")->number("r_parallel");
    const double k = (1 / rf - a / ro) / (1 / ro + 1 / rf + 1 / rl);
    const double rp = 1 / (1 / rin + 1 / rs);
    return {k / (1 / rin + 1 / rs + (1 - k) / rf), 1 / (1 / rin + (1 - k) / rf),
            1 / ((1 + a * rp / (rp + rf)) / ro + 1 / (rf + rp))};
}

// Sixty randomised circuits, fifteen of each topology, values spread over decades (fixed
// seed, so a failure reproduces).
TEST(FeedbackIdentities, HoldOnRandomisedCircuitsOfAllFourTopologies)
{
    std::mt19937_64 rng(20260601);
    const char *names[] = {"series-shunt", "shunt-shunt", "series-series", "shunt-series"};
    IdentityErrors worst;
    int count = 0, handCount = 0;
    double worstHand[3] = {0, 0, 0};
    for (int i = 0; i < 60; ++i) {
        const int topology = i % 4;
        const std::string text = randomDesign(rng, topology);
        const Design d = parseOrFail(text);
        const Analysis a = analyzeOrFail(d);
        ASSERT_TRUE(a.topology.has_value()) << a.topologyReason << "\n" << text;
        EXPECT_EQ(a.topology->name(), names[topology]) << text;
        if (a.twoPort) {
            // The estimate's own algebra: T = A beta and A_f = A / (1 + T).
            EXPECT_LT(relErr(valueOf(a.twoPort->loopGain),
                             valueOf(a.twoPort->a) * valueOf(a.twoPort->beta)),
                      1e-12)
                << text;
            EXPECT_LT(relErr(valueOf(a.twoPort->closedLoop),
                             valueOf(a.twoPort->a) / (1.0 + valueOf(a.twoPort->loopGain))),
                      1e-12)
                << text;
        } else {
            ADD_FAILURE() << "no two-port estimate: " << a.twoPortProblem << "\n" << text;
        }
        const IdentityErrors e
            = checkIdentities(d, "random circuit " + std::to_string(i) + "\n" + text);
        if (d.findPart("SRC")->type == PartType::ISource && d.findPart("RF")
            && d.findPart("RF")->node("a") == "in") {
            const auto hand = transimpedanceByHand(d);
            const double errs[3]
                = {relErr(valueOf(a.exact.gain), hand[0]), relErr(valueOf(a.exact.zIn), hand[1]),
                   relErr(valueOf(a.exact.zOut), hand[2])};
            for (int k = 0; k < 3; ++k) {
                worstHand[k] = std::max(worstHand[k], errs[k]);
                EXPECT_LT(errs[k], 1e-9) << "exact "
                                         << (k == 0       ? "gain"
                                                 : k == 1 ? "z_in"
                                                          : "z_out")
                                         << " against nodal analysis by hand\n"
                                         << text;
            }
            ++handCount;
        }
        worst.keepWorst(e);
        ++count;
    }
    EXPECT_EQ(count, 60);
    std::printf("exact DC against nodal analysis by hand on %d transimpedance circuits: gain "
                "%.2e, z_in %.2e, z_out %.2e\n",
                handCount, worstHand[0], worstHand[1], worstHand[2]);
    std::printf("worst relative over %d random circuits: %s\n", count, worst.text().c_str());
}
