// The sensitivity of the DC gain to each part (core/src/analysis/sensitivity.h): the adjoint
// method of the reduced path against central differences of dense solves, on generated random
// designs of every topology and on the examples, and against the impedance-scaling invariant.

#include "loopsketch/analysis/analysis.h"
#include "loopsketch/circuit/circuit.h"
#include "loopsketch/circuit/loopcircuit.h"
#include "loopsketch/design/designfile.h"

#include "analysis/sensitivity.h"

#include "designs.h"
#include "randomdesign.h"

#include <Eigen/LU>
#include <gtest/gtest.h>

#include <algorithm>
#include <cmath>
#include <cstdio>
#include <map>
#include <optional>
#include <string>

namespace loopsketch {
namespace {

/// The DC gain (output over source value) by one dense LU of the whole circuit; nullopt when
/// G is singular, and, with `significant`, when the gain is rounding: below 1e-12 of the
/// largest unknown, as where an inductor grounds the input at DC, so that the gain is zero in
/// exact arithmetic and its sensitivities have no meaning on either method.
std::optional<double> denseDcGain(const Design &design, bool significant = false)
{
    const auto system = assembleSystem(buildLoopNetlist(design));
    if (!system || isSingular(system->G))
        return std::nullopt;
    const Eigen::VectorXd x = system->G.partialPivLu().solve(system->B.col(loopio::kSource));
    const double y = system->L.row(loopio::kOutput).dot(x);
    if (!x.allFinite() || !std::isfinite(y))
        return std::nullopt;
    if (significant && !(std::abs(y) > 1e-12 * x.cwiseAbs().maxCoeff()))
        return std::nullopt;
    return y;
}

/// Generated design `seed` (the fuzzer's generator), when it is a valid design.
std::optional<Design> generated(std::uint64_t seed)
{
    fuzz::RandomSource random(seed);
    auto d = parseDesign(fuzz::generateDesign(random).text, "generated.loopsketch");
    if (!d)
        return std::nullopt;
    return *d;
}

/// A central difference of the DC gain in one field, relative step h, written here apart from
/// core's reference path: (G(p(1+h)) - G(p(1-h))) / (2 h G).
std::optional<double> centralDifference(const Design &design, std::size_t part,
                                        const std::string &field, double h, double gain)
{
    Design d = design;
    const double base = design.parts[part].number(field);
    std::optional<double> g[2];
    for (int k = 0; k < 2; ++k) {
        d.parts[part].fields[field].si = base * (1.0 + (k ? h : -h));
        g[k] = denseDcGain(d);
    }
    if (!g[0] || !g[1])
        return std::nullopt;
    return (*g[1] - *g[0]) / (2.0 * h * gain);
}

struct Agreement
{
    int compared = 0; ///< part sensitivities compared
    int designs = 0; ///< designs with a DC gain
    int referenceLoose = 0; ///< compared where the reference's own spread exceeded 1e-6
    int fellBack = 0; ///< designs where the adjoint handed every part to finite differences
    double worst = 0; ///< largest |adjoint - reference| / (1 + |reference|)
};

/// Compares every part's adjoint sensitivity with the dense-LU finite difference (core's
/// reference path, step 1e-6). Tolerance: 1e-6 (1 + |S|) plus the reference's own error,
/// estimated as 2 |D(1e-6) - D(1e-4)| from a second difference taken here: the adjoint is
/// exact to rounding, while a difference quotient carries truncation (~h^2) and rounding
/// (~1e-16 cond / h) error (common practice for checking derivatives, e.g. Nocedal & Wright,
/// Numerical Optimization, 2nd ed., sec. 8.1, from memory).
void compareWithFiniteDifferences(const Design &design, const std::string &label, Agreement &total)
{
    SCOPED_TRACE(label);
    const std::optional<double> gain = denseDcGain(design, true);
    if (!gain)
        return;
    ++total.designs;
    const auto adjoint = detail::gainSensitivity(design, *gain, SolverPath::Reduced);
    const auto reference = detail::gainSensitivity(design, *gain, SolverPath::DenseLu);
    // bitwise equal everywhere: the scaling invariant missed and the differences took over
    total.fellBack += !adjoint.empty() && adjoint == reference
        && std::any_of(reference.begin(), reference.end(),
                       [](const auto &s) { return s.second != 0.0; });
    for (std::size_t i = 0; i < design.parts.size(); ++i) {
        const Part &p = design.parts[i];
        const std::string field = detail::sensitivityField(p);
        if (field.empty() || !reference.count(p.id))
            continue;
        ASSERT_TRUE(adjoint.count(p.id)) << "no adjoint sensitivity for " << p.id;
        const double a = adjoint.at(p.id), r = reference.at(p.id);
        const std::optional<double> coarse = centralDifference(design, i, field, 1e-4, *gain);
        const double spread = coarse ? 2.0 * std::abs(r - *coarse) : 0.0;
        total.referenceLoose += spread > 1e-6 * (1.0 + std::abs(r));
        EXPECT_LE(std::abs(a - r), 1e-6 * (1.0 + std::abs(r)) + spread)
            << p.id << "." << field << ": adjoint " << a << ", finite difference " << r
            << ", reference spread " << spread;
        total.worst = std::max(total.worst, std::abs(a - r) / (1.0 + std::abs(r)));
        ++total.compared;
    }
}

} // namespace

TEST(AdjointSensitivity, AgreesWithFiniteDifferencesOnGeneratedDesigns)
{
    // The fuzzer's generator (tests/fuzz/randomdesign.h): four topologies and free forms,
    // 3-60 parts, 1e-3..1e12 ohm, gain-block poles and zeros, inductors.
    Agreement total;
    int shapes[5] = {};
    for (std::uint64_t seed = 1; seed <= 600; ++seed) {
        fuzz::RandomSource random(seed);
        const fuzz::GeneratedDesign g = fuzz::generateDesign(random);
        auto d = parseDesign(g.text, "seed-" + std::to_string(seed) + ".loopsketch");
        if (!d)
            continue;
        ++shapes[static_cast<int>(g.shape)];
        compareWithFiniteDifferences(*d, "seed " + std::to_string(seed), total);
    }
    std::printf("%d designs with a DC gain, %d sensitivities compared, worst %.3g, "
                "%d where the reference itself spread more than 1e-6, %d designs handed to "
                "finite differences whole\n",
                total.designs, total.compared, total.worst, total.referenceLoose, total.fellBack);
    for (int s : shapes)
        EXPECT_GT(s, 0) << "every shape drawn";
    EXPECT_GT(total.designs, 60);
    EXPECT_GT(total.compared, 700);
    // the reference is sharp on most of them, so the tolerance is mostly the stated 1e-6
    EXPECT_LT(total.referenceLoose, total.compared / 10);
    // and the adjoint itself answers for nearly all of them
    EXPECT_LT(total.fellBack, total.designs / 10);
}

TEST(AdjointSensitivity, AgreesWithFiniteDifferencesOnTheExamples)
{
    Agreement total;
    for (const std::string &file : test::exampleDesigns())
        compareWithFiniteDifferences(test::loadOrFail(test::kDesignsDir / file), file, total);
    EXPECT_GT(total.compared, 20);
}

TEST(AdjointSensitivity, ResistanceSensitivitiesSumToTheGainsImpedanceDegree)
{
    // Scaling every resistance of a network by k scales a transimpedance by k, a
    // transconductance by 1/k and leaves a voltage or current ratio unchanged; by Euler's
    // theorem on homogeneous functions the sensitivities to all resistances sum to 1, -1 or 0
    // (the impedance-scaling sensitivity invariant, e.g. Daryanani, Principles of Active
    // Network Synthesis and Design, 1976, ch. on sensitivity, from memory). At DC only
    // resistances act; the gain block's gain is a pure ratio. Every origin with entries in G
    // but "gain" is a resistance (r_in, r_out, the load, the source's own, the parts').
    int checked = 0, skipped = 0, loose = 0;
    double worst = 0;
    for (std::uint64_t seed = 1; seed <= 600; ++seed) {
        const std::optional<Design> d = generated(seed);
        if (!d || !denseDcGain(*d, true))
            continue;
        const auto system = assembleSystem(buildLoopNetlist(*d));
        ASSERT_TRUE(system.ok()) << system.errorText();
        const auto s = detail::dcSensitivities(*system, loopio::kOutput, loopio::kSource);
        if (!s)
            continue;
        const Part *src = d->signalSource();
        const bool currentIn = src->type == PartType::ISource;
        const bool currentOut = d->output == OutputKind::Current;
        const double degree = (currentIn ? 1.0 : 0.0) - (currentOut ? 1.0 : 0.0);
        double sum = 0, terms = 0;
        bool cancelled = false;
        for (std::size_t o = 0; o < system->origins.size(); ++o)
            if (system->origins[o].field != "gain") {
                sum += (*s)[o].value;
                terms += (*s)[o].terms;
                cancelled = cancelled || (*s)[o].cancelled();
            }
        const double miss = std::abs(sum - degree) / (1.0 + terms);
        if (miss > 1e-12) {
            // Solves that lost their digits (resistances over 15 decades, a gain that is
            // mostly rounding): gainSensitivity() checks the same invariant and falls back to
            // finite differences there; the comparison with them above covers those designs.
            ++loose;
            continue;
        }
        skipped += cancelled;
        worst = std::max(worst, miss);
        ++checked;
    }
    std::printf("%d designs, worst |sum - degree| / (1 + terms) %.3g (%d with cancelled "
                "terms); %d missed it by more\n",
                checked, worst, skipped, loose);
    EXPECT_GT(checked, 60);
    EXPECT_LT(loose, checked / 10);
}

TEST(AdjointSensitivity, InvertingStageMatchesItsClosedForm)
{
    // Invented: a voltage source with 1 kOhm into R1 = 10 kOhm, RF = 100 kOhm, gain block
    // of gain a = 1e4 (ideal inputs, r_out 0), 10 kOhm load. The inverting configuration with
    // finite open-loop gain, G = -(RF/Ri) / (1 + (1 + RF/Ri)/a) with Ri = Rs + R1 (Sedra &
    // Smith, Microelectronic Circuits, the inverting configuration, from memory), and its
    // logarithmic derivatives.
    const char *text = R"({"schema": "loopsketch.design/1", "title": "Inverting stage",
  "parts": [
    {"id": "SIG", "type": "vsource", "pos": "s", "neg": "0", "r_series": "1k"},
    {"id": "R1", "type": "resistor", "a": "s", "b": "n", "value": "10k"},
    {"id": "RF", "type": "resistor", "a": "n", "b": "out", "value": "100k"},
    {"id": "U1", "type": "gain_block", "in_p": "0", "in_n": "n", "out": "out", "gain": "1e4",
     "poles_hz": ["10"]},
    {"id": "RL", "type": "load", "a": "out", "b": "0", "r": "10k"}],
  "input": "SIG", "output": "voltage",
  "sweep": {"start": "1", "stop": "1M", "points_per_decade": 10}})";
    auto d = parseDesign(text, "inverting.loopsketch");
    ASSERT_TRUE(d.ok()) << d.errorText();
    // G(Ri, RF, a) = -a RF / (RF + Ri (1 + a)), Ri = Rs + R1 (ideal output: the load does
    // not act). Logarithmic derivatives:
    const double ri = 11e3, rf = 100e3, a = 1e4;
    const double den = rf + ri * (1 + a);
    const double sRf = 1.0 - rf / den; // d ln G / d ln RF
    const double sRi = -ri * (1 + a) / den; // d ln G / d ln Ri, shared as Rs : R1
    const double sA = 1.0 - a * ri / den; // d ln G / d ln a
    const auto gain = denseDcGain(*d);
    ASSERT_TRUE(gain.has_value());
    EXPECT_NEAR(*gain, -a * rf / den, 1e-12 * a * rf / den);
    const auto s = detail::gainSensitivity(*d, *gain, SolverPath::Reduced);
    EXPECT_NEAR(s.at("RF"), sRf, 1e-12);
    EXPECT_NEAR(s.at("R1"), sRi * 10.0 / 11.0, 1e-12);
    EXPECT_NEAR(s.at("SIG"), sRi * 1.0 / 11.0, 1e-12);
    EXPECT_NEAR(s.at("U1"), sA, 1e-12);
    EXPECT_NEAR(s.at("RL"), 0.0, 1e-12);
}

} // namespace loopsketch
