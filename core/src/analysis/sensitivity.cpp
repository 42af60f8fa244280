#include "analysis/sensitivity.h"

#include "loopsketch/analysis/workbudget.h"
#include "loopsketch/circuit/loopcircuit.h"

#include <Eigen/LU>

#include <algorithm>
#include <cmath>
#include <limits>
#include <string_view>
#include <utility>

namespace loopsketch::detail {

namespace {

constexpr double kSensitivityStep = 1e-6; // relative, central difference
constexpr int kMaxRefinements = 4;
// How far the adjoint's sensitivities may miss the scaling invariant: far below the four
// digits a sensitivity is shown with, far above the 1e-16 of a well-conditioned system.
constexpr double kInvariantTolerance = 1e-7;

/// LU of a real matrix A equilibrated by powers of two (rows, then columns, to a largest
/// entry near 1, so the scaling itself rounds nothing), solving A x = b or A^T x = b with
/// iterative refinement on residuals summed in extended precision. Refinement matters here:
/// the adjoint multiplies differences x(a) - x(b) and lambda(a) - lambda(b) across each
/// element, and where an element carries no current at DC (a resistor in series with a
/// capacitor) only a solution accurate in every component leaves that difference at zero
/// instead of rounding times a large adjoint.
class EquilibratedLu
{
public:
    explicit EquilibratedLu(const Eigen::MatrixXd &a) : m_a(a)
    {
        const Eigen::Index n = a.rows();
        const auto power2 = [](double v) {
            return v > 0 && std::isfinite(v) ? std::exp2(std::round(-std::log2(v))) : 1.0;
        };
        m_row.resize(n);
        m_col.resize(n);
        for (Eigen::Index i = 0; i < n; ++i)
            m_row(i) = power2(a.row(i).cwiseAbs().maxCoeff());
        for (Eigen::Index j = 0; j < n; ++j)
            m_col(j) = power2((m_row.asDiagonal() * a.col(j)).cwiseAbs().maxCoeff());
        m_lu.compute(m_row.asDiagonal() * a * m_col.asDiagonal());
    }

    /// x with A x = b, or A^T x = b when `transposed`.
    Eigen::VectorXd solve(const Eigen::VectorXd &b, bool transposed) const
    {
        Eigen::VectorXd x = applyInverse(b, transposed);
        Eigen::VectorXd r(b.size());
        double best = std::numeric_limits<double>::infinity();
        for (int step = 0; step < kMaxRefinements; ++step) {
            double size = 0.0;
            for (Eigen::Index i = 0; i < b.size(); ++i) {
                long double acc = b(i);
                for (Eigen::Index j = 0; j < b.size(); ++j) {
                    const double aij = transposed ? m_a(j, i) : m_a(i, j);
                    if (aij != 0.0)
                        acc -= static_cast<long double>(aij) * x(j);
                }
                r(i) = static_cast<double>(acc);
                size = std::max(size, std::abs(r(i)) * (transposed ? m_col(i) : m_row(i)));
            }
            if (!(size < 0.5 * best) || size == 0.0) // converged, stagnating or not finite
                break;
            best = size;
            x += applyInverse(r, transposed);
        }
        return x;
    }

private:
    // S_r A S_c = M: A^-1 = S_c M^-1 S_r and A^-T = S_r M^-T S_c.
    Eigen::VectorXd applyInverse(const Eigen::VectorXd &b, bool transposed) const
    {
        if (transposed) { // P M = L U, so M^-T = P^T L^-T U^-T
            const Eigen::MatrixXd &lu = m_lu.matrixLU();
            Eigen::VectorXd v = lu.triangularView<Eigen::Upper>().transpose().solve(
                (m_col.asDiagonal() * b).eval());
            v = lu.triangularView<Eigen::UnitLower>().transpose().solve(v);
            return m_row.asDiagonal() * (m_lu.permutationP().transpose() * v);
        }
        return m_col.asDiagonal() * m_lu.solve((m_row.asDiagonal() * b).eval());
    }

    const Eigen::MatrixXd &m_a;
    Eigen::VectorXd m_row, m_col;
    Eigen::PartialPivLU<Eigen::MatrixXd> m_lu;
};

/// DC gain of the full circuit by one dense real solve (the finite-difference reference).
OptionalNumber dcGain(const Design &design)
{
    auto system = assembleSystem(buildLoopNetlist(design));
    if (!system)
        return std::nullopt;
    Eigen::PartialPivLU<Eigen::MatrixXd> lu(system->G);
    const Eigen::VectorXd x = lu.solve(system->B.col(loopio::kSource));
    if (!x.allFinite() || isSingular(system->G))
        return std::nullopt;
    const double y = system->L.row(loopio::kOutput).dot(x);
    if (!std::isfinite(y))
        return std::nullopt;
    return y;
}

/// The central difference of the gain in part i's field `field`: the field nudged by +-1e-6
/// in `d` (a copy of the design, put back afterwards) and the gain solved afresh both times.
std::optional<double> centralDifference(Design &d, std::size_t i, const std::string &field,
                                        double gain)
{
    const double base = d.parts[i].number(field);
    OptionalNumber g[2];
    auto &fields = d.parts[i].fields;
    const bool given = fields.count(field) != 0;
    const auto original = given ? fields.at(field) : Value{};
    for (int k = 0; k < 2; ++k) {
        fields[field].si = base * (1.0 + (k ? kSensitivityStep : -kSensitivityStep));
        g[k] = dcGain(d);
    }
    if (given)
        fields[field] = original;
    else
        fields.erase(field);
    if (!g[0] || !g[1])
        return std::nullopt;
    return (*g[1] - *g[0]) / (2 * kSensitivityStep * gain);
}

/// The reference: every field by central differences.
std::map<std::string, double> finiteDifferenceSensitivity(const Design &design, double gain)
{
    std::map<std::string, double> out;
    // One copy of the design, each field nudged and put back in turn: copying the whole
    // design per nudge cost more than the solves.
    Design d = design;
    for (std::size_t i = 0; i < design.parts.size(); ++i) {
        const std::string field = sensitivityField(design.parts[i]);
        if (field.empty())
            continue;
        if (const auto s = centralDifference(d, i, field, gain))
            out[design.parts[i].id] = *s;
    }
    return out;
}

/// The adjoint's self-check: scaling every resistance by k scales a transimpedance by k, a
/// transconductance by 1/k and leaves a voltage or current ratio alone, so by Euler's theorem
/// on homogeneous functions the sensitivities to all resistances (every origin in G but the
/// gain) sum to 1, -1 or 0. On a system so ill-conditioned that the solves lose their digits
/// (resistances across 15 decades) the sum misses; the finite differences then take over.
bool obeysScalingInvariant(const Design &design, const DescriptorSystem &system,
                           const std::vector<OriginSensitivity> &s)
{
    const Part *source = design.signalSource();
    const double degree = (source && source->type == PartType::ISource ? 1.0 : 0.0)
        - (design.output == OutputKind::Current ? 1.0 : 0.0);
    double sum = 0, size = 0;
    for (std::size_t o = 0; o < s.size(); ++o)
        if (system.origins[o].field != "gain") {
            sum += s[o].value;
            size += std::abs(s[o].value);
        }
    return std::abs(sum - degree) <= kInvariantTolerance * (1.0 + size);
}

std::map<std::string, double> adjointSensitivity(const Design &design, double gain)
{
    std::map<std::string, double> out;
    const auto system = assembleSystem(buildLoopNetlist(design));
    if (!system)
        return out;
    const auto s = dcSensitivities(*system, loopio::kOutput, loopio::kSource);
    if (!s)
        return out;
    // The finite differences that take over cost two DC gains each; never more of them than
    // the work budget holds (beyond it those parts have no sensitivity rather than a wrong one).
    const double each = 2.0 * dcGainOperations(circuitSize(design));
    std::size_t differences = static_cast<std::size_t>(kMaxWorkOperations / std::max(each, 1.0));
    if (!obeysScalingInvariant(design, *system, *s))
        return circuitSize(design).sensitivities <= differences
            ? finiteDifferenceSensitivity(design, gain)
            : out;
    std::map<std::pair<std::string_view, std::string_view>, std::size_t> origin;
    for (std::size_t o = 0; o < system->origins.size(); ++o)
        origin[{system->origins[o].part, system->origins[o].field}] = o;
    std::optional<Design> copy; // for the parts whose adjoint terms cancelled
    for (std::size_t i = 0; i < design.parts.size(); ++i) {
        const Part &p = design.parts[i];
        const std::string field = sensitivityField(p);
        if (field.empty())
            continue;
        // A field with no entry in G (a capacitance) does not act at DC: 0.
        const auto at = origin.find({p.id, field});
        const OriginSensitivity found = at == origin.end() ? OriginSensitivity{} : (*s)[at->second];
        if (!found.cancelled()) {
            out[p.id] = found.value;
            continue;
        }
        if (differences == 0)
            continue;
        --differences;
        if (!copy)
            copy = design;
        if (const auto d = centralDifference(*copy, i, field, gain))
            out[p.id] = *d;
    }
    return out;
}

} // namespace

std::string sensitivityField(const Part &p)
{
    switch (p.type) {
    case PartType::GainBlock:
        return "gain";
    case PartType::VSource:
        return p.number("r_series") > 0 ? "r_series" : "";
    case PartType::ISource:
        return p.has("r_parallel") ? "r_parallel" : "";
    default:
        return std::string(p.primaryField());
    }
}

std::optional<std::vector<OriginSensitivity>> dcSensitivities(const DescriptorSystem &system,
                                                              int output, int input)
{
    if (system.size() == 0 || isSingular(system.G))
        return std::nullopt;
    const EquilibratedLu lu(system.G);
    const Eigen::VectorXd x = lu.solve(system.B.col(input), false);
    const Eigen::VectorXd lambda = lu.solve(system.L.row(output).transpose(), true);
    const double y = system.L.row(output).dot(x);
    if (!x.allFinite() || !lambda.allFinite() || !std::isfinite(y) || y == 0.0)
        return std::nullopt;
    std::vector<OriginSensitivity> s(system.origins.size());
    for (const StampEntry &e : system.stamps) {
        if (e.reactive || e.power == 0)
            continue;
        const double term = e.power * e.value * lambda(e.row) * x(e.col);
        OriginSensitivity &o = s[static_cast<std::size_t>(e.origin)];
        o.value -= term;
        o.terms += std::abs(term);
    }
    for (OriginSensitivity &o : s) {
        o.value /= y;
        o.terms /= std::abs(y);
    }
    return s;
}

std::map<std::string, double> gainSensitivity(const Design &design, double gain, SolverPath path)
{
    if (!(std::abs(gain) > 0))
        return {};
    return path == SolverPath::DenseLu ? finiteDifferenceSensitivity(design, gain)
                                       : adjointSensitivity(design, gain);
}

} // namespace loopsketch::detail
