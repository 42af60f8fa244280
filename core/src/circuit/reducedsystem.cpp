#include "loopsketch/circuit/reducedsystem.h"

#include "loopsketch/circuit/stepmodel.h"

#include "circuit/pencilsweep.h"
#include "circuit/refinedsolve.h"
#include "circuit/rowscales.h"
#include "circuit/structuralzeros.h"

#include "loopsketch/base/value.h"

#include <Eigen/Eigenvalues>
#include <Eigen/LU>

#include <algorithm>
#include <cmath>
#include <limits>
#include <numbers>
#include <optional>
#include <sstream>

namespace loopsketch {

namespace {

constexpr double kRankThreshold = 1e-12;
constexpr double kMinReciprocalCondition
    = 1e-30; // see circuit.cpp: loops reject only exact singularity

using Index = Eigen::Index;

Eigen::MatrixXd select(const Eigen::MatrixXd &m, const std::vector<Index> &rows,
                       const std::vector<Index> &cols)
{
    Eigen::MatrixXd out(static_cast<Index>(rows.size()), static_cast<Index>(cols.size()));
    for (std::size_t i = 0; i < rows.size(); ++i)
        for (std::size_t j = 0; j < cols.size(); ++j)
            out(static_cast<Index>(i), static_cast<Index>(j)) = m(rows[i], cols[j]);
    return out;
}

Eigen::MatrixXd selectRows(const Eigen::MatrixXd &m, const std::vector<Index> &rows)
{
    Eigen::MatrixXd out(static_cast<Index>(rows.size()), m.cols());
    for (std::size_t i = 0; i < rows.size(); ++i)
        out.row(static_cast<Index>(i)) = m.row(rows[i]);
    return out;
}

Eigen::MatrixXd selectCols(const Eigen::MatrixXd &m, const std::vector<Index> &cols)
{
    Eigen::MatrixXd out(m.rows(), static_cast<Index>(cols.size()));
    for (std::size_t j = 0; j < cols.size(); ++j)
        out.col(static_cast<Index>(j)) = m.col(cols[j]);
    return out;
}

std::vector<Index> complement(Index n, const std::vector<Index> &taken)
{
    std::vector<bool> used(static_cast<std::size_t>(n), false);
    for (Index i : taken)
        used[static_cast<std::size_t>(i)] = true;
    std::vector<Index> rest;
    for (Index i = 0; i < n; ++i)
        if (!used[static_cast<std::size_t>(i)])
            rest.push_back(i);
    return rest;
}

} // namespace

Result<ReducedSystem> ReducedSystem::build(DescriptorSystem &&fullSystem, SolverPath path)
{
    auto shared = std::make_shared<const DescriptorSystem>(std::move(fullSystem));
    const DescriptorSystem &system = *shared;
    const Index n = system.G.rows();
    std::vector<Index> staticSet;
    for (Index i = 0; i < n && path == SolverPath::Reduced; ++i) {
        if (system.C.row(i).cwiseAbs().maxCoeff() == 0.0
            && system.C.col(i).cwiseAbs().maxCoeff() == 0.0)
            staticSet.push_back(i);
    }
    // Eliminate the largest regular part of the static block; what is left of it (branch
    // rows of voltage sources on reactive nodes, for example) stays in the pencil.
    std::vector<Index> sRows, sCols;
    if (!staticSet.empty()) {
        const Eigen::MatrixXd gss = select(system.G, staticSet, staticSet);
        Eigen::FullPivLU<Eigen::MatrixXd> lu(gss);
        lu.setThreshold(kRankThreshold);
        const Index rank = lu.rank();
        const Eigen::PermutationMatrix<Eigen::Dynamic> pInverse = lu.permutationP().inverse();
        const auto &rowOrder = pInverse.indices();
        const auto &colOrder = lu.permutationQ().indices();
        for (Index i = 0; i < rank; ++i) {
            sRows.push_back(staticSet[static_cast<std::size_t>(rowOrder(i))]);
            sCols.push_back(staticSet[static_cast<std::size_t>(colOrder(i))]);
        }
        std::sort(sRows.begin(), sRows.end());
        std::sort(sCols.begin(), sCols.end());
        // The rank test and the regularity test read the block differently (relative pivot
        // against equilibrated condition): where they disagree, eliminate nothing and keep
        // the whole system in the pencil, which is exact, instead of refusing the circuit.
        if (!sRows.empty() && isSingular(Eigen::MatrixXd(select(system.G, sRows, sCols)))) {
            sRows.clear();
            sCols.clear();
        }
    }
    const std::vector<Index> kRows = complement(n, sRows);
    const std::vector<Index> kCols = complement(n, sCols);

    ReducedSystem r;
    for (Index c : kCols)
        r.m_unknowns.push_back(system.unknowns[static_cast<std::size_t>(c)]);
    const Eigen::MatrixXd gkk = select(system.G, kRows, kCols);
    const Eigen::MatrixXd ckk = select(system.C, kRows, kCols);
    const Eigen::MatrixXd bk = selectRows(system.B, kRows);
    const Eigen::MatrixXd lk = selectCols(system.L, kCols);
    if (sRows.empty()) {
        r.m_gr = gkk;
        r.m_cr = ckk;
        r.m_br = bk;
        r.m_lr = lk;
        r.m_dr = Eigen::MatrixXd::Zero(system.L.rows(), system.B.cols());
    } else {
        const Eigen::MatrixXd gss = select(system.G, sRows, sCols);
        Eigen::PartialPivLU<Eigen::MatrixXd> lu(gss); // regular: tested above
        const Eigen::MatrixXd gks = select(system.G, kRows, sCols);
        const Eigen::MatrixXd gsk = select(system.G, sRows, kCols);
        // Eigen's triangular solve touches element (0,0) even of an empty right-hand side,
        // so a fully static circuit (no kept unknowns) skips it.
        const auto solve = [&lu](const Eigen::MatrixXd &rhs) -> Eigen::MatrixXd {
            if (rhs.cols() == 0)
                return Eigen::MatrixXd(rhs.rows(), 0);
            return lu.solve(rhs);
        };
        const Eigen::MatrixXd xsk = solve(gsk); // Gss^-1 Gsk
        const Eigen::MatrixXd xsb = solve(selectRows(system.B, sRows)); // Gss^-1 Bs
        const Eigen::MatrixXd ls = selectCols(system.L, sCols);
        r.m_gr = gkk - gks * xsk;
        r.m_cr = ckk;
        r.m_br = bk - gks * xsb;
        r.m_lr = lk - ls * xsk;
        r.m_dr = ls * xsb;
    }

    r.m_path = path;
    r.m_system = std::move(shared);
    r.m_structuralZero = detail::findStructuralZeros(system).zero;
    // No solution at DC (an inductor across an ideal source or port, a node held by
    // capacitors only): what a pencil makes of s = 0 is then rounding of a singular matrix,
    // finite more often than not, so every value at DC is NaN on every path instead.
    r.m_singularAtDc = isSingular(system.G);
    // A pencil singular at every frequency has no solution anywhere: report it now.
    const std::complex<double> probe(0.0, 2.0 * std::numbers::pi * 1234.5);
    if (isSingular(Eigen::MatrixXcd(r.m_gr.cast<std::complex<double>>() + probe * r.m_cr))) {
        Diagnostic d = singularityDiagnostic(system, probe);
        if (d.message.empty()) {
            // Singular only in rounding: name the value that stretches the equations most.
            d.message = "the circuit equations are too ill-conditioned to solve (the largest "
                        "entry comes from this value)";
            const StampEntry *largest = nullptr;
            for (const StampEntry &e : system.stamps)
                if (!system.origins[static_cast<std::size_t>(e.origin)].part.empty()
                    && (!largest || std::abs(e.value) > std::abs(largest->value)))
                    largest = &e;
            if (largest) {
                d.part = system.origins[static_cast<std::size_t>(largest->origin)].part;
                d.field = system.origins[static_cast<std::size_t>(largest->origin)].field;
            }
        }
        return d;
    }
    return r;
}

Eigen::MatrixXcd ReducedSystem::evaluate(std::complex<double> s) const
{
    Eigen::MatrixXcd h;
    evaluateInto(s, {}, h);
    return h;
}

std::complex<double> ReducedSystem::entry(std::complex<double> s, int output, int input) const
{
    // An entry zero for every value of the parts is an exact 0 where the point is regular.
    const auto exact = [&](std::complex<double> v) {
        return structuralZero(output, input) && std::isfinite(v.real()) && std::isfinite(v.imag())
            ? std::complex<double>(0.0)
            : v;
    };
    if (m_path == SolverPath::DenseLu || m_refined) {
        thread_local Eigen::MatrixXcd h;
        const int in[] = {input}, out[] = {output};
        evaluateInto(s, in, out, h);
        return h(output, input); // masked there
    }
    if (m_singularAtDc && s == std::complex<double>(0.0))
        return {std::numeric_limits<double>::quiet_NaN(), std::numeric_limits<double>::quiet_NaN()};
    const TransferEntry e[] = {{output, input}};
    std::complex<double> h;
    detail::sweepPencil({m_gr, m_cr, m_br, m_lr, m_dr}, {&s, 1}, e, &h);
    return exact(h);
}

void ReducedSystem::evaluateInto(std::complex<double> s, std::span<const int> inputs,
                                 std::span<const int> outputs, Eigen::MatrixXcd &h) const
{
    using cd = std::complex<double>;
    if (h.rows() != this->outputs() || h.cols() != this->inputs())
        h.resize(this->outputs(), this->inputs());
    thread_local std::vector<int> allInputs, allOutputs;
    if (inputs.empty()) {
        allInputs.resize(static_cast<std::size_t>(this->inputs()));
        for (int c = 0; c < this->inputs(); ++c)
            allInputs[static_cast<std::size_t>(c)] = c;
        inputs = allInputs;
    }
    if (outputs.empty()) {
        allOutputs.resize(static_cast<std::size_t>(this->outputs()));
        for (int o = 0; o < this->outputs(); ++o)
            allOutputs[static_cast<std::size_t>(o)] = o;
        outputs = allOutputs;
    }
    // Entries zero for every value of the parts are an exact 0 wherever the point is
    // regular, on every path (run as this function returns).
    struct ExactZeros
    {
        const ReducedSystem &r;
        std::span<const int> inputs, outputs;
        Eigen::MatrixXcd &h;
        ~ExactZeros()
        {
            if (r.m_structuralZero.empty())
                return;
            for (int c : inputs)
                for (int o : outputs)
                    if (r.structuralZero(o, c) && std::isfinite(h(o, c).real())
                        && std::isfinite(h(o, c).imag()))
                        h(o, c) = 0.0;
        }
    } exactZeros{*this, inputs, outputs, h};
    if (m_singularAtDc && s == cd(0.0)) {
        const cd nan(std::numeric_limits<double>::quiet_NaN(),
                     std::numeric_limits<double>::quiet_NaN());
        for (int c : inputs)
            for (int o : outputs)
                h(o, c) = nan;
        return;
    }
    if (m_refined) {
        const cd nan(std::numeric_limits<double>::quiet_NaN(),
                     std::numeric_limits<double>::quiet_NaN());
        detail::RefinedSolver solver(*m_system);
        const bool regular = solver.factor(s);
        for (int c : inputs) {
            const Eigen::VectorXcd x = regular ? solver.solve(c) : Eigen::VectorXcd();
            for (int o : outputs) {
                const cd v = regular ? solver.output(o, x) : nan;
                h(o, c) = std::isfinite(v.real()) && std::isfinite(v.imag()) ? v : nan;
            }
        }
        return;
    }
    if (m_path == SolverPath::DenseLu && order() > 0) {
        const cd nan(std::numeric_limits<double>::quiet_NaN(),
                     std::numeric_limits<double>::quiet_NaN());
        Eigen::PartialPivLU<Eigen::MatrixXcd> lu(m_gr.cast<cd>() + s * m_cr);
        // Eigen's estimate reads an exactly zero pivot as well conditioned (rcond 1): test
        // the pivots first, so a singular point is NaN by decision, not by luck of the solve.
        const bool regular = (lu.matrixLU().diagonal().array() != cd(0.0)).all()
            && lu.rcond() > kMinReciprocalCondition;
        for (int c : inputs) {
            const Eigen::VectorXcd z = lu.solve(m_br.col(c).cast<cd>());
            if (regular && z.allFinite())
                h.col(c) = m_dr.col(c).cast<cd>() + m_lr * z;
            else
                h.col(c).setConstant(nan);
        }
        return;
    }
    thread_local std::vector<TransferEntry> entries;
    thread_local std::vector<cd> values;
    entries.clear();
    for (int c : inputs)
        for (int o : outputs)
            entries.push_back({o, c});
    values.resize(entries.size());
    detail::sweepPencil({m_gr, m_cr, m_br, m_lr, m_dr}, {&s, 1}, entries, values.data());
    for (std::size_t e = 0; e < entries.size(); ++e)
        h(entries[e].output, entries[e].input) = values[e];
}

std::vector<std::complex<double>>
ReducedSystem::sweepEntries(std::span<const std::complex<double>> s,
                            std::span<const TransferEntry> entries, SweepWidth width) const
{
    std::vector<std::complex<double>> out(entries.size() * s.size());
    if (m_path == SolverPath::Reduced && !m_refined) {
        detail::sweepPencil({m_gr, m_cr, m_br, m_lr, m_dr}, s, entries, out.data(), width);
        // Entries zero for every value of the parts: an exact 0 where the point is regular.
        for (std::size_t e = 0; e < entries.size(); ++e) {
            if (!structuralZero(entries[e].output, entries[e].input))
                continue;
            for (std::size_t i = 0; i < s.size(); ++i) {
                std::complex<double> &v = out[e * s.size() + i];
                if (std::isfinite(v.real()) && std::isfinite(v.imag()))
                    v = 0.0;
            }
        }
        if (m_singularAtDc) {
            for (std::size_t i = 0; i < s.size(); ++i)
                if (s[i] == std::complex<double>(0.0))
                    for (std::size_t e = 0; e < entries.size(); ++e)
                        out[e * s.size() + i] = {std::numeric_limits<double>::quiet_NaN(),
                                                 std::numeric_limits<double>::quiet_NaN()};
        }
        return out;
    }
    // The reference path (one dense LU of the whole matrix per point) and the refined one,
    // as evaluateInto().
    std::vector<int> inputs, outputs;
    for (const TransferEntry &e : entries) {
        if (std::find(inputs.begin(), inputs.end(), e.input) == inputs.end())
            inputs.push_back(e.input);
        if (std::find(outputs.begin(), outputs.end(), e.output) == outputs.end())
            outputs.push_back(e.output);
    }
    Eigen::MatrixXcd h;
    for (std::size_t i = 0; i < s.size(); ++i) {
        evaluateInto(s[i], inputs, outputs, h);
        for (std::size_t e = 0; e < entries.size(); ++e)
            out[e * s.size() + i] = h(entries[e].output, entries[e].input);
    }
    return out;
}

std::vector<Eigen::MatrixXcd> ReducedSystem::sweep(const std::vector<double> &frequenciesHz) const
{
    std::vector<Eigen::MatrixXcd> out(frequenciesHz.size());
    for (std::size_t i = 0; i < frequenciesHz.size(); ++i)
        evaluateInto({0.0, 2.0 * std::numbers::pi * frequenciesHz[i]}, {}, out[i]);
    return out;
}

bool ReducedSystem::dcRegular() const
{
    if (order() == 0)
        return true;
    return !isSingular(m_gr);
}

namespace {

/// Power-of-two row and column balancing of the pencil (a few sweeps): neither changes
/// the eigenvalues, and QZ's errors follow the balanced entries instead of the units.
void balance(Eigen::MatrixXd &g, Eigen::MatrixXd &c)
{
    for (int sweep = 0; sweep < 4; ++sweep) {
        for (Index i = 0; i < g.rows(); ++i) {
            const double m
                = std::max(g.row(i).cwiseAbs().maxCoeff(), c.row(i).cwiseAbs().maxCoeff());
            if (m > 0 && std::isfinite(m)) {
                const double f = std::exp2(-std::round(std::log2(m)));
                g.row(i) *= f;
                c.row(i) *= f;
            }
        }
        for (Index j = 0; j < g.cols(); ++j) {
            const double m
                = std::max(g.col(j).cwiseAbs().maxCoeff(), c.col(j).cwiseAbs().maxCoeff());
            if (m > 0 && std::isfinite(m)) {
                const double f = std::exp2(-std::round(std::log2(m)));
                g.col(j) *= f;
                c.col(j) *= f;
            }
        }
    }
}

/// Finite generalized eigenvalues s of (g + s c) v = 0, the pencil scaled by w0 first
/// (s = w0 s'). `relativeToAlpha`: the finite test compares |beta| with |alpha| instead of
/// with the largest entry of the balanced C.
std::vector<std::complex<double>> finiteEigenvalues(Eigen::MatrixXd g, Eigen::MatrixXd c, double w0,
                                                    bool relativeToAlpha = false)
{
    std::vector<std::complex<double>> poles;
    g /= w0;
    balance(g, c);
    // Eigen's info() asserts (in builds with assertions) where QZ did not converge, instead
    // of saying so; the solver's own flags say it either way.
    struct Solver : Eigen::GeneralizedEigenSolver<Eigen::MatrixXd>
    {
        bool converged() const { return m_valuesOkay && m_realQZ.info() == Eigen::Success; }
    } ges;
    ges.compute(g, c, false);
    if (!ges.converged())
        return poles;
    const Eigen::VectorXcd alphas = ges.alphas();
    const Eigen::VectorXd betas = ges.betas();
    const double cNorm = c.cwiseAbs().maxCoeff();
    for (Index i = 0; i < alphas.size(); ++i) {
        const double b = betas(i);
        const double floor = relativeToAlpha ? 1e-13 * std::abs(alphas(i)) : 1e-13 * cNorm;
        if (std::abs(b) > floor && b != 0.0 && std::isfinite(std::abs(alphas(i)))) {
            const std::complex<double> s = -w0 * (alphas(i) / b);
            if (std::isfinite(std::abs(s)))
                poles.push_back(s);
        }
    }
    return poles;
}

/// The pencil brought to comparable entries: frequency scaled (s = w0 s', c' = w0 c, w0 a
/// power of two near |g| / |c|) and balanced by powers of two on rows and columns until the
/// sums of |g| + |c'| in every row and column are near 1. Same eigenvalues (times w0).
struct ScaledPencil
{
    Eigen::MatrixXd g, c;
    double w0 = 1.0;
};

ScaledPencil scaledPencil(const Eigen::MatrixXd &gr, const Eigen::MatrixXd &cr)
{
    ScaledPencil p;
    const double gNorm = gr.cwiseAbs().sum(), cNorm = cr.cwiseAbs().sum();
    p.w0 = gNorm > 0 && cNorm > 0 && std::isfinite(gNorm / cNorm)
        ? std::exp2(std::round(std::log2(gNorm / cNorm)))
        : 1.0;
    p.g = gr;
    p.c = cr * p.w0;
    const auto power2 = [](double v) {
        return v > 0 && std::isfinite(v) ? std::exp2(std::round(-std::log2(v))) : 1.0;
    };
    const Index k = gr.rows();
    for (int sweep = 0; sweep < 30; ++sweep) {
        bool changed = false;
        for (Index i = 0; i < k; ++i) {
            const double f = power2(p.g.row(i).cwiseAbs().sum() + p.c.row(i).cwiseAbs().sum());
            p.g.row(i) *= f;
            p.c.row(i) *= f;
            changed = changed || std::abs(std::log2(f)) > 1.0;
        }
        for (Index j = 0; j < k; ++j) {
            const double f = power2(p.g.col(j).cwiseAbs().sum() + p.c.col(j).cwiseAbs().sum());
            p.g.col(j) *= f;
            p.c.col(j) *= f;
            changed = changed || std::abs(std::log2(f)) > 1.0;
        }
        if (!changed)
            break;
    }
    return p;
}

/// The Newton step towards a root of det(G + sC) from s (rad/s): det / det' =
/// 1 / trace((G + sC)^-1 C), computed on the scaled pencil (diagonal scaling leaves the
/// trace unchanged). 0 where G + sC is exactly singular; NaN where it cannot be computed.
std::complex<double> newtonStep(const ScaledPencil &p, std::complex<double> s)
{
    using cd = std::complex<double>;
    const cd sp = s / p.w0;
    const Eigen::MatrixXcd a = p.g.cast<cd>() + sp * p.c.cast<cd>();
    Eigen::PartialPivLU<Eigen::MatrixXcd> lu(a);
    if ((lu.matrixLU().diagonal().array() == cd(0.0)).any())
        return 0.0;
    const Eigen::MatrixXcd x = lu.solve(p.c.cast<cd>());
    const cd trace = x.trace();
    if (!(std::abs(trace) > 0) || !std::isfinite(std::abs(trace)))
        return {std::numeric_limits<double>::quiet_NaN(), 0.0}; // overflow: no verdict
    return p.w0 / trace;
}

/// A candidate eigenvalue confirmed by Newton's method on det(G + sC): the root it
/// converges to (the steps shrinking to rounding level within a quarter of |s|), or
/// nothing. A spurious eigenvalue (rounding of a badly scaled pencil, an infinite mode
/// that QZ left finite) is far from every root in the relative sense, and its first step
/// is of the order of |s| itself.
std::optional<std::complex<double>> confirmedRoot(const ScaledPencil &p, std::complex<double> s)
{
    double travelled = 0;
    double lastStep = std::numeric_limits<double>::infinity();
    for (int iteration = 0; iteration < 40; ++iteration) {
        const std::complex<double> d = newtonStep(p, s);
        const double step = std::abs(d);
        if (!std::isfinite(step))
            return std::nullopt;
        const double size = std::abs(s);
        if (step <= 1e-13 * size || step == 0.0)
            return s - d;
        // Steps that stop shrinking at a level the rounding of the pencil explains (a
        // multiple root, or a root known to about 1e-10 of its size) also confirm it.
        if (step >= lastStep && step <= 1e-9 * size)
            return s;
        if (step >= 0.5 * lastStep && iteration > 3 && step > 1e-9 * size)
            return std::nullopt; // not converging
        s -= d;
        travelled += step;
        if (travelled > 0.25 * size)
            return std::nullopt; // wandered off: the candidate was no root
        lastStep = step;
    }
    return std::nullopt;
}

/// The number of roots of det(G + sC) with |s| < radius (rad/s) by the argument
/// principle, (1/2 pi i) times the contour integral of trace((G + sC)^-1 C) ds, on 64
/// points of the circle; -1 where the sum is not near an integer (a root near the circle,
/// or rounding).
int rootsInside(const ScaledPencil &p, double radius)
{
    using cd = std::complex<double>;
    constexpr int kPoints = 64;
    cd sum = 0;
    for (int i = 0; i < kPoints; ++i) {
        const cd s = std::polar(radius, 2.0 * std::numbers::pi * (i + 0.5) / kPoints);
        const cd sp = s / p.w0;
        Eigen::PartialPivLU<Eigen::MatrixXcd> lu(p.g.cast<cd>() + sp * p.c.cast<cd>());
        const Eigen::MatrixXcd x = lu.solve(p.c.cast<cd>());
        if (!x.allFinite())
            return -1;
        sum += sp * x.trace();
    }
    sum /= static_cast<double>(kPoints);
    const double count = std::round(sum.real());
    if (!(std::abs(sum - cd(count)) < 0.1) || count < 0)
        return -1;
    return static_cast<int>(count);
}

/// Roots of det(G + sC) that `known` lacks, by Newton's method on det(G + sC) / prod(s -
/// known) (Maehly's deflation, so no start falls back into a root already found), from
/// starts spread over angles and radii up to `radius`; at most `missing` of them.
std::vector<std::complex<double>> deflatedRoots(const ScaledPencil &p,
                                                std::vector<std::complex<double>> known,
                                                double radius, int missing)
{
    using cd = std::complex<double>;
    std::vector<cd> found;
    double low = radius * 1e-6;
    for (const cd r : known)
        low = std::max(low, std::abs(r));
    for (double rho = low; rho <= radius && static_cast<int>(found.size()) < missing; rho *= 4.0) {
        for (const double angle : {0.6, 2.0, 2.9}) {
            if (static_cast<int>(found.size()) >= missing)
                break;
            cd s = std::polar(rho, angle);
            bool converged = false;
            for (int iteration = 0; iteration < 80 && !converged; ++iteration) {
                const cd step = newtonStep(p, s);
                if (!std::isfinite(std::abs(step)))
                    break;
                cd deflation = 0;
                for (const cd r : known)
                    deflation += 1.0 / (s - r);
                const cd d = step == cd(0.0) ? cd(0.0) : 1.0 / (1.0 / step - deflation);
                if (!std::isfinite(std::abs(d)))
                    break;
                s -= d;
                converged = std::abs(d) <= 1e-13 * std::abs(s);
            }
            if (!converged || !std::isfinite(std::abs(s)))
                continue;
            const std::optional<cd> root = confirmedRoot(p, s);
            if (!root)
                continue;
            found.push_back(*root);
            known.push_back(*root);
        }
    }
    return found;
}

} // namespace

std::vector<std::complex<double>> ReducedSystem::naturalFrequencies() const
{
    using cd = std::complex<double>;
    if (order() == 0)
        return {};
    // (Gr + s Cr) v = 0  <=>  Gr v = lambda Cr v with lambda = -s. No one scaling of the
    // pencil suits every circuit: a very high gain puts entries of 1e12 beside 1e-6, where
    // QZ, backward stable only relative to the largest entry, loses small ones and may
    // return eigenvalues that are rounding (or infinite modes left finite). So several
    // scalings give candidates (rows with their reactive entries at 1, balanced, with and
    // without frequency scaling by the largest entry; frequency scaling by |G| / |C| and
    // balancing to unit row and column sums), and each candidate is kept only where
    // Newton's method on det(G + sC) confirms it as a root (and polishes it). The scaling
    // whose candidates give the most confirmed roots comes first; the other scalings add
    // roots it missed.
    const Eigen::VectorXd scale = detail::rowScales(m_gr, m_cr);
    Eigen::MatrixXd g = scale.asDiagonal() * m_gr;
    Eigen::MatrixXd c = scale.asDiagonal() * m_cr;
    if (!g.allFinite()) { // a gain near the largest double: no row scaling
        g = m_gr;
        c = m_cr;
    }
    const ScaledPencil pencil = scaledPencil(m_gr, m_cr);
    std::vector<std::vector<cd>> attempts;
    attempts.push_back(finiteEigenvalues(g, c, 1.0));
    const double wMax = g.cwiseAbs().maxCoeff();
    if (wMax > 0 && std::isfinite(wMax) && wMax != 1.0)
        attempts.push_back(finiteEigenvalues(g, c, wMax));
    std::vector<cd> balanced = finiteEigenvalues(pencil.g, pencil.c, 1.0, true);
    for (cd &s : balanced)
        s *= pencil.w0;
    attempts.push_back(std::move(balanced));
    // The full pencil before the static elimination: there a very high gain sits in one
    // entry that balancing can offset, where the Schur complement spreads it over many.
    if (m_system && m_system->size() > order()) {
        const ScaledPencil full = scaledPencil(m_system->G, m_system->C);
        std::vector<cd> fromFull = finiteEigenvalues(full.g, full.c, 1.0, true);
        for (cd &s : fromFull)
            s *= full.w0;
        attempts.push_back(std::move(fromFull));
    }

    const auto near = [](cd a, cd b, double tolerance) {
        return std::abs(a - b) <= tolerance * std::max(std::abs(a), std::abs(b));
    };
    std::vector<std::vector<cd>> confirmed;
    for (const std::vector<cd> &candidates : attempts) {
        std::vector<cd> roots, from;
        for (const cd candidate : candidates) {
            const std::optional<cd> root = confirmedRoot(pencil, candidate);
            if (!root)
                continue;
            // Two candidates far apart that converge to one root: one of them was no
            // root of its own (a multiple root shows as candidates close together).
            bool duplicate = false;
            for (std::size_t i = 0; i < roots.size(); ++i)
                duplicate
                    = duplicate || (near(roots[i], *root, 1e-8) && !near(from[i], candidate, 1e-4));
            if (!duplicate) {
                roots.push_back(*root);
                from.push_back(candidate);
            }
        }
        confirmed.push_back(std::move(roots));
    }
    std::stable_sort(confirmed.begin(), confirmed.end(),
                     [](const auto &a, const auto &b) { return a.size() > b.size(); });
    std::vector<cd> poles = confirmed.front();
    for (std::size_t a = 1; a < confirmed.size(); ++a)
        for (const cd root : confirmed[a])
            if (poles.size() < static_cast<std::size_t>(order())
                && std::none_of(poles.begin(), poles.end(),
                                [&](cd p) { return near(p, root, 1e-6); }))
                poles.push_back(root);
    // How many roots there are within a radius well beyond those found (argument
    // principle); where some are missing, Newton's method with deflation looks for them.
    double largest = pencil.w0;
    for (const cd s : poles)
        largest = std::max(largest, std::abs(s));
    const double radius = 1e3 * largest;
    const int inside = rootsInside(pencil, radius);
    const int found = static_cast<int>(poles.size());
    if (inside > found && inside <= order()) {
        const std::vector<cd> more = deflatedRoots(pencil, poles, radius, inside - found);
        poles.insert(poles.end(), more.begin(), more.end());
    }
    m_unconfirmedPoles = inside < 0 ? 0 : std::max(0, inside - static_cast<int>(poles.size()));
    for (cd &s : poles)
        if (std::abs(s.imag()) < 1e-12 * std::abs(s))
            s = {s.real(), 0.0};
    std::sort(poles.begin(), poles.end(), [](auto x, auto y) {
        return std::abs(x) != std::abs(y) ? std::abs(x) < std::abs(y) : x.imag() < y.imag();
    });
    return poles;
}

std::optional<Diagnostic> ReducedSystem::unconfirmedPolesWarning() const
{
    if (m_unconfirmedPoles <= 0 || !m_system)
        return std::nullopt;
    const StampEntry *largest = nullptr;
    for (const StampEntry &e : m_system->stamps) {
        const StampOrigin &o = m_system->origins[static_cast<std::size_t>(e.origin)];
        if (!o.part.empty() && !e.reactive
            && (!largest || std::abs(e.value) > std::abs(largest->value)))
            largest = &e;
    }
    Diagnostic d;
    if (largest) {
        d.part = m_system->origins[static_cast<std::size_t>(largest->origin)].part;
        d.field = m_system->origins[static_cast<std::size_t>(largest->origin)].field;
    }
    d.message = "accuracy cannot be assured: " + std::to_string(m_unconfirmedPoles)
        + (m_unconfirmedPoles == 1 ? " natural frequency" : " natural frequencies")
        + " of the circuit counted but not located, so the poles listed are not all of "
          "them (rounding in the circuit equations, whose largest entry comes from this "
          "value)";
    return d;
}

AccuracyCheck ReducedSystem::checkAccuracy(std::span<const std::complex<double>> probes,
                                           std::span<const CheckedEntry> entries, double tolerance)
{
    AccuracyCheck check;
    if (!m_system || entries.empty() || probes.empty())
        return check;
    std::vector<TransferEntry> plain;
    for (const CheckedEntry &e : entries)
        plain.push_back(e.entry);
    const std::vector<std::complex<double>> fast = sweepEntries(probes, plain);
    detail::RefinedSolver solver(*m_system);
    bool missed = false;
    struct Worst
    {
        double relative = 0;
        std::size_t entry = 0;
        std::complex<double> s;
        std::vector<double> shares;
    } worst;
    std::vector<double> shares;
    for (std::size_t p = 0; p < probes.size(); ++p) {
        if (!solver.factor(probes[p])) {
            // No solution at DC: what the reduced pencil makes of it is rounding, not a value.
            if (probes[p] == std::complex<double>(0.0))
                m_singularAtDc = true;
            continue;
        }
        std::vector<std::pair<int, Eigen::VectorXcd>> solved; // per input, solved once
        std::vector<Eigen::VectorXcd> residuals;
        for (std::size_t e = 0; e < entries.size(); ++e) {
            const TransferEntry te = entries[e].entry;
            std::size_t which = solved.size();
            for (std::size_t q = 0; q < solved.size(); ++q)
                if (solved[q].first == te.input)
                    which = q;
            if (which == solved.size()) {
                Eigen::VectorXcd r;
                solved.emplace_back(te.input, solver.solve(te.input, &r));
                residuals.push_back(std::move(r));
            }
            const Eigen::VectorXcd &x = solved[which].second;
            const std::complex<double> careful = solver.output(te.output, x);
            const double size = std::abs(careful);
            if (!std::isfinite(size))
                continue;
            const std::complex<double> got = fast[e * probes.size() + p];
            // A term that warns of nothing and meets the tolerance needs no bound (the bound's
            // transposed solve is the dearest part of the check).
            if (!entries[e].warns && std::abs(got - careful) <= tolerance * size)
                continue;
            const double bound
                = solver.errorBound(te.output, te.input, x, residuals[which], &shares);
            // Absolute, so that an exact zero (an output behind an ideal source) counts too:
            // rounding that the reduced pencil leaves in place of a zero is a miss as well.
            if (!(std::abs(got - careful) <= std::max(tolerance * size, 4.0 * bound)))
                missed = true;
            if (!(size > 0))
                continue; // no relative accuracy to assure
            const double relative = bound / size;
            if (entries[e].warns && relative > worst.relative)
                worst = {relative, e, probes[p], shares};
        }
    }
    check.worstRelativeError = worst.relative;
    if (missed && m_path == SolverPath::Reduced) {
        m_refined = true;
        check.refined = true;
    }
    if (worst.relative > tolerance) {
        // Name the user's part and field with the largest share of the bound.
        int top = -1;
        for (std::size_t o = 0; o < worst.shares.size(); ++o)
            if (!m_system->origins[o].part.empty()
                && (top < 0 || worst.shares[o] > worst.shares[static_cast<std::size_t>(top)]))
                top = static_cast<int>(o);
        const double hz = std::abs(worst.s) / (2.0 * std::numbers::pi);
        std::ostringstream bound;
        bound.precision(2);
        bound << worst.relative;
        Diagnostic d;
        if (top >= 0) {
            d.part = m_system->origins[static_cast<std::size_t>(top)].part;
            d.field = m_system->origins[static_cast<std::size_t>(top)].field;
        }
        d.message = "accuracy cannot be assured: " + entries[worst.entry].quantity + " at "
            + (hz == 0.0 ? std::string("DC") : formatEngineering(hz, 3, "Hz")) + " may be off by "
            + bound.str()
            + " of its value (rounding in the circuit equations, largest share from this "
              "value)";
        check.warnings.push_back(d);
    }
    return check;
}

Result<std::vector<double>> ReducedSystem::stepResponse(int output, int input,
                                                        const std::vector<double> &times) const
{
    auto model = StepModel::build(*this, output, input);
    if (!model)
        return model.diagnostics();
    return model->sample(times);
}

} // namespace loopsketch
