// Tolerance spread: the worst case and the Monte Carlo statistics over the parts'
// tolerances (their JSON and text are in spreadformat.cpp).
#include "loopsketch/analysis/spread.h"

#include "loopsketch/analysis/workbudget.h"
#include "loopsketch/base/value.h"
#include "loopsketch/design/designvalidation.h"

#include "detail/parallel.h"
#include "detail/seedsequence.h"

#include <algorithm>
#include <cmath>
#include <limits>
#include <numbers>
#include <random>
#include <utility>

namespace loopsketch {

namespace {

constexpr double kNaN = std::numeric_limits<double>::quiet_NaN();
constexpr double kSensitivityFraction = 0.01; // of each tolerance, beyond the vertex limit

Diagnostic error(std::string_view file, std::string part, std::string field, std::string message)
{
    return Diagnostic{std::string(file), std::move(part), std::move(field), std::move(message)};
}

Diagnostics checkOptions(const SpreadOptions &o, std::string_view file)
{
    Diagnostics d;
    if (o.trials < 1 || o.trials > kMaxTrials)
        d.push_back(error(file, {}, "trials",
                          "trials must be between 1 and " + std::to_string(kMaxTrials) + ", got "
                              + std::to_string(o.trials)));
    if (o.histogramBins < 1 || o.histogramBins > 1000)
        d.push_back(error(file, {}, "bins", "histogram bins must be between 1 and 1000"));
    if (o.pointsPerDecade < 1 || o.pointsPerDecade > 1000)
        d.push_back(
            error(file, {}, "points_per_decade", "points per decade must be between 1 and 1000"));
    return d;
}

/// A worker's own copy of the design, where each quantity lives in it, its trial systems.
struct Workspace
{
    Design design;
    std::vector<double *> targets;
    TrialCache cache;

    Workspace(const Design &d, const std::vector<SpreadQuantity> &quantities) : design(d)
    {
        for (const auto &q : quantities) {
            Value &v = design.findPart(q.part)->fields[q.field];
            targets.push_back(&(v.si = q.nominal)); // each starts at its nominal value
            cache.fields.push_back({q.part, q.field, 0.0, 0.0});
        }
    }

    /// Sets quantity k to nominal * factors[k] and evaluates.
    TrialMetrics evaluate(const std::vector<SpreadQuantity> &quantities,
                          const std::vector<double> &factors, const std::vector<double> &grid,
                          bool &failed)
    {
        for (std::size_t k = 0; k < quantities.size(); ++k)
            *targets[k] = quantities[k].nominal * factors[k];
        auto m = evaluateTrial(design, grid, cache);
        failed = !m.ok();
        return m ? *m : TrialMetrics{};
    }
};

/// Runs job(index, workspace) for index 0 .. count-1 on the options' worker threads, each
/// with its own Workspace; returns the number of jobs run (fewer when cancelled).
template<typename Job>
std::size_t runOnWorkspaces(const Design &design, const std::vector<SpreadQuantity> &quantities,
                            std::size_t count, const SpreadOptions &options,
                            const ProgressCallback &progress, const Job &job)
{
    const int workers = detail::workerCount(options.threads, count);
    std::vector<Workspace> spaces; // reserved: each holds pointers into its own design
    spaces.reserve(static_cast<std::size_t>(workers));
    for (int w = 0; w < workers; ++w)
        spaces.emplace_back(design, quantities);
    return detail::runParallel(
        count, workers, [&](std::size_t i, int w) { job(i, spaces[static_cast<std::size_t>(w)]); },
        progress, options.cancel);
}

/// The per-trial generator: a function of (seed, trial) only.
std::mt19937_64 trialGenerator(std::uint64_t seed, std::uint64_t trial)
{
    // The words of std::seed_seq{...} with these four values, computed without its cost.
    detail::SeedSequence seq(
        {static_cast<std::uint32_t>(seed), static_cast<std::uint32_t>(seed >> 32),
         static_cast<std::uint32_t>(trial), static_cast<std::uint32_t>(trial >> 32)});
    return std::mt19937_64(seq);
}

/// Uniform in [0, 1) from the top 53 bits, the same on every standard library.
double unit(std::mt19937_64 &g)
{
    return static_cast<double>(g() >> 11) * 0x1.0p-53;
}

/// Standard normal by Box-Muller (portable, unlike std::normal_distribution).
double standardNormal(std::mt19937_64 &g)
{
    const double u1 = 1.0 - unit(g); // (0, 1]
    const double u2 = unit(g);
    return std::sqrt(-2.0 * std::log(u1)) * std::cos(2.0 * std::numbers::pi * u2);
}

double drawFactor(std::mt19937_64 &g, SpreadDistribution distribution, double tolerance)
{
    if (distribution == SpreadDistribution::Uniform)
        return 1.0 + tolerance * (2.0 * unit(g) - 1.0);
    for (;;) {
        const double f = 1.0 + tolerance / 3.0 * standardNormal(g);
        if (f > 0)
            return f;
    }
}

double orNaN(const OptionalNumber &v)
{
    return v ? *v : kNaN;
}

struct Corner
{
    std::vector<int> signs;
    TrialMetrics metrics;
};

void updateRange(MetricRange &r, const OptionalNumber &v, const std::vector<int> &signs)
{
    if (!v)
        return;
    if (!r.min || *v < *r.min) {
        r.min = v;
        r.minCorner = signs;
    }
    if (!r.max || *v > *r.max) {
        r.max = v;
        r.maxCorner = signs;
    }
}

Result<std::vector<double>> nominalGrid(const Design &design, const SpreadOptions &options,
                                        std::string_view file)
{
    auto grid = coarseGrid(design.sweep, options.pointsPerDecade);
    if (grid.size() < 2)
        return error(file, {}, "sweep", "the sweep has no frequency range to evaluate");
    return grid;
}

/// What worst case and Monte Carlo both start from: a valid design and options, the
/// toleranced quantities, the coarse grid and the nominal metrics.
struct SpreadSetup
{
    std::vector<SpreadQuantity> quantities;
    std::vector<double> grid;
    TrialMetrics nominal;
};

Result<SpreadSetup> prepareSpread(const Design &design, const SpreadOptions &options,
                                  std::string_view file)
{
    if (auto problems = validateDesign(design, file); !problems.empty())
        return problems;
    if (auto problems = checkOptions(options, file); !problems.empty())
        return problems;
    auto quantities = spreadQuantities(design, options, file);
    if (!quantities)
        return quantities.diagnostics();
    auto grid = nominalGrid(design, options, file);
    if (!grid)
        return grid.diagnostics();
    if (auto over
        = checkRepeatedBudget(design, file, 1, trialOperations(circuitSize(design), grid->size()),
                              "the nominal trial", "", "parts");
        !over.empty())
        return over;
    auto nominal = evaluateTrial(design, *grid);
    if (!nominal)
        return nominal.diagnostics();
    return SpreadSetup{std::move(quantities).value(), std::move(grid).value(), *nominal};
}

} // namespace

std::string toString(SpreadDistribution distribution)
{
    return distribution == SpreadDistribution::Normal ? "normal" : "uniform";
}

std::optional<SpreadDistribution> parseSpreadDistribution(std::string_view text)
{
    if (text == "uniform")
        return SpreadDistribution::Uniform;
    if (text == "normal")
        return SpreadDistribution::Normal;
    return std::nullopt;
}

Result<std::vector<SpreadQuantity>>
spreadQuantities(const Design &design, const SpreadOptions &options, std::string_view file)
{
    std::vector<SpreadQuantity> out;
    Diagnostics problems;
    for (const Part &p : design.parts) {
        if (!p.tolerance)
            continue;
        const std::string field(p.primaryField());
        if (field.empty()) {
            problems.push_back(error(file, p.id, "tolerance",
                                     "a tolerance applies to a part's value, and a "
                                         + std::string(partSpec(p.type).typeName)
                                         + " has none to spread"));
            continue;
        }
        const double t = p.tolerance->si;
        if (!(t > 0 && t < 1)) {
            if (t != 0)
                problems.push_back(error(file, p.id, "tolerance",
                                         "tolerance must be between 0 % and 100 % (excluded)"));
            continue;
        }
        out.push_back({p.id, field, p.number(field), t});
    }
    // Tolerances on fields other than a part's primary value, named "<field>_tolerance".
    for (const Part &p : design.parts) {
        for (const char *field : {"r_parallel", "c_parallel", "gbw"}) {
            const std::string key = std::string(field) + "_tolerance";
            if (!p.has(key) || !findFieldSpec(p.type, key))
                continue;
            if (std::string_view(field) == "gbw" && options.gbwSpread)
                continue; // the options' spread wins
            const double t = p.number(key);
            if (t == 0)
                continue;
            if (!(t > 0 && t < 1)) {
                problems.push_back(
                    error(file, p.id, key, key + " must be between 0 % and 100 % (excluded)"));
                continue;
            }
            if (!p.has(field) || !std::isfinite(p.number(field))) {
                problems.push_back(error(
                    file, p.id, key, key + " needs a finite " + std::string(field) + " to spread"));
                continue;
            }
            out.push_back({p.id, field, p.number(field), t});
        }
    }
    const auto addGainBlock = [&](const std::optional<double> &spread, const char *field) {
        if (!spread)
            return;
        const Part *gb = design.uniquePart(PartType::GainBlock);
        if (!gb) {
            problems.push_back(error(file, {}, field,
                                     "a spread for the gain block's " + std::string(field)
                                         + " needs exactly one gain block"));
            return;
        }
        if (!(*spread > 0 && *spread < 1)) {
            problems.push_back(error(file, gb->id, field,
                                     "the " + std::string(field)
                                         + " spread must be between 0 % and 100 % (excluded)"));
            return;
        }
        if (!gb->has(field)) {
            problems.push_back(error(file, gb->id, field,
                                     "a " + std::string(field)
                                         + " spread needs the gain block to give its "
                                         + std::string(field)));
            return;
        }
        out.push_back({gb->id, field, gb->number(field), *spread});
    };
    addGainBlock(options.gainSpread, "gain");
    addGainBlock(options.gbwSpread, "gbw");
    if (!problems.empty())
        return problems;
    if (out.empty())
        return error(file, {}, "tolerance",
                     "nothing to spread: no part has a tolerance and no gain or gbw spread is "
                     "given");
    return out;
}

MetricStats metricStats(const std::vector<double> &values, int bins)
{
    MetricStats s;
    double sum = 0;
    for (double v : values) {
        if (!std::isfinite(v)) {
            ++s.missing;
            continue;
        }
        if (s.count == 0 || v < s.min)
            s.min = v;
        if (s.count == 0 || v > s.max)
            s.max = v;
        sum += v;
        ++s.count;
    }
    if (s.count == 0)
        return s;
    s.mean = sum / static_cast<double>(s.count);
    double squares = 0;
    for (double v : values)
        if (std::isfinite(v))
            squares += (v - s.mean) * (v - s.mean);
    s.std = s.count > 1 ? std::sqrt(squares / static_cast<double>(s.count - 1)) : 0.0;
    const std::size_t n = static_cast<std::size_t>(std::max(1, bins));
    s.histogram.assign(n, 0);
    s.histogramLow = s.min;
    s.histogramHigh = s.max;
    const double width = (s.max - s.min) / static_cast<double>(n);
    for (double v : values) {
        if (!std::isfinite(v))
            continue;
        std::size_t b = 0;
        if (width > 0)
            b = std::min(n - 1, static_cast<std::size_t>((v - s.min) / width));
        ++s.histogram[b];
    }
    return s;
}

namespace {

/// Runs `run(design, options, file, setup)` on the spread prepared for `design`; the reasons
/// when it cannot be prepared.
template<class Run>
auto onSpreadSetup(const Design &design, const SpreadOptions &options, std::string_view file,
                   Run run) -> decltype(run(design, options, file, std::declval<SpreadSetup>()))
{
    auto prepared = prepareSpread(design, options, file);
    if (!prepared)
        return prepared.diagnostics();
    return run(design, options, file, std::move(prepared).value());
}

Result<WorstCaseResult> worstCaseOf(const Design &design, const SpreadOptions &options,
                                    std::string_view file, SpreadSetup setup)
{
    const std::vector<double> &grid = setup.grid;

    WorstCaseResult r;
    r.quantities = std::move(setup.quantities);
    r.nominal = setup.nominal;
    const std::vector<SpreadQuantity> &q = r.quantities;
    const std::size_t n = q.size();
    r.exhaustive = n <= static_cast<std::size_t>(kMaxVertexQuantities);
    // every vertex, or two probes per quantity and a corner pair per metric
    const std::size_t evaluations = r.exhaustive ? std::size_t{1} << n : 2 * n + 10;
    if (auto over = checkRepeatedBudget(
            design, file, evaluations, trialOperations(circuitSize(design), grid.size()),
            "the worst case", "reduce the toleranced parts", "tolerance");
        !over.empty())
        return over;

    // The corners to evaluate: every vertex, or the sensitivity corners.
    std::vector<std::vector<int>> corners;
    if (r.exhaustive) {
        const std::size_t count = std::size_t{1} << n;
        corners.reserve(count);
        for (std::size_t c = 0; c < count; ++c) {
            std::vector<int> s(n);
            for (std::size_t k = 0; k < n; ++k)
                s[k] = (c >> k) & 1 ? 1 : -1;
            corners.push_back(std::move(s));
        }
    } else {
        std::vector<TrialMetrics> probes(2 * n);
        const std::size_t ran
            = runOnWorkspaces(design, q, 2 * n, options, {}, [&](std::size_t i, Workspace &space) {
                  std::vector<double> f(n, 1.0);
                  const std::size_t k = i / 2;
                  f[k] += (i % 2 ? 1.0 : -1.0) * kSensitivityFraction * q[k].tolerance;
                  bool failed = false;
                  probes[i] = space.evaluate(q, f, grid, failed);
              });
        if (ran < 2 * n) {
            r.cancelled = true;
            return r;
        }
        const auto signsOf = [&](auto metric) {
            std::vector<int> s(n);
            for (std::size_t k = 0; k < n; ++k) {
                const double slope
                    = orNaN(metric(probes[2 * k + 1])) - orNaN(metric(probes[2 * k]));
                s[k] = slope < 0 ? -1 : 1;
            }
            return s;
        };
        const auto negated = [](std::vector<int> s) {
            for (int &x : s)
                x = -x;
            return s;
        };
        std::vector<std::vector<int>> signs{
            signsOf([](const TrialMetrics &m) { return m.gain; }),
            signsOf([](const TrialMetrics &m) { return m.bandwidthHz; }),
            signsOf([](const TrialMetrics &m) { return m.phaseMarginDeg; })};
        if (hasNoiseSpec(design.specs)) {
            signs.push_back(signsOf([](const TrialMetrics &m) { return m.outputNoiseRms; }));
            signs.push_back(signsOf([](const TrialMetrics &m) { return m.snrDb; }));
        }
        for (const auto &s : signs) {
            corners.push_back(s);
            corners.push_back(negated(s));
        }
    }

    std::vector<TrialMetrics> results(corners.size());
    std::vector<char> ran(corners.size(), 0);
    runOnWorkspaces(design, q, corners.size(), options, options.progress,
                    [&](std::size_t c, Workspace &space) {
                        std::vector<double> f(n);
                        for (std::size_t k = 0; k < n; ++k)
                            f[k] = 1.0 + corners[c][k] * q[k].tolerance;
                        bool failed = false;
                        results[c] = space.evaluate(q, f, grid, failed);
                        ran[c] = 1;
                    });
    for (std::size_t c = 0; c < corners.size(); ++c) {
        if (!ran[c]) {
            r.cancelled = true;
            continue;
        }
        ++r.corners;
        updateRange(r.gain, results[c].gain, corners[c]);
        updateRange(r.bandwidthHz, results[c].bandwidthHz, corners[c]);
        updateRange(r.phaseMarginDeg, results[c].phaseMarginDeg, corners[c]);
        updateRange(r.outputNoiseRms, results[c].outputNoiseRms, corners[c]);
        updateRange(r.snrDb, results[c].snrDb, corners[c]);
        r.specsAtCorners &= checkSpecs(design.specs, design.sweep, results[c]);
    }
    return r;
}

Result<MonteCarloResult> monteCarloOf(const Design &design, const SpreadOptions &options,
                                      std::string_view file, SpreadSetup setup)
{
    const std::vector<double> &grid = setup.grid;
    if (auto over = checkRepeatedBudget(design, file, static_cast<std::size_t>(options.trials),
                                        trialOperations(circuitSize(design), grid.size()),
                                        "the Monte Carlo run", "reduce the trials", "trials");
        !over.empty())
        return over;

    MonteCarloResult r;
    r.quantities = std::move(setup.quantities);
    r.distribution = options.distribution;
    r.seed = options.seed;
    r.trials = static_cast<std::size_t>(options.trials);
    r.nominal = setup.nominal;
    const std::vector<SpreadQuantity> &q = r.quantities;

    std::vector<TrialMetrics> results(r.trials);
    std::vector<char> state(r.trials, 0); // 0 not run, 1 ok, 2 no solution
    runOnWorkspaces(design, q, r.trials, options, options.progress,
                    [&](std::size_t i, Workspace &space) {
                        std::mt19937_64 g = trialGenerator(options.seed, i);
                        thread_local std::vector<double> f;
                        f.resize(q.size());
                        for (std::size_t k = 0; k < q.size(); ++k)
                            f[k] = drawFactor(g, options.distribution, q[k].tolerance);
                        bool failed = false;
                        results[i] = space.evaluate(q, f, grid, failed);
                        state[i] = failed ? 2 : 1;
                    });

    // Statistics in trial order, so that they do not depend on the thread count.
    std::vector<double> gain, bandwidth, margin, noise, snr;
    gain.reserve(r.trials);
    bandwidth.reserve(r.trials);
    margin.reserve(r.trials);
    r.hasSpecs = hasSpecs(design.specs);
    r.hasNoise = hasNoiseSpec(design.specs);
    for (std::size_t i = 0; i < r.trials; ++i) {
        if (state[i] == 0)
            continue;
        ++r.completed;
        if (state[i] == 2) {
            ++r.failed;
            continue;
        }
        gain.push_back(orNaN(results[i].gain));
        bandwidth.push_back(orNaN(results[i].bandwidthHz));
        margin.push_back(orNaN(results[i].phaseMarginDeg));
        if (r.hasNoise) {
            noise.push_back(orNaN(results[i].outputNoiseRms));
            snr.push_back(orNaN(results[i].snrDb));
        }
        if (checkSpecs(design.specs, design.sweep, results[i]).all())
            ++r.passed;
    }
    r.cancelled = r.completed < r.trials;
    r.gain = metricStats(gain, options.histogramBins);
    r.bandwidthHz = metricStats(bandwidth, options.histogramBins);
    r.phaseMarginDeg = metricStats(margin, options.histogramBins);
    r.outputNoiseRms = metricStats(noise, options.histogramBins);
    r.snrDb = metricStats(snr, options.histogramBins);
    r.yield = r.completed ? static_cast<double>(r.passed) / static_cast<double>(r.completed) : 0.0;
    return r;
}

} // namespace

Result<WorstCaseResult> worstCase(const Design &design, const SpreadOptions &options,
                                  std::string_view file)
{
    return onSpreadSetup(design, options, file, worstCaseOf);
}

Result<MonteCarloResult> monteCarlo(const Design &design, const SpreadOptions &options,
                                    std::string_view file)
{
    return onSpreadSetup(design, options, file, monteCarloOf);
}

} // namespace loopsketch
