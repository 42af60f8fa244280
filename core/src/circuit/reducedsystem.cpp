#include "loopsketch/circuit/reducedsystem.h"

#include "loopsketch/circuit/stepmodel.h"

#include "circuit/hessenbergpencil.h"
#include "circuit/pencilsweep.h"
#include "circuit/refinedsolve.h"
#include "circuit/rowscales.h"
#include "circuit/structuralzeros.h"

#include "loopsketch/base/value.h"

#include <Eigen/LU>

#include <algorithm>
#include <cmath>
#include <limits>
#include <numbers>
#include <optional>
#include <sstream>

namespace loopsketch {

namespace {

/// The warning of an entry whose careful solve cannot assure the tolerance: `quantity` at
/// s may be off by `relative` (of its value, or of the level below which it counts as
/// zero), naming the user's part and field with the largest share of the bound.
Diagnostic accuracyWarning(const DescriptorSystem &system, const std::string &quantity,
                           std::complex<double> s, double relative, bool belowFloor,
                           const std::vector<double> &shares)
{
    int top = -1;
    for (std::size_t o = 0; o < shares.size(); ++o)
        if (!system.origins[o].part.empty()
            && (top < 0 || shares[o] > shares[static_cast<std::size_t>(top)]))
            top = static_cast<int>(o);
    const double hz = std::abs(s) / (2.0 * std::numbers::pi);
    std::ostringstream bound;
    bound.precision(2);
    bound << relative;
    Diagnostic d;
    if (top >= 0) {
        d.part = system.origins[static_cast<std::size_t>(top)].part;
        d.field = system.origins[static_cast<std::size_t>(top)].field;
    }
    d.message = "accuracy cannot be assured: " + quantity + " at "
        + (hz == 0.0 ? std::string("DC") : formatEngineering(hz, 3, "Hz")) + " may be off by "
        + bound.str()
        + (belowFloor ? " of the level below which it counts as zero" : " of its value")
        + " (rounding in the circuit equations, largest share from this value)";
    return d;
}

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

Result<ReducedSystem> ReducedSystem::build(std::shared_ptr<const DescriptorSystem> shared,
                                           SolverPath path)
{
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
    if (path == SolverPath::Reduced
        && detail::HessenbergPencil::pays({r.m_gr, r.m_cr, r.m_br, r.m_lr, r.m_dr}))
        r.m_hessenberg = std::make_shared<const detail::HessenbergPencil>(
            detail::PencilView{r.m_gr, r.m_cr, r.m_br, r.m_lr, r.m_dr});
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
    std::uint8_t doubtful = 0;
    sweepReduced({&s, 1}, e, &h, SweepWidth::Automatic, checkedPoints({&doubtful, 1}));
    if (doubtful) {
        thread_local Eigen::MatrixXcd full;
        const int in[] = {input}, out[] = {output};
        full.resize(outputs(), inputs());
        solveFullInto(s, in, out, full);
        h = full(output, input);
    }
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
        solveFullInto(s, inputs, outputs, h);
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
    std::uint8_t doubtful = 0;
    sweepReduced({&s, 1}, entries, values.data(), SweepWidth::Automatic,
                 checkedPoints({&doubtful, 1}));
    if (doubtful) {
        solveFullInto(s, inputs, outputs, h);
        return;
    }
    for (std::size_t e = 0; e < entries.size(); ++e)
        h(entries[e].output, entries[e].input) = values[e];
}

std::span<std::uint8_t> ReducedSystem::checkedPoints(std::span<std::uint8_t> doubtful) const
{
    // Without the full system there is nothing better to solve a doubtful point with.
    return m_checkEveryPoint && m_system ? doubtful : std::span<std::uint8_t>();
}

void ReducedSystem::solveFullInto(std::complex<double> s, std::span<const int> inputs,
                                  std::span<const int> outputs, Eigen::MatrixXcd &h,
                                  bool assure) const
{
    using cd = std::complex<double>;
    const cd nan(std::numeric_limits<double>::quiet_NaN(),
                 std::numeric_limits<double>::quiet_NaN());
    detail::RefinedSolver solver(*m_system);
    const bool regular = solver.factor(s);
    std::vector<double> shares;
    for (int c : inputs) {
        Eigen::VectorXcd residual;
        const Eigen::VectorXcd x = regular ? solver.solve(c, &residual) : Eigen::VectorXcd();
        for (int o : outputs) {
            const cd v = regular ? solver.output(o, x) : nan;
            const bool finite = std::isfinite(v.real()) && std::isfinite(v.imag());
            h(o, c) = finite ? v : nan;
            if (!assure || !finite || structuralZero(o, c))
                continue;
            const double scale = std::max(std::abs(v), m_checkFloor);
            if (!(scale > 0))
                continue; // no relative accuracy to assure
            const double relative = solver.errorBound(o, c, x, residual, &shares) / scale;
            recordUnassured({relative, {o, c}, s, std::abs(v) < m_checkFloor, shares});
        }
    }
}

void ReducedSystem::sweepReduced(std::span<const std::complex<double>> s,
                                 std::span<const TransferEntry> entries, std::complex<double> *out,
                                 SweepWidth width, std::span<std::uint8_t> doubtful) const
{
    const detail::PencilView pencil{m_gr, m_cr, m_br, m_lr, m_dr};
    if (m_hessenberg)
        m_hessenberg->sweep(pencil, s, entries, out, width, doubtful, m_checkFloor);
    else
        detail::sweepPencil(pencil, s, entries, out, width, doubtful, m_checkFloor);
}

std::vector<std::complex<double>>
ReducedSystem::sweepEntries(std::span<const std::complex<double>> s,
                            std::span<const TransferEntry> entries, SweepWidth width) const
{
    std::vector<std::complex<double>> out(entries.size() * s.size());
    if (m_path == SolverPath::Reduced && !m_refined) {
        thread_local std::vector<std::uint8_t> doubtful;
        doubtful.assign(s.size(), 0);
        sweepReduced(s, entries, out.data(), width, checkedPoints(doubtful));
        resolveDoubtful(s, entries, doubtful, out);
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
    distinctPorts(entries, outputs, inputs);
    Eigen::MatrixXcd h;
    for (std::size_t i = 0; i < s.size(); ++i) {
        evaluateInto(s[i], inputs, outputs, h);
        for (std::size_t e = 0; e < entries.size(); ++e)
            out[e * s.size() + i] = h(entries[e].output, entries[e].input);
    }
    return out;
}

void ReducedSystem::resolveDoubtful(std::span<const std::complex<double>> s,
                                    std::span<const TransferEntry> entries,
                                    std::span<const std::uint8_t> doubtful,
                                    std::vector<std::complex<double>> &out) const
{
    if (std::find(doubtful.begin(), doubtful.end(), std::uint8_t(1)) == doubtful.end())
        return;
    std::vector<int> inputs, outputs;
    distinctPorts(entries, outputs, inputs);
    Eigen::MatrixXcd h(this->outputs(), this->inputs());
    for (std::size_t i = 0; i < s.size(); ++i) {
        if (!doubtful[i])
            continue;
        solveFullInto(s[i], inputs, outputs, h, true);
        for (std::size_t e = 0; e < entries.size(); ++e)
            out[e * s.size() + i] = h(entries[e].output, entries[e].input);
    }
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
        bool belowFloor = false; ///< measured against the entry's floor, not its size
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
            // Measured against what the careful path shows (evaluateInto()): an entry zero for
            // every value of the parts is an exact 0 there too, not its solve's rounding (which
            // handed a 400-resistor chain's 803 unknowns to the careful solve at every point).
            const double miss
                = std::abs(got - (structuralZero(te.output, te.input) ? 0.0 : careful));
            // A term that warns of nothing and meets the tolerance needs no bound (the bound's
            // transposed solve is the dearest part of the check).
            if (!entries[e].warns && miss <= tolerance * size)
                continue;
            const double bound
                = solver.errorBound(te.output, te.input, x, residuals[which], &shares);
            // Absolute, so that an exact zero (an output behind an ideal source) counts too:
            // rounding that the reduced pencil leaves in place of a zero is a miss as well.
            const double allowed = entries[e].strict ? 0.0 : 4.0 * bound;
            if (!(miss <= std::max(tolerance * size, allowed)))
                missed = true;
            const double scale = std::max(size, entries[e].floor);
            if (!(scale > 0))
                continue; // no relative accuracy to assure
            const double relative = bound / scale;
            if (entries[e].warns && relative > worst.relative)
                worst = {relative, e, size < entries[e].floor, probes[p], shares};
        }
    }
    check.worstRelativeError = worst.relative;
    if (missed && m_path == SolverPath::Reduced) {
        m_refined = true;
        check.refined = true;
    }
    m_probesWarned = worst.relative > tolerance;
    if (m_probesWarned)
        check.warnings.push_back(accuracyWarning(*m_system, entries[worst.entry].quantity, worst.s,
                                                 worst.relative, worst.belowFloor, worst.shares));
    return check;
}

void ReducedSystem::recordUnassured(UnassuredPoint point) const
{
    for (UnassuredPoint &p : m_unassured)
        if (p.entry.output == point.entry.output && p.entry.input == point.entry.input) {
            if (point.relative > p.relative)
                p = std::move(point);
            return;
        }
    m_unassured.push_back(std::move(point));
}

std::optional<Diagnostic>
ReducedSystem::unassuredPointWarning(std::span<const CheckedEntry> entries, double tolerance) const
{
    if (m_probesWarned)
        return std::nullopt; // the probes' warning names the quantity already
    const UnassuredPoint *worst = nullptr;
    const CheckedEntry *named = nullptr;
    for (const CheckedEntry &e : entries)
        for (const UnassuredPoint &p : m_unassured)
            if (e.warns && p.entry.output == e.entry.output && p.entry.input == e.entry.input
                && p.relative > tolerance && (!worst || p.relative > worst->relative)) {
                worst = &p;
                named = &e;
            }
    if (!worst)
        return std::nullopt;
    return accuracyWarning(*m_system, named->quantity, worst->s, worst->relative, worst->belowFloor,
                           worst->shares);
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
