#include "analysischecks.h"

#include "loopsketch/analysis/analysis.h"
#include "loopsketch/circuit/circuit.h"
#include "loopsketch/circuit/loopcircuit.h"
#include "loopsketch/design/designfile.h"
#include "loopsketch/feedback/loopmodel.h"

#include "circuit/refinedsolve.h"

#include <algorithm>
#include <array>
#include <cmath>
#include <complex>
#include <cstdio>
#include <limits>
#include <map>
#include <memory>
#include <numbers>
#include <regex>
#include <set>

// The part-limit warnings (values outside what real parts offer) come with the accuracy
// warnings in Analysis::warnings but exempt nothing: only a solve's own accuracy check does.
#if __has_include("loopsketch/design/partlimits.h")
#include "loopsketch/design/partlimits.h"
#define LOOPSKETCH_FUZZ_PART_LIMITS 1
#endif

namespace loopsketch::fuzz {

namespace {

using Complex = std::complex<double>;

bool finite(Complex v)
{
    return std::isfinite(v.real()) && std::isfinite(v.imag());
}

bool isNaN(Complex v)
{
    return std::isnan(v.real()) || std::isnan(v.imag());
}

std::string fmt(double v)
{
    char buf[32];
    std::snprintf(buf, sizeof buf, "%.6g", v);
    return buf;
}

/// The accuracy warnings of an analysis: Analysis::warnings (DESIGN.md section 6) without
/// the part-limit warnings. The adapter keeps this file compiling whether or not the member
/// and partlimits.h exist yet.
template<typename A>
std::vector<std::string> accuracyWarnings([[maybe_unused]] const Design &design, const A &analysis,
                                          int &limitWarnings)
{
    std::vector<std::string> out;
    if constexpr (requires { analysis.warnings; }) {
        std::set<std::string> limits;
#ifdef LOOPSKETCH_FUZZ_PART_LIMITS
        for (const Diagnostic &w : partLimitWarnings(design))
            limits.insert(w.toString());
#endif
        for (const auto &w : analysis.warnings) {
            if (limits.count(w.toString()))
                ++limitWarnings;
            else
                out.push_back(w.toString());
        }
    }
    return out;
}

class Checker
{
public:
    explicit Checker(CheckReport &report) : m_report(report) { }

    void fail(const std::string &kind, const std::string &detail)
    {
        // One line per kind and quantity is enough to reproduce; keep the report short.
        if (m_report.failures.size() < 20)
            m_report.failures.push_back(kind + ": " + detail);
    }

    void scalar(const std::string &name, const std::optional<double> &v)
    {
        // An open port's impedance is infinite, a value that means it (README, "No NaN ever
        // printed"); any other infinity or NaN is a failure.
        const bool impedance
            = name.find("z_in") != std::string::npos || name.find("z_out") != std::string::npos;
        if (v && impedance && std::isinf(*v) && *v > 0)
            return;
        if (v && !std::isfinite(*v))
            fail("nan-scalar", name + " = " + fmt(*v));
    }

    void number(const std::string &name, double v)
    {
        if (!std::isfinite(v))
            fail("nan-scalar", name + " = " + fmt(v));
    }

    /// A curve either exists at every frequency of the sweep (finite everywhere) or is
    /// marked missing as a whole (NaN everywhere), and only where `mayBeMissing` says the
    /// quantity may not exist for this design.
    void curve(const std::string &name, const Curve &c, const std::vector<double> &f,
               bool mayBeMissing)
    {
        if (c.size() != f.size()) {
            fail("curve-size",
                 name + " has " + std::to_string(c.size()) + " points, the sweep "
                     + std::to_string(f.size()));
            return;
        }
        const auto nans = std::count_if(c.begin(), c.end(), [](Complex v) { return isNaN(v); });
        const auto bad = std::count_if(c.begin(), c.end(), [](Complex v) { return !finite(v); });
        if (bad == 0)
            return;
        if (nans == static_cast<long>(c.size()) && mayBeMissing)
            return;
        const auto at = std::find_if(c.begin(), c.end(), [](Complex v) { return !finite(v); });
        const std::size_t i = static_cast<std::size_t>(at - c.begin());
        fail("nan-curve",
             name + " is " + fmt(at->real()) + "+j" + fmt(at->imag()) + " at " + fmt(f[i]) + " Hz ("
                 + std::to_string(bad) + " of " + std::to_string(c.size()) + " points not finite)");
    }

    /// |got - want| <= allowed, where `allowed` is tol * scale plus, when that alone is
    /// exceeded, the rounding floor `floor()` (see RoundingFloor); records the worst ratio.
    /// Returns false on failure.
    template<typename Floor>
    bool identity(const std::string &kind, const std::string &where, Complex got, Complex want,
                  double allowed, double &worst, Floor floor)
    {
        if (!finite(got) || !finite(want))
            return true; // the NaN checks report these
        if (std::abs(got - want) > allowed)
            allowed += floor();
        return identity(kind, where, got, want, allowed, worst);
    }

    /// |got - want| <= allowed; records the worst ratio. Returns false on failure.
    bool identity(const std::string &kind, const std::string &where, Complex got, Complex want,
                  double allowed, double &worst)
    {
        if (!finite(got) || !finite(want))
            return true; // the NaN checks report these
        const double err = std::abs(got - want);
        const double ratio = allowed > 0 ? err / allowed : (err > 0 ? INFINITY : 0.0);
        worst = std::max(worst, ratio);
        if (err <= allowed)
            return true;
        fail(kind,
             where + ": " + fmt(got.real()) + "+j" + fmt(got.imag()) + " against exact "
                 + fmt(want.real()) + "+j" + fmt(want.imag()) + ", error " + fmt(err)
                 + " > allowed " + fmt(allowed));
        return false;
    }

private:
    CheckReport &m_report;
};

/// Number tokens an output may not show: "nan" and "-nan" never; "inf", "-inf" and
/// "infinity" not in text meant for reading ("∞" there). JSON and CSV carry an infinite value
/// as "inf" / "-inf" (README, "No NaN ever printed"), so `infinityAllowed` lets those pass.
bool showsNonNumber(const std::string &text, std::string &where, bool infinityAllowed = false)
{
    static const std::regex any(R"((^|[^A-Za-z_])(-?(nan|inf|infinity))([^A-Za-z_]|$))",
                                std::regex::icase);
    static const std::regex notANumber(R"((^|[^A-Za-z_])(-?(nan|infinity))([^A-Za-z_]|$))",
                                       std::regex::icase);
    std::smatch m;
    if (!std::regex_search(text, m, infinityAllowed ? notANumber : any))
        return false;
    const auto pos = static_cast<std::size_t>(m.position(0));
    const std::size_t from = pos > 40 ? pos - 40 : 0;
    where = text.substr(from, 80);
    std::replace(where.begin(), where.end(), '\n', ' ');
    return true;
}

void checkScalars(const Analysis &a, Checker &c)
{
    c.scalar("exact.gain", a.exact.gain);
    c.scalar("exact.z_in", a.exact.zIn);
    c.scalar("exact.z_out", a.exact.zOut);
    const ReturnRatioSummary &r = a.returnRatio;
    for (const auto &[name, v] : {std::pair{"return_ratio.loop_gain", r.loopGain},
                                  {"return_ratio.gain_inf", r.gainInf},
                                  {"return_ratio.feedthrough", r.feedthrough},
                                  {"return_ratio.gain", r.gain},
                                  {"return_ratio.z_in", r.zIn},
                                  {"return_ratio.z_out", r.zOut}})
        c.scalar(name, v);
    if (a.twoPort) {
        const TwoPortSummary &t = *a.twoPort;
        for (const auto &[name, v] : {std::pair{"two_port.a", t.a},
                                      {"two_port.beta", t.beta},
                                      {"two_port.loop_gain", t.loopGain},
                                      {"two_port.closed_loop", t.closedLoop},
                                      {"two_port.gain", t.gain},
                                      {"two_port.z_in", t.zIn},
                                      {"two_port.z_out", t.zOut},
                                      {"two_port.error_pct", t.gainErrorPct},
                                      {"two_port.z_in_error_pct", t.zInErrorPct},
                                      {"two_port.z_out_error_pct", t.zOutErrorPct},
                                      {"two_port.input_loading", t.inputLoading},
                                      {"two_port.output_loading", t.outputLoading},
                                      {"two_port.input_loading_db", t.inputLoadingDb},
                                      {"two_port.output_loading_db", t.outputLoadingDb}})
            c.scalar(name, v);
    }
    c.scalar("margins.crossover_hz", a.margins.crossoverHz);
    c.scalar("margins.phase_margin_deg", a.margins.phaseMarginDeg);
    c.scalar("margins.gain_margin_db", a.margins.gainMarginDb);
    c.scalar("margins.phase_crossover_hz", a.margins.phaseCrossoverHz);
    c.scalar("bandwidth_hz", a.bandwidthHz);
    c.scalar("peaking_db", a.peakingDb);
    c.scalar("desensitivity_db", a.desensitivityDb);
    for (std::size_t i = 0; i < a.poles.size(); ++i) {
        const ClosedLoopPole &p = a.poles[i];
        const std::string n = "poles[" + std::to_string(i) + "]";
        c.number(n + ".re", p.s.real());
        c.number(n + ".im", p.s.imag());
        c.number(n + ".natural_hz", p.naturalHz);
        c.number(n + ".damping", p.damping);
        // An undamped pole on the jw axis has an infinite Q, a value that means it.
        if (!(std::isinf(p.q) && p.q > 0 && p.s.real() == 0.0 && p.s.imag() != 0.0))
            c.number(n + ".q", p.q);
    }
    c.scalar("step.rise_time_s", a.step.riseTimeS);
    c.scalar("step.overshoot_pct", a.step.overshootPct);
    c.scalar("step.settling_time_s", a.step.settlingTimeS);
    c.number("step.final_value", a.step.finalValue);
    for (std::size_t i = 0; i < a.step.response.size(); ++i) {
        if (!std::isfinite(a.step.response[i]) || i >= a.step.timeS.size()
            || !std::isfinite(a.step.timeS[i])) {
            c.fail("nan-curve", "step response not finite at point " + std::to_string(i));
            break;
        }
    }
    for (const auto &[part, s] : a.sensitivity)
        c.number("sensitivity." + part, s);
    if (a.noise) {
        const NoiseAnalysis &n = *a.noise;
        c.scalar("noise.output_rms", n.outputRms);
        c.scalar("noise.input_rms", n.inputRms);
        c.number("noise.band_low_hz", n.bandLowHz);
        c.number("noise.band_high_hz", n.bandHighHz);
        for (const auto &[name, v] : {std::pair{"noise.output_density", &n.outputDensity},
                                      {"noise.input_density", &n.inputDensity},
                                      {"noise.noise_gain", &n.noiseGain}})
            if (std::any_of(v->begin(), v->end(), [](double x) { return !std::isfinite(x); }))
                c.fail("nan-curve", std::string(name) + " has a value that is not finite");
        for (const NoiseContribution &k : n.contributions)
            if (k.rms)
                c.number("noise." + k.name + ".rms", *k.rms);
            else if (n.outputRms)
                c.fail("nan-scalar", "noise." + k.name + ".rms is missing beside a total");
    }
}

void checkCurves(const Analysis &a, Checker &c)
{
    const auto &f = a.frequenciesHz;
    const AnalysisCurves &k = a.curves;
    // Always there: the full circuit and its return ratio exist at every frequency off the
    // circuit's natural frequencies, which a random design never puts on the grid.
    c.curve("gain_exact", k.gainExact, f, false);
    c.curve("loop_gain", k.loopGain, f, false);
    c.curve("desensitivity", k.desensitivity, f, false);
    c.curve("gain_return_ratio", k.gainReturnRatio, f, false);
    // The impedances exist unless the port has no solution at all (no DC value either).
    c.curve("z_in", k.zInExact, f, !a.exact.zIn);
    c.curve("z_out", k.zOutExact, f, !a.exact.zOut);
    c.curve("z_in_return_ratio", k.zInReturnRatio, f, !a.returnRatio.zIn);
    c.curve("z_out_return_ratio", k.zOutReturnRatio, f, !a.returnRatio.zOut);
    c.curve("z_in_open_loop", k.zInOpenLoop, f, !a.returnRatio.zIn);
    c.curve("z_out_open_loop", k.zOutOpenLoop, f, !a.returnRatio.zOut);
    // The two-port family is marked missing as a whole when there is no estimate, and then
    // a reason must say why.
    const bool noTwoPort = !a.twoPort;
    if (noTwoPort && a.topologyReason.empty() && a.twoPortProblem.empty())
        c.fail("no-reason", "no two-port estimate and neither a topology reason nor a problem");
    if (a.topology && !a.topologyReason.empty())
        c.fail("no-reason", "a topology and a reason against it at once");
    for (const auto &[name, curve] : {std::pair{"a", &k.a},
                                      {"beta", &k.beta},
                                      {"loop_gain_two_port", &k.loopGainTwoPort},
                                      {"closed_loop", &k.closedLoop},
                                      {"gain_two_port", &k.gainTwoPort},
                                      {"input_loading", &k.inputLoading},
                                      {"output_loading", &k.outputLoading}})
        c.curve(name, *curve, f, noTwoPort);
    // An impedance the exact solution finds infinite (an input that draws no current) is
    // missing from the estimate too.
    c.curve("z_in_two_port", k.zInTwoPort, f, noTwoPort || !a.exact.zIn);
    c.curve("z_out_two_port", k.zOutTwoPort, f, noTwoPort || !a.exact.zOut);
}

/// The absolute rounding floor of the identities, for quantities whose true value is zero or
/// far below the circuit's other values (an output behind an ideal source, a port shorted
/// by a zeroed ideal source, a feedthrough that does not exist): there the relative
/// tolerance kIdentityTolerance has nothing to be relative to, and both sides of an
/// identity are rounding of the same size as their difference.
///
/// Derivation. The product's careful solve (core/src/circuit/refinedsolve.*) bounds the absolute
/// error of an entry h = l^T A^-1 b of a system A = G + sC to first order by
///   beta(h) = |z|^T |r| + eps * (sum over stamps |z_row| |stamp value (times |s| if
///             reactive)| |x_col| + sum_i |z_i| |b_i|),   z = A^-T l,
/// the residual r of its solution plus one rounding of every value as stored (the
/// first-order componentwise bound; Higham, Accuracy and Stability of Numerical Algorithms,
/// 2nd ed., sections 7.1-7.2, from memory). It is absolute, so it stays finite where h = 0.
/// The product's accuracy check (ReducedSystem::checkAccuracy) accepts the fast path where
/// it is within max(1e-8 |h|, 4 beta) of the careful solve, and the careful solve is within
/// beta of the truth: every entry the analysis combines is within 1e-8 |h| + 5 beta. The
/// relative part is kIdentityTolerance's; the floor adds 5 beta per entry, propagated to
/// first order through the identity's formula:
///   asymptotic gain  G0 + a b/(1 + T):  beta(G0) + |b/(1+T)| beta(a) + |a/(1+T)| beta(b)
///                                        + |a b/(1+T)^2| beta(T), plus beta of the exact gain;
///   Blackman  Z_D + h2 h3/(1 - h1):     beta(Z_D) + |h3/(1-h1)| beta(h2) + |h2/(1-h1)| beta(h3)
///                                        + |h2 h3/(1-h1)^2| beta(h1), plus beta of the exact Z.
/// The systems are those of LoopModel::build (loopcircuit.h's variants); the floor is
/// computed only where the relative check fails.
class RoundingFloor
{
public:
    explicit RoundingFloor(const Design &design) : m_design(design) { }

    double asymptoticGain(Complex s)
    {
        using namespace loopio;
        const Entry g = entry(Variant::Full, s, kOutput, kSource);
        const Entry t = entry(Variant::RrFull, s, kReturned, kTest); // -T
        const Entry g0 = entry(Variant::RrFull, s, kOutput, kSource);
        const Entry a = entry(Variant::RrFull, s, kOutput, kTest);
        const Entry b = entry(Variant::RrFull, s, kReturned, kSource);
        const Complex d = 1.0 - t.value; // 1 + T
        const double beta = g.beta + g0.beta + std::abs(b.value / d) * a.beta
            + std::abs(a.value / d) * b.beta + std::abs(a.value * b.value / (d * d)) * t.beta;
        return kAcceptedBetas * beta;
    }

    double blackman(bool input, Complex s)
    {
        using namespace loopio;
        const int v = input ? kInputVoltage : kLoadVoltage;
        const int port = input ? kInputPort : kLoadPort;
        const Entry ze = entry(input ? Variant::Input : Variant::Output, s, v, port);
        const Variant rr = input ? Variant::RrInput : Variant::RrOutput;
        const Entry zd = entry(rr, s, v, port);
        const Entry h1 = entry(rr, s, kReturned, kTest);
        const Entry h2 = entry(rr, s, kReturned, port);
        const Entry h3 = entry(rr, s, v, kTest);
        const Complex d = 1.0 - h1.value;
        const double beta = ze.beta + zd.beta + std::abs(h3.value / d) * h2.beta
            + std::abs(h2.value / d) * h3.beta + std::abs(h2.value * h3.value / (d * d)) * h1.beta;
        return kAcceptedBetas * beta;
    }

private:
    /// beta per entry the product may be off by: 4 accepted by its check, 1 of the careful
    /// solve it is checked against.
    static constexpr double kAcceptedBetas = 5.0;

    enum class Variant { Full, Input, Output, RrFull, RrInput, RrOutput, Count };

    struct Entry
    {
        Complex value = 0;
        double beta = std::numeric_limits<double>::infinity();
    };

    const DescriptorSystem *system(Variant v)
    {
        auto &slot = m_systems[static_cast<std::size_t>(v)];
        if (!slot) {
            using Source = LoopCircuitOptions::Source;
            LoopCircuitOptions o;
            o.testDriven = v == Variant::RrFull || v == Variant::RrInput || v == Variant::RrOutput;
            if (v == Variant::Input || v == Variant::RrInput)
                o.source = Source::Removed;
            if (v == Variant::Output || v == Variant::RrOutput) {
                o.source = Source::Zeroed;
                o.load = false;
            }
            auto assembled = assembleSystem(buildLoopNetlist(m_design, o));
            slot = assembled ? std::make_shared<DescriptorSystem>(std::move(assembled).value())
                             : std::make_shared<DescriptorSystem>();
        }
        return slot->size() > 0 ? slot.get() : nullptr;
    }

    Entry entry(Variant v, Complex s, int output, int input)
    {
        const DescriptorSystem *sys = system(v);
        if (!sys)
            return {};
        const auto key = std::pair{static_cast<int>(v), std::pair{s.real(), s.imag()}};
        auto it = m_solvers.find(key);
        if (it == m_solvers.end()) {
            auto solver = std::make_unique<detail::RefinedSolver>(*sys);
            if (!solver->factor(s))
                solver.reset();
            it = m_solvers.emplace(key, std::move(solver)).first;
        }
        if (!it->second)
            return {};
        Eigen::VectorXcd r;
        const Eigen::VectorXcd x = it->second->solve(input, &r);
        return {it->second->output(output, x), it->second->errorBound(output, input, x, r)};
    }

    const Design &m_design;
    std::array<std::shared_ptr<DescriptorSystem>, static_cast<std::size_t>(Variant::Count)>
        m_systems;
    std::map<std::pair<int, std::pair<double, double>>, std::unique_ptr<detail::RefinedSolver>>
        m_solvers;
};

void checkIdentities(const Design &design, const Analysis &a, SolverPath path, Checker &c,
                     CheckReport &report)
{
    // G_inf and G_0 (not among the Analysis curves) from the same model analyze() builds.
    auto model = LoopModel::build(design, path);
    if (!model) {
        c.fail("model", "LoopModel::build failed after analyze() succeeded: " + model.errorText());
        return;
    }
    const std::size_t n = a.frequenciesHz.size();
    std::vector<Complex> s(n + 1, 0.0); // s[0] is DC
    for (std::size_t i = 0; i < n; ++i)
        s[i + 1] = {0.0, 2.0 * std::numbers::pi * a.frequenciesHz[i]};
    const LoopCurves m = model->sweep(s);
    const AnalysisCurves &k = a.curves;
    const auto pick = [&](const Curve &curve, std::size_t j, const std::optional<double> &dc) {
        if (j == 0)
            return dc ? Complex(*dc) : Complex(NAN, NAN);
        return curve[j - 1];
    };
    const auto where = [&](std::size_t j) {
        return j == 0 ? std::string("DC") : fmt(a.frequenciesHz[j - 1]) + " Hz";
    };
    const std::optional<TwoPortSummary> tp = a.twoPort;
    RoundingFloor floor(design);
    const Part *gb = design.uniquePart(PartType::GainBlock);
    const bool pinsDrawCurrent = gb && gb->number("c_cm") > 0;
    for (std::size_t j = 0; j <= n; ++j) {
        const Complex exact = pick(k.gainExact, j, a.exact.gain);
        const Complex t = pick(k.loopGain, j, a.returnRatio.loopGain);
        const Complex rr = pick(k.gainReturnRatio, j, a.returnRatio.gain);
        const Complex gInf = m.gainInf[j], g0 = m.feedthrough[j];
        // Asymptotic gain model: G_inf T/(1+T) + G_0/(1+T) against the full circuit, the
        // tolerance relative to the two terms and the exact value.
        if (finite(gInf) && finite(t)) {
            const double scale
                = std::abs(gInf * t / (1.0 + t)) + std::abs(g0 / (1.0 + t)) + std::abs(exact);
            c.identity("identity-asymptotic-gain", "gain at " + where(j), rr, exact,
                       kIdentityTolerance * scale, report.worstAgm,
                       [&] { return floor.asymptoticGain(s[j]); });
        }
        // Blackman: Z_D (1 + T_sc)/(1 + T_oc) = Z_D + (its feedback term); relative to both
        // terms and the exact value.
        const auto blackman = [&](bool input, const char *name, const Curve &rrCurve,
                                  const std::optional<double> &rrDc, const Curve &exactCurve,
                                  const std::optional<double> &exactDc, const Curve &zdCurve,
                                  const std::vector<Complex> &zdModel) {
            const Complex z = pick(rrCurve, j, rrDc);
            const Complex ze = pick(exactCurve, j, exactDc);
            const Complex zd = j == 0 ? zdModel[0] : zdCurve[j - 1];
            const double scale = std::abs(zd) + std::abs(z - zd) + std::abs(ze);
            c.identity("identity-blackman", std::string(name) + " at " + where(j), z, ze,
                       kIdentityTolerance * scale, report.worstBlackman,
                       [&] { return floor.blackman(input, s[j]); });
        };
        blackman(true, "z_in", k.zInReturnRatio, a.returnRatio.zIn, k.zInExact, a.exact.zIn,
                 k.zInOpenLoop, m.zInOpenLoop);
        blackman(false, "z_out", k.zOutReturnRatio, a.returnRatio.zOut, k.zOutExact, a.exact.zOut,
                 k.zOutOpenLoop, m.zOutOpenLoop);

        // Two-port = exact when T is large. With the gain block's gain taken to infinity
        // its inputs carry no differential voltage and no current, so the two-port closed
        // loop tends to 1/beta times the source and output conversions: G_inf, the same
        // ideal gain as the return ratio's. Then
        //   exact = G_inf - (G_inf - G_0)/(1 + T),  two-port = G_inf - G_inf/(1 + T_tp),
        // and |two-port - exact| <= |G_inf - G_0|/|1 + T| + |G_inf|/|1 + T_tp| (+ round-off).
        // The argument needs pins that draw nothing at v_d = 0: a c_cm (each pin to ground)
        // still draws current there, which the two-port estimate leaves in the A circuit
        // and out of 1/beta, so the estimate is not meant to reach G_inf then.
        if (!tp || pinsDrawCurrent)
            continue;
        const Complex tpGain = pick(k.gainTwoPort, j, tp->gain);
        const Complex tpT = pick(k.loopGainTwoPort, j, tp->loopGain);
        if (!finite(tpT) || !finite(t) || !finite(gInf) || std::abs(t) < kLargeLoopGain
            || std::abs(tpT) < kLargeLoopGain)
            continue;
        report.twoPortChecked = true;
        const double bound = std::abs(gInf - g0) / std::abs(1.0 + t)
            + std::abs(gInf) / std::abs(1.0 + tpT)
            + kIdentityTolerance * (std::abs(exact) + std::abs(tpGain) + std::abs(gInf));
        c.identity("identity-two-port",
                   "gain at " + where(j) + " (|T| " + fmt(std::abs(t)) + ", |T_tp| "
                       + fmt(std::abs(tpT)) + ")",
                   tpGain, exact, bound, report.worstTwoPort);
    }
}

} // namespace

CheckReport checkDesignText(std::string_view text, const std::string &file, bool denseLu)
{
    AnalysisOptions options;
    options.solver = denseLu ? SolverPath::DenseLu : SolverPath::Reduced;
    CheckReport report;
    Checker c(report);
    auto design = parseDesign(text, file);
    if (!design) {
        c.fail("generator", "the generated design does not load: " + design.errorText());
        return report;
    }
    report.loaded = true;
    auto analysis = analyze(*design, file, options);
    if (!analysis) {
        report.refusal = analysis.errorText();
        for (const Diagnostic &d : analysis.diagnostics())
            if (d.message.empty())
                c.fail("empty-diagnostic", "analyze() failed with an empty message");
        return report;
    }
    report.analyzed = true;
    const Analysis &a = *analysis;
    report.hadTopology = a.topology.has_value();
    report.warnings = accuracyWarnings(*design, a, report.limitWarnings);
    report.exempt = !report.warnings.empty();

    checkScalars(a, c);
    checkCurves(a, c);
    std::string where;
    if (showsNonNumber(analysisToJson(a), where, true))
        c.fail("output-text", "analysisToJson shows a non-number: ..." + where + "...");
    if (showsNonNumber(analysisToText(a), where))
        c.fail("output-text", "analysisToText shows a non-number: ..." + where + "...");
    if (showsNonNumber(sweepToCsv(a), where, true))
        c.fail("output-text", "sweepToCsv shows a non-number: ..." + where + "...");
    if (!report.exempt)
        checkIdentities(*design, a, options.solver, c, report);
    return report;
}

} // namespace loopsketch::fuzz
