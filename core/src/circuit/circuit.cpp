#include "loopsketch/circuit/circuit.h"

#include <Eigen/LU>

#include <algorithm>
#include <cmath>
#include <limits>
#include <map>
#include <numbers>

namespace loopsketch {

namespace {

constexpr double kMinReciprocalCondition = 1e-14;
// In the per-frequency loops: only an exactly singular or overflowing solve is rejected; a
// badly scaled but regular matrix (1 GOhm beside a 1e6 gain) has a tiny unscaled rcond.
constexpr double kMinLoopReciprocalCondition = 1e-30;

bool isGround(const std::string &node)
{
    return node == "0";
}

/// Sparse linear combination of unknowns, used to chain the gain block's sections.
using Combination = std::vector<std::pair<int, double>>;

/// A node in the user's words. Internal nodes carry the part id before a colon ("U1:e",
/// "SIG:int", "RL:i"); copies of the feedback network a prefix ("A.in:"); a split input
/// node a "#in" suffix.
std::string nodeLabel(std::string name)
{
    for (const char *prefix : {"A.in:", "A.out:"})
        if (name.rfind(prefix, 0) == 0)
            name = name.substr(std::string_view(prefix).size());
    if (const auto hash = name.find('#'); hash != std::string::npos)
        name = name.substr(0, hash);
    const auto colon = name.find(':');
    if (colon == std::string::npos)
        return "node " + name;
    const std::string part = name.substr(0, colon), what = name.substr(colon + 1);
    if (what == "e")
        return "the output of " + part + " inside its r_out";
    if (what == "int")
        return "the inside of " + part + " behind its r_series";
    if (what == "i")
        return "the current-sense node of " + part;
    if (what == "en+")
        return "the input of " + part + " behind its noise source";
    return "a node inside " + part;
}

class Stamper
{
public:
    explicit Stamper(const Netlist &netlist) : m_netlist(netlist) { }

    Result<DescriptorSystem> run()
    {
        for (const auto &e : m_netlist.elements) {
            if (!std::isfinite(e.value))
                return fail(e, "value is not a finite number");
            node(e.a);
            node(e.b);
        }
        for (const auto &cs : m_netlist.controlled) {
            node(cs.inP);
            node(cs.inN);
            node(cs.out);
        }
        for (const auto &n : m_sys.nodes) {
            m_sys.unknowns.push_back("v(" + n + ")");
            m_sys.unknownOrigins.push_back({UnknownOrigin::Kind::Node, -1, 0});
        }
        // Branch currents and states are numbered after the nodes.
        for (const auto &e : m_netlist.elements) {
            if (hasBranchCurrent(e)) {
                m_branch[e.name] = static_cast<int>(m_sys.unknowns.size());
                m_sys.unknowns.push_back("i(" + e.name + ")");
                m_sys.unknownOrigins.push_back(
                    {UnknownOrigin::Kind::Current, origin(e.part, e.field), 0});
            }
        }
        for (std::size_t c = 0; c < m_netlist.controlled.size(); ++c) {
            const auto &cs = m_netlist.controlled[c];
            const int who = origin(cs.part, {});
            m_controlledBranch.push_back(static_cast<int>(m_sys.unknowns.size()));
            m_sys.unknowns.push_back("i(" + cs.out + ".source)");
            m_sys.unknownOrigins.push_back({UnknownOrigin::Kind::SourceCurrent, who, 0});
            std::vector<int> states;
            for (std::size_t p = 0; p < cs.polesHz.size(); ++p) {
                states.push_back(static_cast<int>(m_sys.unknowns.size()));
                m_sys.unknowns.push_back("x(" + cs.out + ".p" + std::to_string(p + 1) + ")");
                m_sys.unknownOrigins.push_back(
                    {UnknownOrigin::Kind::State, who, static_cast<int>(p) + 1});
            }
            if (gainBlockStates(m_netlist, cs) > cs.polesHz.size()) {
                states.push_back(static_cast<int>(m_sys.unknowns.size()));
                m_sys.unknowns.push_back("x(" + cs.out + ".z)");
                m_sys.unknownOrigins.push_back({UnknownOrigin::Kind::ZeroOutput, who, 0});
            }
            m_states.push_back(states);
        }
        const int n = static_cast<int>(m_sys.unknowns.size());
        m_sys.G = Eigen::MatrixXd::Zero(n, n);
        m_sys.C = Eigen::MatrixXd::Zero(n, n);
        m_sys.B = Eigen::MatrixXd::Zero(n, m_netlist.inputCount);

        for (const auto &e : m_netlist.elements) {
            m_origin = origin(e.part, e.field);
            if (auto bad = stampElement(e); !bad.empty())
                return fail(e, bad);
        }
        std::vector<Combination> returns;
        for (std::size_t c = 0; c < m_netlist.controlled.size(); ++c) {
            auto r = stampControlled(m_netlist.controlled[c], m_controlledBranch[c], m_states[c]);
            if (!r)
                return r.diagnostics();
            returns.push_back(*r);
        }
        m_sys.L = Eigen::MatrixXd::Zero(static_cast<Eigen::Index>(m_netlist.outputs.size()), n);
        for (std::size_t o = 0; o < m_netlist.outputs.size(); ++o) {
            const auto &out = m_netlist.outputs[o];
            const auto row = static_cast<Eigen::Index>(o);
            switch (out.kind) {
            case NetlistOutput::Kind::VoltageBetween:
                if (int i = index(out.a); i >= 0)
                    m_sys.L(row, i) += 1.0;
                if (int i = index(out.b); i >= 0)
                    m_sys.L(row, i) -= 1.0;
                break;
            case NetlistOutput::Kind::BranchCurrent: {
                auto it = m_branch.find(out.a);
                if (it == m_branch.end())
                    return fail(out.a, {},
                                "output asks for the current of an element without a "
                                "branch current");
                m_sys.L(row, it->second) = 1.0;
                break;
            }
            case NetlistOutput::Kind::ControlledReturn:
                if (returns.empty())
                    return fail(out.a, {}, "output asks for a controlled source that is not there");
                for (auto [i, coeff] : returns.front())
                    m_sys.L(row, i) += coeff;
                break;
            }
        }
        return std::move(m_sys);
    }

private:
    Diagnostics fail(const std::string &part, const std::string &field,
                     const std::string &message) const
    {
        return Diagnostics{Diagnostic{{}, part, field, message}};
    }

    /// An element's failure in the user's words: its part and field when it has them.
    Diagnostics fail(const NetlistElement &e, const std::string &message) const
    {
        return e.part.empty() ? fail(e.name, {}, message) : fail(e.part, e.field, message);
    }

    static bool hasBranchCurrent(const NetlistElement &e)
    {
        return e.kind == NetlistElement::Kind::Inductor
            || e.kind == NetlistElement::Kind::VoltageSource
            || (e.kind == NetlistElement::Kind::Resistor && std::isfinite(e.value) && e.value > 0
                && e.value < kImpedanceFormBelowOhms);
    }

    int origin(const std::string &part, const std::string &field)
    {
        for (std::size_t i = 0; i < m_sys.origins.size(); ++i)
            if (m_sys.origins[i].part == part && m_sys.origins[i].field == field)
                return static_cast<int>(i);
        m_sys.origins.push_back({part, field});
        return static_cast<int>(m_sys.origins.size()) - 1;
    }

    void node(const std::string &name)
    {
        if (isGround(name) || m_nodeIndex.count(name))
            return;
        m_nodeIndex[name] = static_cast<int>(m_sys.nodes.size());
        m_sys.nodes.push_back(name);
    }

    int index(const std::string &name) const
    {
        if (isGround(name))
            return -1;
        auto it = m_nodeIndex.find(name);
        return it == m_nodeIndex.end() ? -1 : it->second;
    }

    /// Adds v at (r, c); `power` as StampEntry::power.
    void add(Eigen::MatrixXd &m, int r, int c, double v, int power = 0)
    {
        if (r < 0 || c < 0)
            return;
        m(r, c) += v;
        if (v != 0.0 && (&m == &m_sys.G || &m == &m_sys.C))
            m_sys.stamps.push_back({m_origin, r, c, v, &m == &m_sys.C, power});
    }

    void stampAdmittance(Eigen::MatrixXd &m, int a, int b, double y, int power)
    {
        add(m, a, a, y, power);
        add(m, b, b, y, power);
        add(m, a, b, -y, power);
        add(m, b, a, -y, power);
    }

    std::string stampElement(const NetlistElement &e)
    {
        const int a = index(e.a);
        const int b = index(e.b);
        switch (e.kind) {
        case NetlistElement::Kind::Resistor:
            if (!(e.value > 0))
                return "resistance must be greater than zero";
            if (auto it = m_branch.find(e.name); it != m_branch.end()) {
                const int j = it->second;
                add(m_sys.G, a, j, 1.0);
                add(m_sys.G, b, j, -1.0);
                add(m_sys.G, j, a, 1.0);
                add(m_sys.G, j, b, -1.0);
                add(m_sys.G, j, j, -e.value, 1);
            } else {
                stampAdmittance(m_sys.G, a, b, 1.0 / e.value, -1);
            }
            break;
        case NetlistElement::Kind::Capacitor:
            if (e.value < 0)
                return "capacitance must not be negative";
            stampAdmittance(m_sys.C, a, b, e.value, 1);
            break;
        case NetlistElement::Kind::Inductor:
        case NetlistElement::Kind::VoltageSource: {
            const int j = m_branch.at(e.name);
            add(m_sys.G, a, j, 1.0);
            add(m_sys.G, b, j, -1.0);
            add(m_sys.G, j, a, 1.0);
            add(m_sys.G, j, b, -1.0);
            if (e.kind == NetlistElement::Kind::Inductor) {
                if (!(e.value > 0))
                    return "inductance must be greater than zero";
                add(m_sys.C, j, j, -e.value, 1);
            } else if (e.input >= 0) {
                m_sys.B(j, e.input) = 1.0;
            }
            break;
        }
        case NetlistElement::Kind::CurrentSource:
            if (e.input >= 0) {
                add(m_sys.B, a, e.input, 1.0);
                add(m_sys.B, b, e.input, -1.0);
            }
            break;
        }
        return {};
    }

    /// The gain block's H(s) = prod(1 + s/wz) / prod(1 + s/wp) as a chain of first-order
    /// sections, one state per pole, each of unit gain at DC:
    ///     w_k + w_k'/wp_k = w_{k-1} + w_{k-1}'/wz      (w_0 = vd)
    /// where the zero term is present only for a section's input that carries a zero. A
    /// zero is thus the derivative of the signal before it, an entry of C, rather than the
    /// difference (wp/wz) u + (1 - wp/wz) w of a section's input and state: that difference
    /// cancels to about wz/wp of its terms below the pole and, chained, loses all accuracy
    /// when zeros lie far below the poles. Here every entry is 1, 1/wp or 1/wz and no sum
    /// cancels, so each section is as accurate as its own factor (1 + s/wz)/(1 + s/wp).
    /// Zero k follows pole k (the user's order), so with fewer zeros than poles the chain
    /// ends on a state and the output needs no derivative. With as many zeros as poles one
    /// zero must sit at an end: in front of the first pole (a derivative of the input
    /// nodes) when those nodes are reactive already, so the reduced order does not grow;
    /// otherwise behind the last one, in one more unknown y = w_n + w_n'/wz_n (see
    /// gainBlockStates()). Returns the combination gain * H(s) * vd.
    Result<Combination> stampControlled(const ControlledSourceElement &cs, int branch,
                                        const std::vector<int> &states)
    {
        const std::string who = cs.part.empty() ? cs.out : cs.part;
        if (cs.zerosHz.size() > cs.polesHz.size())
            return fail(who, "zeros_hz",
                        "more zeros than poles (an improper gain) is not supported");
        if (!std::isfinite(cs.gain))
            return fail(who, "gain", "gain is not a finite number");
        const int topology = origin(cs.part, {});
        const int gainOrigin = origin(cs.part, "gain");
        const int poleOrigin = origin(cs.part, "poles_hz");
        const int zeroOrigin = origin(cs.part, "zeros_hz");
        std::vector<double> wp, wz;
        for (double f : cs.polesHz) {
            wp.push_back(2.0 * std::numbers::pi * f);
            if (!(wp.back() > 0) || !std::isfinite(wp.back()))
                return fail(who, "poles_hz", "pole frequencies must be positive and finite");
        }
        for (double f : cs.zerosHz) {
            wz.push_back(2.0 * std::numbers::pi * f);
            if (!(wz.back() > 0) || !std::isfinite(wz.back()))
                return fail(who, "zeros_hz", "zero frequencies must be positive and finite");
        }
        const std::size_t n = wp.size();
        const bool zerosInFront
            = !wz.empty() && wz.size() == n && gainBlockStates(m_netlist, cs) == n;
        // zeroIn[k]: the zero (rad/s) on the input of section k, 0 for none; zeroIn[n]: on
        // the output of the chain.
        std::vector<double> zeroIn(n + 1, 0.0);
        for (std::size_t z = 0; z < wz.size(); ++z)
            zeroIn[zerosInFront ? z : z + 1] = wz[z];

        Combination u; // the input of the next section: vd, then a state
        if (int p = index(cs.inP); p >= 0)
            u.push_back({p, 1.0});
        if (int q = index(cs.inN); q >= 0)
            u.push_back({q, -1.0});
        const auto link = [&](int row, std::size_t k) {
            m_origin = k == 0 ? topology : poleOrigin;
            for (auto [i, coeff] : u)
                add(m_sys.G, row, i, -coeff);
            if (zeroIn[k] > 0) {
                m_origin = zeroOrigin;
                for (auto [i, coeff] : u)
                    add(m_sys.C, row, i, -coeff / zeroIn[k], -1);
            }
        };
        for (std::size_t k = 0; k < n; ++k) {
            const int w = states[k];
            m_origin = poleOrigin;
            add(m_sys.G, w, w, 1.0);
            add(m_sys.C, w, w, 1.0 / wp[k], -1);
            link(w, k);
            u = {{w, 1.0}};
        }
        if (zeroIn[n] > 0) { // y = w_n + w_n'/wz_n
            const int y = states.back();
            m_origin = zeroOrigin;
            add(m_sys.G, y, y, 1.0);
            link(y, n);
            u = {{y, 1.0}};
        }
        Combination ret;
        for (auto [i, coeff] : u)
            ret.push_back({i, cs.gain * coeff});

        const int out = index(cs.out);
        m_origin = topology;
        add(m_sys.G, out, branch, 1.0);
        add(m_sys.G, branch, out, 1.0);
        if (cs.mode == ControlledSourceElement::Mode::Normal) {
            m_origin = gainOrigin;
            for (auto [i, coeff] : ret)
                add(m_sys.G, branch, i, -coeff, 1);
        } else if (cs.testInput >= 0) {
            m_sys.B(branch, cs.testInput) = 1.0;
        }
        return ret;
    }

    const Netlist &m_netlist;
    DescriptorSystem m_sys;
    std::map<std::string, int> m_nodeIndex;
    std::map<std::string, int> m_branch;
    std::vector<int> m_controlledBranch;
    std::vector<std::vector<int>> m_states;
    int m_origin = 0; ///< origin of the entries being stamped
};

} // namespace

std::size_t gainBlockStates(const Netlist &netlist, const ControlledSourceElement &cs)
{
    const auto reactive = [&netlist](const std::string &node) {
        if (isGround(node))
            return true;
        for (const auto &e : netlist.elements)
            if (e.kind == NetlistElement::Kind::Capacitor && e.value != 0.0 && e.a != e.b
                && (e.a == node || e.b == node))
                return true;
        return false;
    };
    const bool zeroOutput = !cs.zerosHz.empty() && cs.zerosHz.size() == cs.polesHz.size()
        && !(reactive(cs.inP) && reactive(cs.inN));
    return cs.polesHz.size() + (zeroOutput ? 1 : 0);
}

Result<DescriptorSystem> assembleSystem(const Netlist &netlist)
{
    return Stamper(netlist).run();
}

namespace {

/// Every row, then every column, divided by its largest magnitude (rows and columns of
/// zeros kept).
template<typename Matrix> Matrix equilibratedCopy(Matrix m)
{
    for (Eigen::Index i = 0; i < m.rows(); ++i) {
        const double r = m.row(i).cwiseAbs().maxCoeff();
        if (r > 0)
            m.row(i) /= r;
    }
    for (Eigen::Index j = 0; j < m.cols(); ++j) {
        const double c = m.col(j).cwiseAbs().maxCoeff();
        if (c > 0)
            m.col(j) /= c;
    }
    return m;
}

/// isSingular() in the matrix's own arithmetic (real is several times cheaper).
template<typename Matrix> bool isSingularMatrix(const Matrix &a)
{
    if (a.rows() == 0)
        return false;
    Eigen::PartialPivLU<Matrix> lu(equilibratedCopy<Matrix>(a));
    // Eigen's estimate reads an exactly zero pivot as well conditioned (rcond 1 for
    // diag(1, 0)): look at the pivots first.
    const auto pivots = lu.matrixLU().diagonal().cwiseAbs();
    if (!(pivots.minCoeff() > 0) || !pivots.allFinite())
        return true;
    return !(lu.rcond() > kMinReciprocalCondition);
}

} // namespace

Eigen::MatrixXcd equilibrated(const Eigen::MatrixXcd &a)
{
    return equilibratedCopy<Eigen::MatrixXcd>(a);
}

bool isSingular(const Eigen::MatrixXcd &a)
{
    return isSingularMatrix(a);
}

bool isSingular(const Eigen::MatrixXd &a)
{
    return isSingularMatrix(a);
}

std::string unknownLabel(const DescriptorSystem &system, std::size_t index)
{
    if (index >= system.unknownOrigins.size())
        return system.unknowns.at(index);
    const UnknownOrigin &u = system.unknownOrigins[index];
    if (u.kind == UnknownOrigin::Kind::Node)
        return index < system.nodes.size() ? nodeLabel(system.nodes[index])
                                           : system.unknowns[index];
    const StampOrigin *o
        = u.origin >= 0 ? &system.origins[static_cast<std::size_t>(u.origin)] : nullptr;
    if (!o || o->part.empty()) // an element of the analysis itself: its internal name
        return system.unknowns[index];
    switch (u.kind) {
    case UnknownOrigin::Kind::Current: {
        const bool own = !o->field.empty() && o->field != "value" && o->field != "r";
        return "the current of " + o->part + (own ? " (" + o->field + ")" : std::string());
    }
    case UnknownOrigin::Kind::SourceCurrent:
        return "the output current of " + o->part;
    case UnknownOrigin::Kind::State:
        return "pole " + std::to_string(u.pole) + " of " + o->part;
    case UnknownOrigin::Kind::ZeroOutput:
        return "the zeros of " + o->part;
    default:
        return system.unknowns[index];
    }
}

Diagnostic singularityDiagnostic(const DescriptorSystem &system, std::complex<double> s)
{
    const Eigen::MatrixXcd a = equilibrated(system.G.cast<std::complex<double>>() + s * system.C);
    Eigen::FullPivLU<Eigen::MatrixXcd> lu(a);
    lu.setThreshold(1e-10);
    if (lu.isInvertible())
        return {};
    const Eigen::MatrixXcd kernel = lu.kernel();
    std::vector<bool> involved(static_cast<std::size_t>(kernel.rows()), false);
    std::string text = "the circuit has no unique solution";
    if (s == std::complex<double>(0.0))
        text += " at DC";
    text += ": ";
    bool first = true;
    for (Eigen::Index i = 0; i < kernel.rows(); ++i) {
        if (kernel.row(i).cwiseAbs().maxCoeff() > 1e-6 * kernel.cwiseAbs().maxCoeff()) {
            involved[static_cast<std::size_t>(i)] = true;
            const auto k = static_cast<std::size_t>(i);
            text += (first ? "" : ", ") + unknownLabel(system, k);
            first = false;
        }
    }
    text += " not determined (a floating node or subnetwork, a loop of voltage sources, or an "
            "inductor loop)";
    // The user's parts whose entries touch what is not determined.
    std::vector<std::string> parts;
    for (const StampEntry &e : system.stamps) {
        const std::string &part = system.origins[static_cast<std::size_t>(e.origin)].part;
        if (part.empty() || !involved[static_cast<std::size_t>(e.col)])
            continue;
        if (std::find(parts.begin(), parts.end(), part) == parts.end())
            parts.push_back(part);
    }
    if (!parts.empty()) {
        text += "; parts involved: ";
        for (std::size_t i = 0; i < parts.size(); ++i)
            text += (i ? ", " : "") + parts[i];
    }
    Diagnostic d{{}, {}, {}, text};
    if (parts.size() == 1)
        d.part = parts.front();
    return d;
}

std::string describeSingularity(const DescriptorSystem &system, std::complex<double> s)
{
    return singularityDiagnostic(system, s).message;
}

Result<std::vector<Eigen::MatrixXcd>> solveDense(const DescriptorSystem &system,
                                                 const std::vector<double> &frequenciesHz)
{
    const int n = system.size();
    Eigen::MatrixXcd a(n, n);
    Eigen::PartialPivLU<Eigen::MatrixXcd> lu(n);
    const Eigen::MatrixXcd b = system.B.cast<std::complex<double>>();
    std::vector<Eigen::MatrixXcd> out;
    out.reserve(frequenciesHz.size());
    for (double f : frequenciesHz) {
        const std::complex<double> s(0.0, 2.0 * std::numbers::pi * f);
        a = system.G.cast<std::complex<double>>() + s * system.C;
        lu.compute(a);
        const Eigen::MatrixXcd x = lu.solve(b);
        if (!(lu.rcond() > kMinLoopReciprocalCondition) || !x.allFinite()) {
            std::string why = describeSingularity(system, s);
            if (why.empty())
                why = "the circuit equations are too ill-conditioned to solve";
            return Diagnostic{{}, {}, {}, why};
        }
        out.push_back(system.L * x);
    }
    return out;
}

} // namespace loopsketch
