#include "sheet/sheetcandidates.h"

#include "loopsketch/analysis/spread.h"
#include "loopsketch/design/candidate.h"

#include <algorithm>

namespace loopsketch::ui::sheet {

namespace {

ComparisonWorstCase worstCaseOf(const Design &design)
{
    ComparisonWorstCase w;
    for (const Part &p : design.parts)
        w.hasTolerances = w.hasTolerances || (p.tolerance && !p.primaryField().empty());
    if (!w.hasTolerances)
        return w;
    auto worst = worstCase(design, SpreadOptions{});
    if (!worst) {
        w.problem = worst.errorText();
        return w;
    }
    w.min = worst->gain.min;
    w.max = worst->gain.max;
    w.exhaustive = worst->exhaustive;
    w.corners = worst->corners;
    return w;
}

QColor cellColour(const ComparisonCell &cell)
{
    if (cell.verdict == ComparisonVerdict::Pass)
        return kPass;
    if (cell.verdict == ComparisonVerdict::Fail)
        return kFail;
    return cell.inherited ? QColor(110, 110, 110) : kInk;
}

} // namespace

std::vector<SheetCandidate> sheetCandidates(const Design &design, const Analysis &current)
{
    std::vector<SheetCandidate> columns;
    if (design.candidates.empty())
        return columns;
    columns.push_back({"current design", nullptr, current, {}, worstCaseOf(design)});
    AnalysisOptions options; // noise on: the noise rows and the noise overlays
    options.sensitivity = false;
    for (const Candidate &c : design.candidates) {
        SheetCandidate col{c.name, &c, std::nullopt, {}, {}};
        auto applied = applyCandidate(design, c);
        if (!applied) {
            col.problem = applied.errorText();
        } else if (auto analysis = analyze(*applied, {}, options)) {
            col.analysis = std::move(analysis).value();
            col.worst = worstCaseOf(*applied);
        } else {
            col.problem = analysis.errorText();
        }
        columns.push_back(std::move(col));
    }
    return columns;
}

std::vector<SheetOverlay> sheetOverlays(const std::vector<SheetCandidate> &columns)
{
    std::vector<SheetOverlay> overlays;
    for (std::size_t i = 1; i < columns.size(); ++i) {
        if (columns[i].analysis)
            overlays.push_back({q(columns[i].name), &*columns[i].analysis});
    }
    return overlays;
}

void candidatesSection(SheetWriter &w, const Design &d, const std::vector<SheetCandidate> &columns)
{
    if (columns.empty())
        return;
    w.heading(QStringLiteral("Candidates"));
    std::vector<ComparisonInput> inputs;
    for (const SheetCandidate &c : columns)
        inputs.push_back(
            {c.name, c.candidate, c.analysis ? &*c.analysis : nullptr, c.problem, c.worst});
    const CandidateComparison comparison = compareCandidates(d, inputs);
    QStringList marked;
    for (const ComparisonRow &row : comparison.rows) {
        if (!row.best.empty())
            marked << q(row.title) + QStringLiteral(": ") + q(row.best);
    }
    // What the marks mean, before the table.
    w.paragraph(
        QStringLiteral("★ marks a row's best only where a spec says which way is better (%1); "
                       "other rows are not ranked. Grey: a value the candidate does not "
                       "set. Worst-case gain: DC gain range over the parts' tolerances.")
            .arg(marked.isEmpty() ? QStringLiteral("no specs") : marked.join(QStringLiteral("; "))),
        sheetFont(7.5), 0, QColor(90, 90, 90));
    w.advance(1);

    constexpr std::size_t kPerTable = 4;
    const double labelMm = 46, valueMm = (w.width() - labelMm) / double(kPerTable);
    for (std::size_t first = 0; first < columns.size(); first += kPerTable) {
        const std::size_t last = std::min(columns.size(), first + kPerTable);
        std::vector<SheetWriter::Column> header{{QString(), labelMm}};
        for (std::size_t c = first; c < last; ++c)
            header.push_back({q(comparison.columns[c]), valueMm, Qt::AlignRight});
        std::vector<SheetWriter::Row> rows;
        for (const ComparisonRow &row : comparison.rows) {
            SheetWriter::Row out{{q(row.title)}, {kInk}};
            for (std::size_t c = first; c < last; ++c) {
                const ComparisonCell &cell = row.cells[c];
                out.cells << (cell.best ? QStringLiteral("★ ") : QString()) + q(cell.text);
                out.colours.push_back(cellColour(cell));
            }
            rows.push_back(std::move(out));
        }
        w.table(header, rows);
        w.advance(1);
    }
    for (const SheetCandidate &c : columns) {
        if (!c.problem.empty())
            w.paragraph(q(c.name) + QStringLiteral(": ") + q(c.problem), sheetFont(kBodyPt));
    }
    w.advance(1);
}

} // namespace loopsketch::ui::sheet
