#include "analysis/gainwindowsearch.h"

#include "detail/parallel.h"

#include <algorithm>
#include <cmath>
#include <limits>
#include <tuple>

namespace loopsketch::detail {

namespace {

/// Lines shorter than this are computed whole: bisection would save nothing.
constexpr std::size_t kMinBisected = 8;

enum class Dependence {
    None, ///< the DC gain does not depend on the value (capacitor, inductor)
    Bilinear, ///< a resistance: (a + b R) / (c + d R)
    Unknown,
};

Dependence dependenceOf(const Design &design, const SearchedValue &v)
{
    const Part *p = design.findPart(v.part);
    if (!p)
        return Dependence::Unknown;
    if ((p->type == PartType::Capacitor || p->type == PartType::Inductor) && v.field == "value")
        return Dependence::None;
    if ((p->type == PartType::Resistor && v.field == "value")
        || (p->type == PartType::Load && v.field == "r"))
        return Dependence::Bilinear;
    return Dependence::Unknown;
}

/// How the combinations are walked: along `linePart` (bisected when `bisect`), one line per
/// combination of `acrossParts`, every line's gains shared by all combinations of
/// `sharedParts` (those the DC gain does not depend on).
struct Plan
{
    int linePart = -1;
    bool bisect = false;
    std::vector<int> acrossParts, sharedParts;
    std::vector<std::size_t> stride;
    std::size_t lines = 1, lineLength = 1;
};

Plan makePlan(const Design &design, const std::vector<SearchedValue> &parts, bool prune,
              const std::vector<bool> &shared)
{
    Plan plan;
    std::size_t s = 1;
    for (const auto &p : parts) {
        plan.stride.push_back(s);
        s *= p.values.size();
    }
    std::vector<int> dependent;
    for (int k = 0; k < static_cast<int>(parts.size()); ++k) {
        if (prune && shared[static_cast<std::size_t>(k)])
            plan.sharedParts.push_back(k);
        else
            dependent.push_back(k);
    }
    // Along the lines: the bilinear part with the most values, else the largest part.
    const auto size = [&](int k) {
        return parts[static_cast<std::size_t>(k)].values.size();
    };
    for (int k : dependent) {
        const bool bilinear = prune
            && dependenceOf(design, parts[static_cast<std::size_t>(k)]) == Dependence::Bilinear
            && size(k) >= kMinBisected;
        if (plan.linePart < 0 || (bilinear && !plan.bisect)
            || (bilinear == plan.bisect && size(k) > size(plan.linePart))) {
            plan.linePart = k;
            plan.bisect = bilinear;
        }
    }
    for (int k : dependent)
        if (k != plan.linePart) {
            plan.acrossParts.push_back(k);
            plan.lines *= size(k);
        }
    if (plan.linePart >= 0)
        plan.lineLength = size(plan.linePart);
    return plan;
}

std::size_t ceilLog2(std::size_t n)
{
    std::size_t bits = 0;
    while ((std::size_t{1} << bits) < n)
        ++bits;
    return bits;
}

/// The DC gains one line needs at least.
std::size_t lineEvaluations(const Plan &plan, std::size_t nearest)
{
    if (!plan.bisect)
        return plan.lineLength;
    return std::min(plan.lineLength, 3 + 2 * ceilLog2(plan.lineLength) + 2 * nearest);
}

struct Workspace
{
    Design design;
    std::vector<double *> targets;
};

/// One line's outcome: the points inside the window and the candidates for the nearest
/// outside it (index along the line, gain).
struct LineResult
{
    bool done = false;
    std::size_t base = 0; ///< combination index of the line's first point
    std::vector<std::pair<std::size_t, double>> inside, outside;
    std::size_t computed = 0, failed = 0;
};

class LineSearch
{
public:
    LineSearch(const GainWindowRequest &request, const Plan &plan, Workspace &space,
               LineResult &out, std::atomic<std::size_t> &computed, std::atomic<bool> &overCap)
        : m_request(request), m_plan(plan), m_space(space), m_out(out), m_computed(computed),
          m_overCap(overCap), m_gain(plan.lineLength, 0.0), m_state(plan.lineLength, 0)
    { }

    /// False when stopped by the cap.
    bool run()
    {
        const std::size_t n = m_plan.lineLength;
        if (m_plan.bisect && bisectLine())
            return true;
        if (m_overCap.load())
            return false;
        m_out.inside.clear();
        m_out.outside.clear();
        for (std::size_t i = 0; i < n; ++i) {
            if (!evaluate(i)) {
                if (m_overCap.load())
                    return false;
                continue;
            }
            if (inWindow(m_gain[i]))
                m_out.inside.emplace_back(i, m_gain[i]);
            else
                m_out.outside.emplace_back(i, m_gain[i]);
        }
        keepNearest();
        return true;
    }

private:
    bool inWindow(double g) const { return g >= m_request.lo && g <= m_request.hi; }

    /// The gain at point i of the line; false when the circuit has no solution there or the
    /// cap is reached.
    bool evaluate(std::size_t i)
    {
        if (m_state[i] == 0) {
            if (m_computed.fetch_add(1) >= m_request.maxEvaluations) {
                m_overCap.store(true);
                return false;
            }
            if (m_plan.linePart >= 0)
                *m_space.targets[static_cast<std::size_t>(m_plan.linePart)]
                    = m_request.parts[static_cast<std::size_t>(m_plan.linePart)].values[i];
            auto g = evaluateDcGain(m_space.design);
            ++m_out.computed;
            m_state[i] = g && std::isfinite(*g) ? 1 : 2;
            if (m_state[i] == 1)
                m_gain[i] = *g;
            else
                ++m_out.failed;
        }
        return m_state[i] == 1;
    }

    /// The window's ends by bisection; false (nothing decided) when the gain is not strictly
    /// monotone at the probes, a circuit has no solution, or a computed gain contradicts the
    /// order: the caller then computes the whole line.
    bool bisectLine()
    {
        const std::size_t n = m_plan.lineLength, mid = n / 2;
        if (!evaluate(0) || !evaluate(mid) || !evaluate(n - 1))
            return false;
        const double g0 = m_gain[0], gm = m_gain[mid], gn = m_gain[n - 1];
        const double dir = g0 < gm && gm < gn ? 1.0 : g0 > gm && gm > gn ? -1.0 : 0.0;
        if (dir == 0.0)
            return false;
        // key rises along the line; the window is key in [low, high]
        const double low = dir > 0 ? m_request.lo : -m_request.hi;
        const double high = dir > 0 ? m_request.hi : -m_request.lo;
        bool ok = true;
        const auto firstWhere = [&](auto above) {
            std::size_t a = 0, b = n;
            while (a < b && ok) {
                const std::size_t m = a + (b - a) / 2;
                if (!evaluate(m)) {
                    ok = false;
                    break;
                }
                if (above(dir * m_gain[m]))
                    b = m;
                else
                    a = m + 1;
            }
            return a;
        };
        const std::size_t begin = firstWhere([&](double key) { return key >= low; });
        const std::size_t end = firstWhere([&](double key) { return key > high; });
        if (!ok || end < begin)
            return false;
        for (std::size_t i = begin; i < end; ++i) {
            if (!evaluate(i) || !inWindow(m_gain[i]))
                return false;
            m_out.inside.emplace_back(i, m_gain[i]);
        }
        const std::size_t nearest = m_request.nearest;
        for (std::size_t k = 1; k <= nearest && k <= begin; ++k) {
            if (!evaluate(begin - k) || inWindow(m_gain[begin - k]))
                return false;
            m_out.outside.emplace_back(begin - k, m_gain[begin - k]);
        }
        for (std::size_t i = end; i < n && i < end + nearest; ++i) {
            if (!evaluate(i) || inWindow(m_gain[i]))
                return false;
            m_out.outside.emplace_back(i, m_gain[i]);
        }
        return true;
    }

    /// Keeps the line's `nearest` candidates closest to the target.
    void keepNearest()
    {
        auto &v = m_out.outside;
        const std::size_t keep = std::min(v.size(), m_request.nearest);
        const double t = m_request.target;
        std::partial_sort(v.begin(), v.begin() + static_cast<std::ptrdiff_t>(keep), v.end(),
                          [t](const auto &a, const auto &b) {
                              return std::make_tuple(std::abs(a.second - t), a.first)
                                  < std::make_tuple(std::abs(b.second - t), b.first);
                          });
        v.resize(keep);
    }

    const GainWindowRequest &m_request;
    const Plan &m_plan;
    Workspace &m_space;
    LineResult &m_out;
    std::atomic<std::size_t> &m_computed;
    std::atomic<bool> &m_overCap;
    std::vector<double> m_gain;
    std::vector<char> m_state; // 0 not computed, 1 gain, 2 no solution
};

/// Which parts the DC gain does not depend on: capacitors and inductors whose DC gain, with
/// every part at its first value, is the same number at both ends of their range. `computed`
/// counts the gains computed.
std::vector<bool> sharedParts(const GainWindowRequest &rq, std::size_t &computed)
{
    std::vector<bool> shared(rq.parts.size(), false);
    if (!rq.prune)
        return shared;
    Design d = *rq.design;
    std::vector<double *> targets;
    for (const auto &p : rq.parts) {
        double *t = &d.findPart(p.part)->fields[p.field].si;
        *t = p.values.front();
        targets.push_back(t);
    }
    bool haveFirst = false;
    double first = std::nan("");
    for (std::size_t k = 0; k < rq.parts.size(); ++k) {
        const auto &values = rq.parts[k].values;
        if (dependenceOf(*rq.design, rq.parts[k]) != Dependence::None || values.size() < 2)
            continue;
        if (!haveFirst) {
            const auto g = evaluateDcGain(d);
            ++computed;
            haveFirst = true;
            if (g)
                first = *g;
        }
        *targets[k] = values.back();
        const auto other = evaluateDcGain(d);
        ++computed;
        *targets[k] = values.front();
        // the same number, bit for bit: a gain that moved by a rounding is searched in full
        shared[k] = std::isfinite(first) && other && *other == first;
    }
    return shared;
}

} // namespace

std::size_t plannedEvaluations(const Design &design, const std::vector<SearchedValue> &parts,
                               std::size_t nearest, bool prune)
{
    std::vector<bool> shared(parts.size(), false);
    for (std::size_t k = 0; k < parts.size(); ++k)
        shared[k] = prune && dependenceOf(design, parts[k]) == Dependence::None;
    const Plan plan = makePlan(design, parts, prune, shared);
    const double total
        = static_cast<double>(plan.lines) * static_cast<double>(lineEvaluations(plan, nearest));
    return total >= static_cast<double>(std::numeric_limits<std::size_t>::max() / 2)
        ? std::numeric_limits<std::size_t>::max() / 2
        : plan.lines * lineEvaluations(plan, nearest);
}

GainWindowResult searchGainWindow(const GainWindowRequest &rq)
{
    GainWindowResult r;
    r.combinations = 1;
    for (const auto &p : rq.parts)
        r.combinations *= p.values.size();
    std::size_t setupComputed = 0;
    const std::vector<bool> shared = sharedParts(rq, setupComputed);
    const Plan plan = makePlan(*rq.design, rq.parts, rq.prune, shared);

    const int workers = workerCount(rq.threads, plan.lines);
    std::vector<Workspace> spaces; // reserved: each holds pointers into its own design
    spaces.reserve(static_cast<std::size_t>(workers));
    for (int w = 0; w < workers; ++w) {
        Workspace &s = spaces.emplace_back(Workspace{*rq.design, {}});
        for (const auto &p : rq.parts) {
            double *t = &s.design.findPart(p.part)->fields[p.field].si;
            *t = p.values.front(); // the shared parts stay at their first value
            s.targets.push_back(t);
        }
    }
    std::vector<LineResult> lines(plan.lines);
    std::atomic<std::size_t> computed{setupComputed};
    std::atomic<bool> overCap{false}, stop{false};
    runParallel(
        plan.lines, workers,
        [&](std::size_t l, int w) {
            if (rq.cancel && rq.cancel->load()) {
                stop.store(true);
                return;
            }
            Workspace &s = spaces[static_cast<std::size_t>(w)];
            LineResult &out = lines[l];
            std::size_t rest = l;
            for (int k : plan.acrossParts) {
                const auto &values = rq.parts[static_cast<std::size_t>(k)].values;
                const std::size_t i = rest % values.size();
                rest /= values.size();
                *s.targets[static_cast<std::size_t>(k)] = values[i];
                out.base += i * plan.stride[static_cast<std::size_t>(k)];
            }
            out.done = LineSearch(rq, plan, s, out, computed, overCap).run();
            if (overCap.load())
                stop.store(true);
        },
        rq.progress, &stop);

    // Every combination of the shared parts, as index offsets, ascending.
    std::vector<std::size_t> offsets{0};
    for (int k : plan.sharedParts) {
        std::vector<std::size_t> next;
        const std::size_t n = rq.parts[static_cast<std::size_t>(k)].values.size();
        for (std::size_t i = 0; i < n; ++i)
            for (std::size_t o : offsets)
                next.push_back(o + i * plan.stride[static_cast<std::size_t>(k)]);
        offsets = std::move(next);
    }
    std::sort(offsets.begin(), offsets.end());
    const std::size_t lineStride
        = plan.linePart >= 0 ? plan.stride[static_cast<std::size_t>(plan.linePart)] : 0;

    r.overCap = overCap.load();
    r.computed = setupComputed;
    std::vector<GainWindowHit> near;
    const std::size_t perCandidate = std::min(offsets.size(), rq.nearest);
    for (const LineResult &line : lines) {
        r.computed += line.computed;
        if (!line.done)
            continue;
        r.decided += plan.lineLength * offsets.size();
        r.failed += line.failed * offsets.size();
        for (const auto &[i, g] : line.inside)
            for (std::size_t o : offsets)
                r.inWindow.push_back({line.base + i * lineStride + o, g});
        for (const auto &[i, g] : line.outside)
            for (std::size_t j = 0; j < perCandidate; ++j)
                near.push_back({line.base + i * lineStride + offsets[j], g});
    }
    const std::size_t keep = std::min(near.size(), rq.nearest);
    const double t = rq.target;
    std::partial_sort(near.begin(), near.begin() + static_cast<std::ptrdiff_t>(keep), near.end(),
                      [t](const GainWindowHit &a, const GainWindowHit &b) {
                          const double ea = std::abs(a.gain - t), eb = std::abs(b.gain - t);
                          return ea != eb ? ea < eb : a.combination < b.combination;
                      });
    near.resize(keep);
    r.nearest = std::move(near);
    std::sort(r.inWindow.begin(), r.inWindow.end(),
              [](const GainWindowHit &a, const GainWindowHit &b) {
                  return a.combination < b.combination;
              });
    return r;
}

} // namespace loopsketch::detail
