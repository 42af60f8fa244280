#include "loopsketch/reducedsystem.h"

#include "pencilsweep.h"
#include "refinedsolve.h"

#include "loopsketch/value.h"

#include <Eigen/Eigenvalues>
#include <Eigen/LU>
#include <Eigen/SVD>
#include <unsupported/Eigen/MatrixFunctions>

#include <algorithm>
#include <cmath>
#include <limits>
#include <numbers>
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

/// Scales each row of the pencil so that its largest reactive entry is 1 (rows without
/// one: largest static entry), so rank and eigenvalue tolerances mean the same in every
/// row whatever its units (siemens, farads, seconds).
Eigen::VectorXd rowScales(const Eigen::MatrixXd &g, const Eigen::MatrixXd &c)
{
    Eigen::VectorXd scale(g.rows());
    for (Index i = 0; i < g.rows(); ++i) {
        double m = c.row(i).cwiseAbs().maxCoeff();
        if (!(m > 0))
            m = g.row(i).cwiseAbs().maxCoeff();
        scale(i) = m > 0 ? 1.0 / m : 1.0;
    }
    return scale;
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
        Eigen::PartialPivLU<Eigen::MatrixXd> lu(gss);
        if (isSingular(gss))
            return Diagnostic{{}, {}, {}, describeSingularity(system, 0.0)};
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
    // A pencil singular at every frequency has no solution anywhere: report it now.
    const std::complex<double> probe(0.0, 2.0 * std::numbers::pi * 1234.5);
    if (isSingular(Eigen::MatrixXcd(r.m_gr.cast<std::complex<double>>() + probe * r.m_cr))) {
        std::string why = describeSingularity(system, probe);
        if (why.empty())
            why = "the circuit equations are too ill-conditioned to solve";
        return Diagnostic{{}, {}, {}, why};
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
    if (m_path == SolverPath::DenseLu || m_refined) {
        thread_local Eigen::MatrixXcd h;
        const int in[] = {input}, out[] = {output};
        evaluateInto(s, in, out, h);
        return h(output, input);
    }
    const TransferEntry e[] = {{output, input}};
    std::complex<double> h;
    detail::sweepPencil({m_gr, m_cr, m_br, m_lr, m_dr}, {&s, 1}, e, &h);
    return h;
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
        const bool regular = lu.rcond() > kMinReciprocalCondition;
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

std::vector<std::complex<double>> ReducedSystem::naturalFrequencies() const
{
    std::vector<std::complex<double>> poles;
    if (order() == 0)
        return poles;
    // (Gr + s Cr) v = 0  <=>  Gr v = lambda Cr v with lambda = -s. A gain of 1e12 puts
    // entries of 1e10 beside 1e-6 in Gr, where the QZ iteration, backward stable only
    // relative to the largest entry, loses the small ones (and with them poles). So the
    // frequency is scaled (s = w0 s', Cr' = w0 Cr, bringing the two matrices to one size)
    // and the pencil balanced by powers of two on both sides until every row and column of
    // |Gr| + |Cr'| has a sum near 1: D1 (Gr + s' Cr') D2 has the same eigenvalues, and its
    // entries are of comparable size wherever the circuit allows.
    const Index k = order();
    const double gNorm = m_gr.cwiseAbs().sum(), cNorm = m_cr.cwiseAbs().sum();
    const double w0
        = gNorm > 0 && cNorm > 0 ? std::exp2(std::round(std::log2(gNorm / cNorm))) : 1.0;
    Eigen::MatrixXd g = m_gr, c = m_cr * w0;
    const auto power2 = [](double v) {
        return v > 0 && std::isfinite(v) ? std::exp2(std::round(-std::log2(v))) : 1.0;
    };
    for (int sweep = 0; sweep < 30; ++sweep) {
        bool changed = false;
        for (Index i = 0; i < k; ++i) {
            const double f = power2(g.row(i).cwiseAbs().sum() + c.row(i).cwiseAbs().sum());
            if (f != 1.0) {
                g.row(i) *= f;
                c.row(i) *= f;
                changed = changed || std::abs(std::log2(f)) > 1.0;
            }
        }
        for (Index j = 0; j < k; ++j) {
            const double f = power2(g.col(j).cwiseAbs().sum() + c.col(j).cwiseAbs().sum());
            if (f != 1.0) {
                g.col(j) *= f;
                c.col(j) *= f;
                changed = changed || std::abs(std::log2(f)) > 1.0;
            }
        }
        if (!changed)
            break;
    }
    Eigen::GeneralizedEigenSolver<Eigen::MatrixXd> ges;
    ges.compute(g, c, false);
    if (ges.info() != Eigen::Success)
        return poles;
    const Eigen::VectorXcd alphas = ges.alphas();
    const Eigen::VectorXd betas = ges.betas();
    for (Index i = 0; i < alphas.size(); ++i) {
        const double b = betas(i);
        if (std::abs(b) > 1e-13 * std::abs(alphas(i)) && b != 0.0) {
            std::complex<double> s = -alphas(i) / b * w0;
            if (std::abs(s.imag()) < 1e-12 * std::abs(s))
                s = {s.real(), 0.0};
            poles.push_back(s);
        }
    }
    std::sort(poles.begin(), poles.end(), [](auto x, auto y) {
        return std::abs(x) != std::abs(y) ? std::abs(x) < std::abs(y) : x.imag() < y.imag();
    });
    return poles;
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
        if (!solver.factor(probes[p]))
            continue;
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
            if (!(size > 0) || !std::isfinite(size))
                continue;
            const double bound
                = solver.errorBound(te.output, te.input, x, residuals[which], &shares);
            const double relative = bound / size;
            const std::complex<double> got = fast[e * probes.size() + p];
            const double miss = std::abs(got - careful) / size;
            if (!(miss <= std::max(tolerance, 4.0 * relative)))
                missed = true;
            if (relative > worst.relative)
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
    const Index k = order();
    std::vector<double> y(times.size(), 0.0);
    if (k == 0) {
        std::fill(y.begin(), y.end(), m_dr(output, input));
        return y;
    }
    // Split Cr = U S V^T into its dynamic (rank r) and algebraic parts; eliminating the
    // algebraic part (index 1) leaves the proper state space  w' = A w + b u, y = c w + d u.
    const Eigen::VectorXd scale = rowScales(m_gr, m_cr);
    const Eigen::MatrixXd gs = scale.asDiagonal() * m_gr;
    const Eigen::MatrixXd cs = scale.asDiagonal() * m_cr;
    const Eigen::MatrixXd bs = scale.asDiagonal() * m_br;
    Eigen::JacobiSVD<Eigen::MatrixXd> svd(cs, Eigen::ComputeFullU | Eigen::ComputeFullV);
    const Eigen::VectorXd sv = svd.singularValues();
    Index rank = 0;
    while (rank < sv.size() && sv(rank) > 1e-10 * sv(0))
        ++rank;
    const Eigen::MatrixXd gh = svd.matrixU().transpose() * gs * svd.matrixV();
    const Eigen::VectorXd bh = svd.matrixU().transpose() * bs.col(input);
    const Eigen::RowVectorXd lh = m_lr.row(output) * svd.matrixV();
    const Index q = k - rank;
    Eigen::MatrixXd a = gh.topLeftCorner(rank, rank);
    Eigen::VectorXd b = bh.head(rank);
    Eigen::RowVectorXd c = lh.head(rank);
    double d = m_dr(output, input);
    if (q > 0) {
        const Eigen::MatrixXd g22 = gh.bottomRightCorner(q, q);
        Eigen::PartialPivLU<Eigen::MatrixXd> lu(g22);
        if (isSingular(g22))
            return Diagnostic{{},
                              {},
                              {},
                              "the step response is not defined: the circuit has "
                              "an impulsive (higher-index) mode"};
        const Eigen::VectorXd xb2 = lu.solve(bh.tail(q));
        d += lh.tail(q).dot(xb2);
        if (rank > 0) { // Eigen's solve must not see an empty right-hand side (UBSan)
            const Eigen::MatrixXd x21 = lu.solve(gh.bottomLeftCorner(q, rank));
            a -= gh.topRightCorner(rank, q) * x21;
            b -= gh.topRightCorner(rank, q) * xb2;
            c -= lh.tail(q) * x21;
        }
    }
    const Eigen::VectorXd sInv = sv.head(rank).cwiseInverse();
    a = -(sInv.asDiagonal() * a);
    b = sInv.asDiagonal() * b;
    if (rank == 0) {
        std::fill(y.begin(), y.end(), d);
        return y;
    }
    // Augmented exponential exp([[A, b], [0, 0]] dt) = [[Phi, Gamma], [0, 1]] propagates the
    // state over one step exactly for a constant input.
    Eigen::MatrixXd aug = Eigen::MatrixXd::Zero(rank + 1, rank + 1);
    Eigen::VectorXd w = Eigen::VectorXd::Zero(rank), next(rank);
    double last = 0.0;
    double lastDt = -1.0;
    Eigen::MatrixXd phi, gamma;
    for (std::size_t i = 0; i < times.size(); ++i) {
        const double dt = times[i] - last;
        if (dt > 0) {
            if (std::abs(dt - lastDt) > 1e-12 * dt) {
                aug.topLeftCorner(rank, rank) = a * dt;
                aug.topRightCorner(rank, 1) = b * dt;
                const Eigen::MatrixXd e = aug.exp();
                phi = e.topLeftCorner(rank, rank);
                gamma = e.topRightCorner(rank, 1);
                lastDt = dt;
            }
            // Plain loops: at rank 2..8 the library's product costs more in set-up (and a
            // temporary per step) than in arithmetic, over thousands of steps.
            // Column by column, so the inner loop runs over contiguous memory.
            const double *ph = phi.data(), *wv = w.data();
            double *nx = next.data();
            for (Index r = 0; r < rank; ++r)
                nx[r] = gamma(r);
            for (Index m = 0; m < rank; ++m) {
                const double wm = wv[m];
                const double *column = ph + m * rank;
                for (Index r = 0; r < rank; ++r)
                    nx[r] += column[r] * wm;
            }
            w.swap(next);
            last = times[i];
        }
        double out = d;
        for (Index m = 0; m < rank; ++m)
            out += c(m) * w(m);
        y[i] = out;
    }
    return y;
}

} // namespace loopsketch
