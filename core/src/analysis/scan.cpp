#include "loopsketch/analysis/scan.h"

#include "loopsketch/analysis/trialmetrics.h"
#include "loopsketch/analysis/workbudget.h"
#include "loopsketch/base/limits.h"
#include "loopsketch/circuit/restamp.h"
#include "loopsketch/design/designvalidation.h"
#include "loopsketch/feedback/loopmodel.h"

#include "analysis/analyzemodelwith.h"
#include "detail/parallel.h"

#include <algorithm>
#include <cmath>

namespace loopsketch {

namespace {

/// The numeric fields of a part type, for a message: "r, c".
std::string fieldList(PartType type)
{
    std::string list;
    for (const FieldSpec &f : partSpec(type).fields)
        list += (list.empty() ? "" : ", ") + std::string(f.name);
    return list;
}

} // namespace

Result<ScanTarget> parseScanTarget(std::string_view text, std::string_view option)
{
    const auto fail = [&](const std::string &why) {
        return Diagnostic{{},
                          {},
                          std::string(option),
                          "\"" + std::string(text) + "\" is not a scan target: " + why};
    };
    std::vector<std::string> pieces;
    std::size_t start = 0;
    for (;;) {
        const std::size_t colon = text.find(':', start);
        pieces.emplace_back(text.substr(start, colon - start));
        if (colon == std::string_view::npos)
            break;
        start = colon + 1;
    }
    if (pieces.size() != 1 && pieces.size() != 3)
        return fail("write ID, ID.FIELD or either with :FROM:TO (both ends of the range)");
    ScanTarget t;
    const std::string &name = pieces[0];
    const std::size_t dot = name.find('.');
    t.part = name.substr(0, dot);
    if (dot != std::string::npos) {
        t.field = name.substr(dot + 1);
        if (t.field.empty())
            return fail("no field after the dot");
    }
    if (t.part.empty())
        return fail("no part id");
    if (pieces.size() == 3) {
        if (pieces[1].empty() || pieces[2].empty())
            return fail("a range needs both ends, FROM:TO");
        t.from = pieces[1];
        t.to = pieces[2];
    }
    return t;
}

Result<ScanAxis> resolveScanAxis(const Design &design, const ScanTarget &target,
                                 std::optional<ESeries> series, std::string_view file)
{
    const std::string f(file);
    const Part *part = design.findPart(target.part);
    if (!part)
        return Diagnostic{f, target.part, {}, "no part named \"" + target.part + "\" to scan"};
    ScanAxis axis;
    axis.part = part->id;
    axis.field = target.field.empty() ? std::string(part->primaryField()) : target.field;
    if (axis.field.empty())
        return Diagnostic{f,
                          part->id,
                          {},
                          "a " + std::string(partSpec(part->type).typeName)
                              + " has no value to scan; name one of its fields (" + part->id
                              + ".FIELD): " + fieldList(part->type)};
    const FieldSpec *spec = findFieldSpec(part->type, axis.field);
    if (!spec)
        return Diagnostic{f, part->id, axis.field,
                          "a " + std::string(partSpec(part->type).typeName)
                              + " has no numeric field \"" + axis.field
                              + "\"; its fields are: " + fieldList(part->type)};
    axis.primary = axis.field == part->primaryField();
    axis.unit = std::string(spec->unit);
    axis.current = part->number(axis.field);
    axis.series = series ? *series : (axis.primary && part->series ? *part->series : ESeries::E24);
    const std::string rangeHint
        = " give a range: " + axis.part + (axis.primary ? "" : "." + axis.field) + ":FROM:TO";
    double from = 0, to = 0;
    if (target.from && target.to) {
        const auto read = [&](const std::string &text) -> Result<double> {
            auto v = parseValue(text, spec->kind, ValueRange::Any);
            if (!v) {
                Diagnostic d = v.diagnostics().front();
                d.file = f;
                d.part = part->id;
                d.field = axis.field;
                return d;
            }
            return *v;
        };
        auto a = read(*target.from), b = read(*target.to);
        if (!a)
            return a.diagnostics();
        if (!b)
            return b.diagnostics();
        from = *a;
        to = *b;
        if (!(from != 0 && to != 0 && (from > 0) == (to > 0)) || from == to)
            return Diagnostic{f, part->id, axis.field,
                              "the range " + *target.from + ":" + *target.to
                                  + " must have two different ends of one sign, neither 0"};
        if (spec->range != ValueRange::Any && from < 0)
            return Diagnostic{f, part->id, axis.field,
                              "the range " + *target.from + ":" + *target.to + " must be positive"};
    } else {
        if (!std::isfinite(axis.current) || axis.current == 0)
            return Diagnostic{f, part->id, axis.field,
                              std::string("the field is ")
                                  + (axis.current == 0 ? "0 or not given" : "infinite or not given")
                                  + ", so there is no range around it;" + rangeHint};
        from = axis.current / 10;
        to = axis.current * 10;
    }
    const double sign = from < 0 ? -1.0 : 1.0;
    const double lo = std::min(std::abs(from), std::abs(to)),
                 hi = std::max(std::abs(from), std::abs(to));
    axis.from = sign * lo;
    axis.to = sign * hi;
    for (double v : valuesInRange(axis.series, lo, hi))
        axis.values.push_back(sign * v);
    if (axis.values.empty())
        return Diagnostic{f, part->id, axis.field,
                          "no " + toString(axis.series) + " value lies between "
                              + formatEngineering(lo, 4, axis.unit) + " and "
                              + formatEngineering(hi, 4, axis.unit) + ";" + rangeHint};
    return axis;
}

ScanMetrics scanMetricsOf(const Analysis &a, const Design &design)
{
    ScanMetrics m;
    m.gain = a.exact.gain;
    m.bandwidthHz = a.bandwidthHz;
    m.phaseMarginDeg = a.margins.phaseMarginDeg;
    m.gainMarginDb = a.margins.gainMarginDb;
    m.peakingDb = a.peakingDb;
    m.overshootPct = a.step.overshootPct;
    m.settlingTimeS = a.step.settlingTimeS;
    if (a.noise)
        m.outputNoiseRms = a.noise->outputRms;
    m.zIn = a.exact.zIn;
    m.zOut = a.exact.zOut;
    m.stable = a.stable;
    m.specsPass = checkSpecs(design.specs, design.sweep, trialMetricsOf(a)).all();
    return m;
}

const std::vector<ScanMetric> &allScanMetrics()
{
    static const std::vector<ScanMetric> all{
        &ScanMetrics::gain,          &ScanMetrics::bandwidthHz,    &ScanMetrics::phaseMarginDeg,
        &ScanMetrics::gainMarginDb,  &ScanMetrics::peakingDb,      &ScanMetrics::overshootPct,
        &ScanMetrics::settlingTimeS, &ScanMetrics::outputNoiseRms, &ScanMetrics::zIn,
        &ScanMetrics::zOut};
    return all;
}

bool ScanResult::computed(ScanMetric metric) const
{
    return metrics.empty() || std::find(metrics.begin(), metrics.end(), metric) != metrics.end();
}

namespace {

/// The analysis options of a scan's rows: only what the metrics asked for (`asked`, empty for
/// all) and the design's specs read.
AnalysisOptions rowOptions(const Specs &specs, const std::vector<ScanMetric> &asked)
{
    const auto reads = [&](ScanMetric m) {
        return asked.empty() || std::find(asked.begin(), asked.end(), m) != asked.end();
    };
    AnalysisOptions o;
    o.sensitivity = false;
    o.allCurves = false;
    o.metricsOnly = true;
    o.noise = reads(&ScanMetrics::outputNoiseRms) || hasNoiseSpec(specs);
    o.reads.margins = reads(&ScanMetrics::phaseMarginDeg) || reads(&ScanMetrics::gainMarginDb)
        || specs.phaseMarginMinDeg.has_value();
    o.reads.gainMargins = reads(&ScanMetrics::gainMarginDb);
    o.reads.bandwidth = reads(&ScanMetrics::bandwidthHz) || specs.bandwidthMin.has_value();
    o.reads.peaking = reads(&ScanMetrics::peakingDb);
    o.reads.step = reads(&ScanMetrics::overshootPct) || reads(&ScanMetrics::settlingTimeS);
    o.reads.impedances = reads(&ScanMetrics::zIn) || reads(&ScanMetrics::zOut);
    return o;
}

/// What a worker keeps from row to row: its copy of the design, whose scanned fields each row
/// overwrites, and the loop and noise models of the rows before, re-stamped for the next
/// (LoopModel::rebuilt(), NoiseModel::rebuilt()), each with the values it holds (`from`).
struct Worker
{
    Design design;
    std::optional<LoopModel> model;
    std::vector<FieldChange> changes; // `from`: the values `model` holds
    std::optional<Result<detail::NoiseModel>> noise;
    std::vector<FieldChange> noiseChanges; // `from`: the values `noise` holds
};

/// The worker's noise model for its design as it is now: re-stamped from the last one when
/// that one was built, else built.
const Result<detail::NoiseModel> &noiseModelOf(Worker &w)
{
    for (std::size_t k = 0; k < w.changes.size(); ++k)
        w.noiseChanges[k].to = w.changes[k].to;
    w.noise = w.noise && *w.noise ? (**w.noise).rebuilt(w.design, w.noiseChanges)
                                  : detail::NoiseModel::build(w.design);
    for (FieldChange &c : w.noiseChanges)
        c.from = c.to;
    return *w.noise;
}

/// The metrics of one row: analyze() of the worker's design in steps, the loop model
/// re-stamped from the worker's last one where only restampable values changed (`changes`,
/// whose `from` is what the model holds; both follow the row on success), and likewise the
/// noise model when the row needs one. The checks analyze() makes come first, as there:
/// validation, then the work budget, which re-stamping cannot change (the circuit keeps its
/// elements).
ScanMetrics scanRow(Worker &w, const AnalysisOptions &options, const std::vector<ScanMetric> &asked,
                    std::string_view file)
{
    const Design &design = w.design;
    std::optional<LoopModel> &model = w.model;
    ScanMetrics m;
    const bool restamp = model && std::all_of(w.changes.begin(), w.changes.end(), [&](auto &c) {
                             return restampable(design, c);
                         });
    Diagnostics problems = validateDesign(design, file);
    if (problems.empty() && !restamp)
        problems = checkAnalysisBudget(design, file, options.sensitivity);
    if (problems.empty()) {
        auto built = restamp
            ? model->rebuilt(design, w.changes)
            : LoopModel::build(design, options.solver, detail::loopModelScope(options));
        if (built) {
            model = std::move(built).value();
            for (FieldChange &c : w.changes)
                c.from = c.to;
            m = scanMetricsOf(
                detail::analyzeModelWith(
                    *model, design, options, [&w]() -> const auto & { return noiseModelOf(w); }),
                design);
            // A metric not asked for is absent, even where the spec check computed it.
            if (!asked.empty())
                for (ScanMetric metric : allScanMetrics())
                    if (std::find(asked.begin(), asked.end(), metric) == asked.end())
                        (m.*metric).reset();
            return m;
        }
        problems = built.diagnostics();
    }
    m.problem = problems.front().message;
    return m;
}

} // namespace

Design withScanValue(Design design, const ScanAxis &axis, double value)
{
    if (Part *p = design.findPart(axis.part))
        p->fields[axis.field] = Value{value, formatEngineering(value, 3)};
    return design;
}

Result<ScanResult> runScan(const Design &design, const std::vector<ScanAxis> &axes,
                           const ScanOptions &options, std::string_view file)
{
    const std::string f(file);
    if (axes.empty() || axes.size() > 2)
        return Diagnostic{f,
                          {},
                          {},
                          "a scan takes one part (a scan) or two (a map), not "
                              + std::to_string(axes.size())};
    if (axes.size() == 2 && axes[0].part == axes[1].part && axes[0].field == axes[1].field)
        return Diagnostic{f, axes[0].part, axes[0].field,
                          "a map needs two different fields; " + axes[0].name()
                              + " is named twice"};
    for (const ScanAxis &axis : axes)
        if (!design.findPart(axis.part) || axis.values.empty())
            return Diagnostic{f, axis.part, axis.field, "nothing to scan for " + axis.name()};
    if (Diagnostics problems = validateDesign(design, file); !problems.empty())
        return problems;
    std::size_t count = 1;
    for (const ScanAxis &axis : axes)
        count *= axis.values.size();
    if (count > kMaxScanRows)
        return Diagnostic{f, axes.back().part, axes.back().field,
                          "the scan would analyse " + std::to_string(count) + " designs, more than "
                              + std::to_string(kMaxScanRows)
                              + "; narrow the ranges or choose a sparser series"};
    if (Diagnostics over
        = checkRepeatedBudget(design, file, count, analysisOperations(circuitSize(design), false),
                              "the scan", "narrow the ranges", "--part", false);
        !over.empty())
        return over;

    ScanResult result;
    result.axes = axes;
    result.gainUnit = gainUnit(design);
    result.rows.resize(count);
    const std::size_t inner = axes.size() == 2 ? axes[1].values.size() : 1;
    for (std::size_t i = 0; i < count; ++i) {
        result.rows[i].values.push_back(axes[0].values[i / inner]);
        if (axes.size() == 2)
            result.rows[i].values.push_back(axes[1].values[i % inner]);
    }
    const int workers = detail::workerCount(options.threads, count);
    std::vector<Worker> state(static_cast<std::size_t>(workers), Worker{design, {}, {}, {}, {}});
    for (Worker &w : state)
        for (const ScanAxis &axis : axes) {
            w.changes.push_back({axis.part, axis.field, 0.0, 0.0});
            w.noiseChanges.push_back(w.changes.back());
        }
    result.metrics = options.metrics;
    const AnalysisOptions analysisOptions = rowOptions(design.specs, options.metrics);
    const auto job = [&](std::size_t index, int worker) {
        ScanRow &row = result.rows[index];
        Worker &w = state[static_cast<std::size_t>(worker)];
        for (std::size_t k = 0; k < axes.size(); ++k) {
            w.design.findPart(axes[k].part)->fields[axes[k].field]
                = Value{row.values[k], formatEngineering(row.values[k], 3)};
            w.changes[k].to = row.values[k];
        }
        row.metrics = scanRow(w, analysisOptions, options.metrics, file);
        row.done = true;
    };
    result.completed
        = detail::runParallel(count, options.threads, job, options.progress, options.cancel);
    result.cancelled = result.completed < count;
    return result;
}

} // namespace loopsketch
