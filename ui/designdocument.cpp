#include "designdocument.h"

#include "editcommands.h"
#include "qtadapter.h"
#include "sketchlayout.h"

#include "loopsketch/designfile.h"
#include "loopsketch/eseries.h"
#include "loopsketch/value.h"

#include <chrono>
#include <cmath>

namespace loopsketch::ui {

DesignDocument::DesignDocument(QObject *parent) : QObject(parent)
{
    m_recomputeTimer.setSingleShot(true);
    m_recomputeTimer.setInterval(0);
    connect(&m_recomputeTimer, &QTimer::timeout, this, &DesignDocument::recompute);
}

void DesignDocument::reset(Design design, const QString &filePath)
{
    m_undoStack.clear();
    m_design = std::move(design);
    m_analysis.reset();
    m_filePath = filePath;
    rebuildLayout();
    m_undoStack.setClean();
    emit designReset();
    emit filePathChanged(m_filePath);
    m_recomputeTimer.stop();
    recompute();
}

bool DesignDocument::save(const QString &path, QString *error)
{
    auto saved = saveDesign(m_design, toStdString(path));
    if (!saved) {
        if (error)
            *error = toQString(saved.errorText());
        return false;
    }
    m_filePath = path;
    m_undoStack.setClean();
    emit filePathChanged(m_filePath);
    return true;
}

bool DesignDocument::stepPart(const std::string &partId, int steps, bool decade)
{
    const Part *part = m_design.findPart(partId);
    if (!part || steps == 0)
        return false;
    const std::string field(part->primaryField());
    if (field.empty())
        return false;
    const ESeries series = part->series.value_or(ESeries::E24);
    const int count = decade ? steps * valuesPerDecade(series) : steps;
    const double before = part->number(field);
    if (!(before > 0))
        return false;
    const double after = stepValue(series, before, count);
    if (!(after > 0) || !std::isfinite(after))
        return false;
    const auto it = part->fields.find(field);
    const Value oldValue = it != part->fields.end() ? it->second : Value{before, {}};
    const Value newValue{after, formatEngineering(after, 3)};
    m_undoStack.push(new SetFieldCommand(this, partId, field, oldValue, newValue, true));
    return true;
}

bool DesignDocument::setFieldText(const std::string &partId, const std::string &field,
                                  const QString &text, QString *error)
{
    const Part *part = m_design.findPart(partId);
    const FieldSpec *spec = part ? findFieldSpec(part->type, field) : nullptr;
    if (!spec) {
        if (error)
            *error = tr("part %1 has no field %2").arg(toQString(partId), toQString(field));
        return false;
    }
    const std::string trimmed = toStdString(text.trimmed());
    if (trimmed.empty() && !spec->required) {
        if (!part->has(field))
            return true;
        m_undoStack.push(new SetFieldCommand(this, partId, field, part->fields.at(field),
                                             Value{spec->defaultValue, {}}, false));
        return true;
    }
    auto parsed = parseValue(trimmed, spec->kind, spec->range);
    if (!parsed) {
        if (error) {
            Diagnostic d = parsed.diagnostics().front();
            d.part = partId;
            d.field = field;
            *error = toQString(d.toString());
        }
        return false;
    }
    const Value newValue{*parsed, trimmed};
    const auto it = part->fields.find(field);
    const Value oldValue = it != part->fields.end() ? it->second : Value{part->number(field), {}};
    if (oldValue == newValue)
        return true;
    m_undoStack.push(new SetFieldCommand(this, partId, field, oldValue, newValue, false));
    return true;
}

void DesignDocument::setSeries(const std::string &partId, std::optional<ESeries> series)
{
    const Part *part = m_design.findPart(partId);
    if (!part || part->series == series)
        return;
    m_undoStack.push(new SetSeriesCommand(this, partId, part->series, series));
}

bool DesignDocument::setToleranceText(const std::string &partId, const QString &text,
                                      QString *error)
{
    const Part *part = m_design.findPart(partId);
    if (!part)
        return false;
    std::optional<Value> tolerance;
    const std::string trimmed = toStdString(text.trimmed());
    if (!trimmed.empty()) {
        auto parsed = parseValue(trimmed, ValueKind::Tolerance, ValueRange::Positive);
        if (!parsed) {
            if (error) {
                Diagnostic d = parsed.diagnostics().front();
                d.part = partId;
                d.field = "tolerance";
                *error = toQString(d.toString());
            }
            return false;
        }
        tolerance = Value{*parsed, trimmed};
    }
    if (tolerance == part->tolerance)
        return true;
    m_undoStack.push(new SetToleranceCommand(this, partId, part->tolerance, tolerance));
    return true;
}

void DesignDocument::moveParts(const std::map<std::string, std::pair<double, double>> &positions)
{
    SketchLayout after = m_layout;
    bool changed = false;
    for (const auto &[id, xy] : positions) {
        if (!m_design.findPart(id))
            continue;
        SketchPlacement &placement = after.parts[id];
        changed = changed || placement.x != xy.first || placement.y != xy.second;
        placement.x = xy.first;
        placement.y = xy.second;
    }
    if (!changed)
        return;
    const QString text = positions.size() == 1
        ? tr("Move %1").arg(toQString(positions.begin()->first))
        : tr("Move %1 parts").arg(positions.size());
    m_undoStack.push(new SetSketchCommand(this, m_design.sketch, after, text));
}

void DesignDocument::rotatePart(const std::string &partId)
{
    if (!m_design.findPart(partId))
        return;
    SketchLayout after = m_layout;
    SketchPlacement &placement = after.parts[partId];
    placement.rotation = (placement.rotation + 90) % 360;
    m_undoStack.push(
        new SetSketchCommand(this, m_design.sketch, after, tr("Rotate %1").arg(toQString(partId))));
}

void DesignDocument::applyField(const std::string &partId, const std::string &field,
                                const Value &value)
{
    Part *part = m_design.findPart(partId);
    if (!part)
        return;
    part->fields[field] = value;
    emit partChanged(toQString(partId));
    scheduleRecompute();
}

void DesignDocument::applySeries(const std::string &partId, std::optional<ESeries> series)
{
    Part *part = m_design.findPart(partId);
    if (!part)
        return;
    part->series = series;
    emit partChanged(toQString(partId));
    scheduleRecompute();
}

void DesignDocument::applyTolerance(const std::string &partId, std::optional<Value> tolerance)
{
    Part *part = m_design.findPart(partId);
    if (!part)
        return;
    part->tolerance = std::move(tolerance);
    emit partChanged(toQString(partId));
    scheduleRecompute();
}

void DesignDocument::applySketch(const std::optional<SketchLayout> &sketch)
{
    m_design.sketch = sketch;
    rebuildLayout();
    emit layoutChanged();
}

void DesignDocument::rebuildLayout()
{
    m_layout = m_design.sketch ? *m_design.sketch : automaticLayout(m_design);
    if (m_design.sketch) {
        // Parts missing from a stored layout still need a place.
        const SketchLayout automatic = automaticLayout(m_design);
        for (const auto &[id, placement] : automatic.parts)
            m_layout.parts.emplace(id, placement);
    }
}

void DesignDocument::scheduleRecompute()
{
    m_recomputeTimer.start();
}

void DesignDocument::recomputeNow()
{
    m_recomputeTimer.stop();
    recompute();
}

void DesignDocument::recompute()
{
    const auto start = std::chrono::steady_clock::now();
    auto result = analyze(m_design, toStdString(m_filePath));
    m_lastAnalysisMs
        = std::chrono::duration<double, std::milli>(std::chrono::steady_clock::now() - start)
              .count();
    if (!result) {
        m_diagnostics = toQString(result.errorText());
        emit diagnosticsChanged(m_diagnostics);
        return;
    }
    m_analysis = std::move(result).value();
    m_diagnostics.clear();
    emit diagnosticsChanged(m_diagnostics);
    emit analysisChanged(*m_analysis);
}

} // namespace loopsketch::ui
