#include "detail/bandintegral.h"

#include <algorithm>
#include <cmath>
#include <limits>

namespace loopsketch::detail {

namespace {

// Gauss-Kronrod 7/15 on [-1, 1]: the Kronrod abscissae (odd indices are the Gauss ones),
// their weights, and the 7-point Gauss weights (QUADPACK's qk15 table; exactness to degree
// 23 and the Gauss-Legendre nodes checked numerically when these were written).
constexpr double kNodes[8]
    = {0.991455371120812639206854697526329, 0.949107912342758524526189684047851,
       0.864864423359769072789712788640926, 0.741531185599394439863864773280788,
       0.586087235467691130294144845693013, 0.405845151377397166906606412076961,
       0.207784955007898467600689403773245, 0.0};
constexpr double kKronrod[8]
    = {0.022935322010529224963732008058970, 0.063092092629978553290700663189204,
       0.104790010322250183839876322541518, 0.140653259715525918745189590510238,
       0.169004726639267902826583426598550, 0.190350578064785409913256402421014,
       0.204432940075298892414161999234649, 0.209482141084727828012999174891714};
constexpr double kGauss[4]
    = {0.129484966168869693270611432679082, 0.279705391489276667901467771423780,
       0.381830050505118944950369775488975, 0.417959183673469387755102040816327};
constexpr std::size_t kPoints = 15;
// Enough for any smooth density over many decades; a cap keeps a pathological one from
// stalling a recomputation.
constexpr std::size_t kMaxEvaluations = 60000;

/// The 15 abscissae of a panel [a, b] in u = ln f, as u values.
void panelAbscissae(double a, double b, double *u)
{
    const double c = 0.5 * (a + b), h = 0.5 * (b - a);
    for (int k = 0; k < 7; ++k) {
        u[k] = c - h * kNodes[k];
        u[14 - k] = c + h * kNodes[k];
    }
    u[7] = c;
}

/// Weight of abscissa `index` (0..14) in the Kronrod and the Gauss sums.
double kronrodWeight(int index)
{
    return kKronrod[index <= 7 ? index : 14 - index];
}

double gaussWeight(int index)
{
    const int k = index <= 7 ? index : 14 - index; // 1, 3, 5, 7 are the Gauss nodes
    return k % 2 == 1 ? kGauss[k / 2] : 0.0;
}

struct Panel
{
    double a = 0, b = 0; ///< ln f
    std::vector<double> columns; ///< Kronrod integral per column
    double total = 0;
    double error = 0;
};

/// Frequencies evaluated together with a band's first panels, and their densities.
struct ExtraPoints
{
    std::vector<double> hz; ///< Hz
    std::vector<double> values; ///< column-major, as DensityColumns: values[c * hz.size() + i]
    bool ok = false; ///< the density was finite-valued there (no verdict on finiteness)
};

/// Evaluates the listed panels in one call of the density, and `extra`'s frequencies after
/// them in the same call (each frequency's values do not depend on the others evaluated
/// beside it, so they are those of a call of their own). False when it failed.
bool evaluatePanels(const DensityColumns &density, std::size_t columns,
                    std::vector<Panel *> &panels, BandIntegral &out, ExtraPoints *extra = nullptr)
{
    if (panels.empty())
        return true;
    const std::size_t n = panels.size() * kPoints;
    const std::size_t more = extra ? extra->hz.size() : 0;
    std::vector<double> hz(n + more), values;
    for (std::size_t p = 0; p < panels.size(); ++p) {
        double u[kPoints];
        panelAbscissae(panels[p]->a, panels[p]->b, u);
        for (std::size_t k = 0; k < kPoints; ++k)
            hz[p * kPoints + k] = std::exp(u[k]);
    }
    for (std::size_t i = 0; i < more; ++i)
        hz[n + i] = extra->hz[i];
    out.evaluations += n;
    if (!density(hz, values) || values.size() != columns * (n + more)) {
        if (more > 0) // which of them failed, and where: as if evaluated apart
            return evaluatePanels(density, columns, panels, out);
        out.ok = false;
        out.failedAtHz = hz.front();
        return false;
    }
    if (more > 0) {
        // The extra points' columns out, the panels' columns packed as for n points alone.
        extra->values.resize(columns * more);
        for (std::size_t c = 0; c < columns; ++c)
            for (std::size_t i = 0; i < more; ++i)
                extra->values[c * more + i] = values[c * (n + more) + n + i];
        for (std::size_t c = 1; c < columns; ++c)
            for (std::size_t i = 0; i < n; ++i)
                values[c * n + i] = values[c * (n + more) + i];
        values.resize(columns * n);
        extra->ok = true;
    }
    for (std::size_t p = 0; p < panels.size(); ++p) {
        Panel &panel = *panels[p];
        const double h = 0.5 * (panel.b - panel.a);
        panel.columns.assign(columns, 0.0);
        double kronrod = 0, gauss = 0;
        for (std::size_t k = 0; k < kPoints; ++k) {
            const std::size_t i = p * kPoints + k;
            // psd df = psd f du
            double sum = 0;
            for (std::size_t c = 0; c < columns; ++c) {
                const double v = values[c * n + i] * hz[i];
                if (!std::isfinite(v)) {
                    out.ok = false;
                    out.failedAtHz = hz[i];
                    return false;
                }
                panel.columns[c] += kronrodWeight(static_cast<int>(k)) * v * h;
                sum += v;
            }
            kronrod += kronrodWeight(static_cast<int>(k)) * sum * h;
            gauss += gaussWeight(static_cast<int>(k)) * sum * h;
        }
        panel.total = kronrod;
        panel.error = std::abs(kronrod - gauss);
    }
    return true;
}

/// integrateBand(), evaluating `extra`'s frequencies with the first panels (extra->ok says
/// whether they were).
/// `absTol` is an error allowed on top of relTol of the band's own integral.
BandIntegral integrateBandWith(const DensityColumns &density, std::size_t columns, double lowHz,
                               double highHz, double relTol, double absTol,
                               double initialPanelsPerDecade, ExtraPoints *extra)
{
    BandIntegral out;
    out.columns.assign(columns, 0.0);
    if (!(lowHz > 0) || !(highHz > lowHz) || !std::isfinite(highHz))
        return out;
    const double a = std::log(lowHz), b = std::log(highHz);
    const double decades = (b - a) / std::log(10.0);
    const auto initial = static_cast<std::size_t>(
        std::clamp(std::ceil(decades * initialPanelsPerDecade), 1.0, 1000.0));
    std::vector<Panel> panels(initial);
    std::vector<Panel *> pending;
    for (std::size_t i = 0; i < initial; ++i) {
        panels[i].a = a + (b - a) * static_cast<double>(i) / static_cast<double>(initial);
        panels[i].b = i + 1 == initial
            ? b
            : a + (b - a) * static_cast<double>(i + 1) / static_cast<double>(initial);
        pending.push_back(&panels[i]);
    }
    if (!evaluatePanels(density, columns, pending, out, extra))
        return out;
    for (;;) {
        double total = 0, error = 0;
        for (const Panel &p : panels) {
            total += p.total;
            error += p.error;
        }
        out.total = total;
        out.errorEstimate = error;
        const double allowed = relTol * std::abs(total) + absTol;
        if (error <= allowed || out.evaluations >= kMaxEvaluations)
            break;
        // Halve every panel whose error exceeds its share of the tolerance.
        const double share = allowed / static_cast<double>(panels.size());
        std::vector<std::size_t> split;
        for (std::size_t i = 0; i < panels.size(); ++i) {
            if (panels[i].error > share)
                split.push_back(i);
        }
        if (split.empty())
            break;
        std::vector<Panel> next;
        next.reserve(panels.size() + split.size());
        std::size_t s = 0;
        for (std::size_t i = 0; i < panels.size(); ++i) {
            if (s < split.size() && split[s] == i) {
                const double mid = 0.5 * (panels[i].a + panels[i].b);
                Panel left, right;
                left.a = panels[i].a;
                left.b = mid;
                right.a = mid;
                right.b = panels[i].b;
                left.error = right.error = std::numeric_limits<double>::infinity();
                next.push_back(std::move(left));
                next.push_back(std::move(right));
                ++s;
            } else {
                next.push_back(std::move(panels[i]));
            }
        }
        panels = std::move(next);
        pending.clear();
        for (Panel &p : panels) {
            if (std::isinf(p.error))
                pending.push_back(&p);
        }
        if (!evaluatePanels(density, columns, pending, out))
            return out;
    }
    for (const Panel &p : panels) {
        for (std::size_t c = 0; c < columns; ++c)
            out.columns[c] += p.columns[c];
    }
    return out;
}

} // namespace

BandIntegral integrateBand(const DensityColumns &density, std::size_t columns, double lowHz,
                           double highHz, double relTol, double initialPanelsPerDecade)
{
    return integrateBandWith(density, columns, lowHz, highHz, relTol, 0.0, initialPanelsPerDecade,
                             nullptr);
}

ConvergedBand integrateUntilConverged(const DensityColumns &density, std::size_t columns,
                                      double lowHz, double capHz, double notBeforeHz,
                                      double remainingShare, double relTol)
{
    ConvergedBand out;
    out.integral.columns.assign(columns, 0.0);
    constexpr double kStepDecades = 0.25;
    // The summed density at one frequency.
    const auto totalAt = [&](double f, double &psd) {
        std::vector<double> values;
        const double hz[] = {f};
        if (!density(hz, values) || values.size() != columns)
            return false;
        psd = 0;
        for (double v : values)
            psd += v;
        ++out.integral.evaluations;
        return std::isfinite(psd);
    };
    double lower = lowHz, psdLower = 0;
    if (!totalAt(lower, psdLower)) {
        out.ok = false;
        out.failedAtHz = lower;
        return out;
    }
    int heldAt = 0; // consecutive step ends where the tail estimate was small enough
    ExtraPoints extra;
    for (int i = 1;; ++i) {
        // Step ends from the start frequency on a fixed grid, so that the band's end does not
        // depend on anything but the start and the circuit.
        const double upper = lowHz * std::pow(10.0, kStepDecades * i);
        // Each step to relTol of its own integral, plus half of the error budget the steps
        // before left unused (relTol of what they gathered, less their estimated errors): the
        // whole stays within relTol of the total, and a step that adds nothing next to what
        // is gathered (a density fallen to rounding, which no subdivision makes smooth: fuzz
        // seeds 37, 52 and 3310 spent 60,000 evaluations on each such step) is not refined
        // beyond what the total needs. The density at its end is evaluated with its first
        // panel where that succeeds.
        const double unused = relTol * std::abs(out.integral.total) - out.integral.errorEstimate;
        extra.hz.assign(1, upper);
        extra.ok = false;
        BandIntegral piece
            = integrateBandWith(density, columns, lower, upper, relTol, std::max(0.5 * unused, 0.0),
                                1.0 / kStepDecades, &extra);
        out.integral.evaluations += piece.evaluations;
        if (!piece.ok) {
            out.ok = false;
            out.failedAtHz = piece.failedAtHz;
            return out;
        }
        for (std::size_t c = 0; c < columns; ++c)
            out.integral.columns[c] += piece.columns[c];
        out.integral.total += piece.total;
        out.integral.errorEstimate += piece.errorEstimate;
        double psdUpper = 0;
        const auto extraTotal = [&](double &psd) {
            psd = 0;
            for (double v : extra.values)
                psd += v;
            ++out.integral.evaluations;
            return std::isfinite(psd);
        };
        if (!(extra.ok ? extraTotal(psdUpper) : totalAt(upper, psdUpper))) {
            out.ok = false;
            out.failedAtHz = upper;
            return out;
        }
        out.highHz = upper;
        bool small = false;
        if (psdLower > 0 && psdUpper > 0 && upper >= notBeforeHz) {
            const double slope = -std::log(psdUpper / psdLower) / std::log(upper / lower);
            if (slope > 1.0) {
                const double tail = psdUpper * upper / (slope - 1.0);
                small = tail <= remainingShare * (out.integral.total + tail);
            }
        } else if (psdUpper == 0 && psdLower == 0 && upper >= notBeforeHz) {
            small = true; // nothing reaches the output up here
        }
        heldAt = small ? heldAt + 1 : 0;
        if (heldAt >= 2) {
            out.converged = true;
            return out;
        }
        if (upper >= capHz)
            return out;
        lower = upper;
        psdLower = psdUpper;
    }
}

} // namespace loopsketch::detail
