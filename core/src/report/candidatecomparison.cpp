#include "loopsketch/report/candidatecomparison.h"

#include "loopsketch/analysis/trialmetrics.h"
#include "loopsketch/base/value.h"
#include "loopsketch/report/noisenames.h"

#include <algorithm>
#include <cmath>
#include <cstdio>

namespace loopsketch {

namespace {

const std::string kNone = "—";

std::string fixed(double v, int decimals, std::string_view unit)
{
    if (!std::isfinite(v))
        return kNone;
    const double shown = std::abs(v) < 0.5 * std::pow(10.0, -decimals) ? 0.0 : v;
    char buffer[64];
    std::snprintf(buffer, sizeof buffer, "%.*f", decimals, shown);
    return std::string(buffer) + std::string(unit);
}

std::string signedPct(double v)
{
    if (!std::isfinite(v))
        return kNone;
    if (std::abs(v) < 0.005)
        return "0.00 %";
    return (v > 0 ? "+" : "") + fixed(v, 2, " %");
}

std::string degrees(double v)
{
    if (std::abs(v) < 1.0)
        return fixed(v, 2, "°");
    return formatEngineering(v, 3) + "°";
}

bool finite(const OptionalNumber &v)
{
    return v && std::isfinite(*v);
}

/// The gain the specs aim at: the window's centre, or its one bound.
std::optional<double> targetGain(const Specs &s)
{
    if (s.gainMin && s.gainMax)
        return 0.5 * (s.gainMin->si + s.gainMax->si);
    if (s.gainMin)
        return s.gainMin->si;
    if (s.gainMax)
        return s.gainMax->si;
    return std::nullopt;
}

std::string partValueText(const Part &part, double si)
{
    const FieldSpec *spec = findFieldSpec(part.type, part.primaryField());
    return formatValue(si, spec ? spec->kind : ValueKind::Plain, 3);
}

/// Builds the cells of one column, row by row, in the order the rows were laid out.
class ColumnFiller
{
public:
    ColumnFiller(const Design &d, const ComparisonInput &in, std::vector<ComparisonRow> &rows,
                 std::size_t column)
        : m_d(d), m_in(in), m_a(in.analysis), m_rows(rows), m_column(column),
          m_unit(in.analysis ? in.analysis->gainUnit : std::string())
    { }

    void fill()
    {
        for (ComparisonRow &row : m_rows) {
            ComparisonCell &cell = row.cells[m_column];
            if (row.kind == ComparisonRowKind::PartValue) {
                partValue(row.title, cell);
                continue;
            }
            if (!m_a) {
                cell.note = m_in.problem;
                continue;
            }
            metric(row, cell);
        }
    }

private:
    void partValue(const std::string &id, ComparisonCell &cell)
    {
        const Part *part = m_d.findPart(id);
        if (!part)
            return;
        const auto own = m_in.candidate ? m_in.candidate->values.find(id)
                                        : std::map<std::string, Value>::const_iterator();
        if (m_in.candidate && own != m_in.candidate->values.end()) {
            cell.text = partValueText(*part, own->second.si);
            cell.note = id + " = " + cell.text + " in this candidate";
            return;
        }
        cell.text = partValueText(*part, part->number(part->primaryField()));
        cell.inherited = m_in.candidate != nullptr;
        cell.note = m_in.candidate ? "not set by this candidate: the design's own value"
                                   : id + " in the design now";
    }

    void metric(const ComparisonRow &row, ComparisonCell &cell)
    {
        const Analysis &a = *m_a;
        switch (row.kind) {
        case ComparisonRowKind::PartValue:
            break;
        case ComparisonRowKind::Gain:
            return gain(cell);
        case ComparisonRowKind::GainError:
            return gainError(cell);
        case ComparisonRowKind::Bandwidth:
            if (!finite(a.bandwidthHz))
                return missing(cell,
                               "no −3 dB point inside the sweep (up to "
                                   + formatEngineering(m_d.sweep.stop.si, 3, "Hz") + ")");
            return set(cell, formatEngineering(*a.bandwidthHz, 3, "Hz"),
                       "closed-loop −3 dB frequency (exact)", *a.bandwidthHz);
        case ComparisonRowKind::PhaseMargin:
            if (!finite(a.margins.phaseMarginDeg))
                return missing(cell, "the loop gain does not cross 0 dB inside the sweep");
            return set(cell, degrees(*a.margins.phaseMarginDeg),
                       "at the loop crossover "
                           + (a.margins.crossoverHz
                                  ? formatEngineering(*a.margins.crossoverHz, 3, "Hz")
                                  : kNone),
                       *a.margins.phaseMarginDeg);
        case ComparisonRowKind::Peaking:
            if (!finite(a.peakingDb))
                return missing(cell, "no closed-loop peaking figure");
            return set(cell, fixed(*a.peakingDb, 2, " dB"), "closed-loop peak above the DC gain",
                       -*a.peakingDb);
        case ComparisonRowKind::Desensitivity:
            if (!finite(a.desensitivityDb))
                return missing(cell, "no loop gain at DC");
            return set(cell, fixed(*a.desensitivityDb, 1, " dB"), "20 log10 |1 + T| at DC",
                       *a.desensitivityDb);
        case ComparisonRowKind::ZIn:
        case ComparisonRowKind::ZOut:
            return impedance(row.kind == ComparisonRowKind::ZIn, cell);
        case ComparisonRowKind::OutputNoise:
        case ComparisonRowKind::InputNoise:
            return noise(row.kind == ComparisonRowKind::OutputNoise, cell);
        case ComparisonRowKind::Snr:
            return snr(cell);
        case ComparisonRowKind::WorstCaseGain:
            return worstCase(cell);
        case ComparisonRowKind::SpecGain:
        case ComparisonRowKind::SpecBandwidth:
        case ComparisonRowKind::SpecPhaseMargin:
        case ComparisonRowKind::SpecOutputNoise:
        case ComparisonRowKind::SpecSnr:
        case ComparisonRowKind::SpecsMet:
            return spec(row.kind, cell);
        }
    }

    static void set(ComparisonCell &cell, std::string text, std::string note, double score)
    {
        cell.text = std::move(text);
        cell.note = std::move(note);
        cell.score = score;
    }

    static void missing(ComparisonCell &cell, std::string why)
    {
        cell.text = kNone;
        cell.note = std::move(why);
    }

    void gain(ComparisonCell &cell)
    {
        const Analysis &a = *m_a;
        if (!finite(a.exact.gain))
            return missing(cell, "the exact solution has no DC gain");
        const auto target = targetGain(m_d.specs);
        set(cell, formatEngineering(*a.exact.gain, 4, m_unit), "exact solution at DC",
            target ? -std::abs(*a.exact.gain - *target) : 0.0);
    }

    void gainError(ComparisonCell &cell)
    {
        const Analysis &a = *m_a;
        const auto target = targetGain(m_d.specs);
        if (!target)
            return missing(cell, "the design has no gain spec");
        if (!finite(a.exact.gain) || *target == 0)
            return missing(cell, "no gain to compare with the spec");
        const double err = (*a.exact.gain - *target) / std::abs(*target) * 100.0;
        const std::string t = formatEngineering(*target, 4, m_unit);
        set(cell, signedPct(err),
            "(gain − " + t + ") / |" + t + "|, "
                + (m_d.specs.gainMin && m_d.specs.gainMax ? "the centre of the spec's gain window"
                                                          : "the spec's one gain bound"),
            -std::abs(err));
    }

    void impedance(bool input, ComparisonCell &cell)
    {
        const OptionalNumber z = input ? m_a->exact.zIn : m_a->exact.zOut;
        if (!z || std::isnan(*z))
            return missing(cell, "no impedance at DC");
        // An open port's impedance is infinite: "∞ Ω", not missing.
        set(cell,
            std::isinf(*z) ? std::string(*z > 0 ? "∞ Ω" : "−∞ Ω") : formatEngineering(*z, 3, "Ω"),
            input ? "seen by the signal source, exact, at DC" : "seen by the load, exact, at DC",
            std::abs(*z));
    }

    void noise(bool output, ComparisonCell &cell)
    {
        const Analysis &a = *m_a;
        if (!a.noise)
            return missing(cell, a.noiseProblem.empty() ? "no noise analysis" : a.noiseProblem);
        const NoiseUnits u = noiseUnits(a.gainUnit);
        const OptionalNumber rms = output ? a.noise->outputRms : a.noise->inputRms;
        if (!finite(rms))
            return missing(cell, a.stable ? "no rms figure" : "no noise rms: the loop is unstable");
        set(cell, formatEngineering(*rms, 3, output ? u.output : u.input),
            "over " + formatEngineering(a.noise->bandLowHz, 3, "Hz") + " – "
                + formatEngineering(a.noise->bandHighHz, 3, "Hz")
                + (output ? ", at the output" : ", referred to the signal source"),
            -*rms);
    }

    void snr(ComparisonCell &cell)
    {
        const Analysis &a = *m_a;
        if (!m_d.signalLevel)
            return missing(cell, "the design gives no signal_level");
        if (!a.noise || !finite(a.noise->snrDb))
            return missing(cell,
                           a.stable ? "no input-referred noise rms"
                                    : "no noise rms: the loop is unstable");
        set(cell, fixed(*a.noise->snrDb, 1, " dB"),
            "full-scale sine of "
                + formatEngineering(m_d.signalLevel->si, 3, noiseUnits(a.gainUnit).input)
                + " peak against the noise over the band",
            *a.noise->snrDb);
    }

    void worstCase(ComparisonCell &cell)
    {
        if (!m_in.worstCase) {
            cell.text = "…";
            cell.note = "being computed";
            return;
        }
        const ComparisonWorstCase &w = *m_in.worstCase;
        if (!w.hasTolerances) {
            cell.text = "no tolerances";
            cell.note = "no part of this design carries a tolerance";
            return;
        }
        if (!finite(w.min) || !finite(w.max))
            return missing(cell, w.problem.empty() ? "no worst-case gain" : w.problem);
        // The unit is the gain row's; leaving it out keeps the columns narrow.
        cell.text = formatEngineering(*w.min, 4) + " … " + formatEngineering(*w.max, 4);
        std::string relative;
        const double nominal = m_a->exact.gain.value_or(0.0);
        if (nominal != 0 && std::isfinite(nominal)) {
            const double lo = (*w.min - nominal) / std::abs(nominal) * 100.0;
            const double hi = (*w.max - nominal) / std::abs(nominal) * 100.0;
            const double widthPct = (*w.max - *w.min) / std::abs(nominal) * 100.0;
            relative = " (" + signedPct(lo) + " / " + signedPct(hi)
                + " of the nominal gain), width " + fixed(widthPct, 2, " %");
        }
        cell.note = "DC gain in " + m_unit + " over the parts' tolerances" + relative + ", "
            + std::to_string(w.corners) + " corners"
            + (w.exhaustive ? ", every vertex" : ", sensitivity corners (approximate)");
    }

    void spec(ComparisonRowKind kind, ComparisonCell &cell)
    {
        const Specs &s = m_d.specs;
        const SpecCheck check = checkSpecs(s, m_d.sweep, trialMetricsOf(*m_a));
        const auto verdict = [&](bool ok, std::string why) {
            cell.text = ok ? "✓ pass" : "✗ fail";
            cell.verdict = ok ? ComparisonVerdict::Pass : ComparisonVerdict::Fail;
            cell.note = check.stable ? std::move(why) : "the loop is unstable";
        };
        switch (kind) {
        case ComparisonRowKind::SpecGain:
            return verdict(
                check.stable && check.gain,
                "gain window " + (s.gainMin ? formatEngineering(s.gainMin->si, 4, m_unit) : kNone)
                    + " … " + (s.gainMax ? formatEngineering(s.gainMax->si, 4, m_unit) : kNone));
        case ComparisonRowKind::SpecBandwidth:
            return verdict(check.stable && check.bandwidth,
                           "a bandwidth beyond the sweep counts as a pass");
        case ComparisonRowKind::SpecPhaseMargin:
            return verdict(check.stable && check.phaseMargin, "no loop crossover counts as a fail");
        case ComparisonRowKind::SpecOutputNoise:
            return verdict(check.stable && check.outputNoise, "output rms over the noise band");
        case ComparisonRowKind::SpecSnr:
            return verdict(check.stable && check.snr, "full-scale sine against the noise rms");
        default:
            break;
        }
        const int checked = specCount(s);
        if (checked == 0)
            return missing(cell, "the design has no specs");
        const int met = check.met(s);
        cell.text = std::to_string(met) + " of " + std::to_string(checked);
        cell.verdict = met == checked ? ComparisonVerdict::Pass : ComparisonVerdict::Fail;
        cell.score = met;
        cell.note = check.stable ? "specs met (core's spec check)"
                                 : "specs met (core's spec check): none, the loop is unstable";
    }

    const Design &m_d;
    const ComparisonInput &m_in;
    const Analysis *m_a;
    std::vector<ComparisonRow> &m_rows;
    std::size_t m_column;
    std::string m_unit;
};

std::vector<ComparisonRow> layOutRows(const Design &d)
{
    using K = ComparisonRowKind;
    namespace t = comparisonrow;
    const Specs &s = d.specs;
    const bool gainSpec = s.gainMin || s.gainMax;
    std::vector<ComparisonRow> rows;
    // A row titled `title`, ranked by `best` where `ranked` (a spec says which way is better).
    const auto row
        = [&rows](K kind, std::string title, bool ranked = false, const char *best = "") {
              rows.push_back({kind, std::move(title), ranked ? best : "", {}});
          };
    for (const std::string &id : comparedParts(d))
        row(K::PartValue, id);
    row(K::Gain, t::kGain, gainSpec, "closest to the centre of the spec's gain window");
    row(K::GainError, t::kGainError, gainSpec, "smallest gain error against the spec");
    row(K::Bandwidth, t::kBandwidth, s.bandwidthMin.has_value(),
        "widest bandwidth (the spec sets a minimum)");
    row(K::PhaseMargin, t::kPhaseMargin, s.phaseMarginMinDeg.has_value(),
        "largest phase margin (the spec sets a minimum)");
    row(K::Peaking, t::kPeaking);
    row(K::Desensitivity, t::kDesensitivity);
    row(K::ZIn, t::kZIn);
    row(K::ZOut, t::kZOut);
    row(K::OutputNoise, t::kOutputNoise, s.outputNoiseMax.has_value(),
        "lowest output noise (the spec sets a maximum)");
    row(K::InputNoise, t::kInputNoise, s.snrMinDb.has_value(),
        "lowest input-referred noise (the SNR spec sets a minimum)");
    if (d.signalLevel)
        row(K::Snr, t::kSnr, s.snrMinDb.has_value(), "highest SNR (the spec sets a minimum)");
    row(K::WorstCaseGain, t::kWorstCase);
    if (gainSpec)
        row(K::SpecGain, "spec: gain window");
    if (s.bandwidthMin)
        row(K::SpecBandwidth,
            "spec: bandwidth ≥ " + formatEngineering(s.bandwidthMin->si, 3, "Hz"));
    if (s.phaseMarginMinDeg)
        row(K::SpecPhaseMargin,
            "spec: phase margin ≥ " + formatEngineering(*s.phaseMarginMinDeg, 3) + "°");
    if (s.outputNoiseMax)
        row(K::SpecOutputNoise,
            "spec: output noise ≤ "
                + formatEngineering(s.outputNoiseMax->si, 3, noiseUnits(gainUnit(d)).output));
    if (s.snrMinDb)
        row(K::SpecSnr, "spec: SNR ≥ " + fixed(*s.snrMinDb, 1, " dB"));
    row(K::SpecsMet, t::kSpecsMet, hasSpecs(s), "most specs met");
    return rows;
}

/// Marks the best of a ranked row where it beats at least one other column.
void markBest(ComparisonRow &row)
{
    std::optional<double> top, bottom;
    for (const ComparisonCell &c : row.cells) {
        if (!c.score)
            continue;
        top = top ? std::max(*top, *c.score) : *c.score;
        bottom = bottom ? std::min(*bottom, *c.score) : *c.score;
    }
    if (!top)
        return;
    const double tolerance = 1e-9 * std::max(std::abs(*top), std::abs(*bottom)) + 1e-300;
    if (*top - *bottom <= tolerance)
        return;
    std::vector<std::string> bestTexts;
    for (ComparisonCell &c : row.cells) {
        c.best = c.score && *top - *c.score <= tolerance;
        if (c.best)
            bestTexts.push_back(c.text);
    }
    // A value that reads the same as the best is marked too, and a row whose values all read
    // the same marks none: the marks never contradict what is shown.
    bool allBest = true;
    for (ComparisonCell &c : row.cells) {
        if (!c.score)
            continue;
        c.best = c.best || std::find(bestTexts.begin(), bestTexts.end(), c.text) != bestTexts.end();
        allBest = allBest && c.best;
    }
    if (allBest) {
        for (ComparisonCell &c : row.cells)
            c.best = false;
    }
}

} // namespace

const ComparisonRow *CandidateComparison::row(ComparisonRowKind kind) const
{
    for (const ComparisonRow &r : rows) {
        if (r.kind == kind)
            return &r;
    }
    return nullptr;
}

std::vector<std::string> comparedParts(const Design &design)
{
    std::vector<std::string> ids;
    for (const Part &p : design.parts) {
        const auto own = p.fields.find(std::string(p.primaryField()));
        for (const Candidate &c : design.candidates) {
            const auto it = c.values.find(p.id);
            if (it != c.values.end()
                && (own == p.fields.end()
                    || !(std::abs(it->second.si - own->second.si)
                         <= 1e-12 * std::abs(own->second.si)))) {
                ids.push_back(p.id);
                break;
            }
        }
    }
    return ids;
}

CandidateComparison compareCandidates(const Design &design,
                                      const std::vector<ComparisonInput> &columns)
{
    CandidateComparison out;
    out.rows = layOutRows(design);
    for (ComparisonRow &row : out.rows)
        row.cells.resize(columns.size());
    for (std::size_t c = 0; c < columns.size(); ++c) {
        out.columns.push_back(columns[c].name);
        ColumnFiller(design, columns[c], out.rows, c).fill();
    }
    for (ComparisonRow &row : out.rows) {
        if (row.best.empty()) {
            for (ComparisonCell &cell : row.cells)
                cell.score.reset();
        } else {
            markBest(row);
        }
    }
    return out;
}

} // namespace loopsketch
