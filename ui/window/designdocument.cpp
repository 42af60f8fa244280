#include "window/designdocument.h"

#include "sketch/sketchlayout.h"
#include "support/qtadapter.h"
#include "window/editcommands.h"

#include "loopsketch/base/eseries.h"
#include "loopsketch/base/value.h"
#include "loopsketch/design/candidate.h"
#include "loopsketch/design/designfile.h"

#include <algorithm>
#include <chrono>
#include <cmath>
#include <set>

namespace loopsketch::ui {

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
    // A new design is no burst: its full analysis starts at once.
    scheduleRecompute();
    m_sinceChange.invalidate();
    m_wantCoarse = false;
    m_settleTimer.stop();
    m_recomputeTimer.stop();
    dispatch();
}

Design DesignDocument::blankDesign()
{
    Design design;
    design.sketch.emplace();
    design.sketch->grounds.push_back({0.0, 120.0});
    return design;
}

bool DesignDocument::save(const QString &path, QString *error)
{
    // The file must open again: check the text with the loader before anything is written.
    if (auto reread = parseDesign(serializeDesign(m_design), DesignRules::Draft, toStdString(path));
        !reread) {
        if (error)
            *error = tr("Not saved, the file could not be opened again: %1")
                         .arg(toQString(reread.errorText()));
        return false;
    }
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
    std::optional<Value> oldValue;
    if (it != part->fields.end())
        oldValue = it->second;
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
        m_undoStack.push(
            new SetFieldCommand(this, partId, field, part->fields.at(field), std::nullopt, false));
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
    std::optional<Value> oldValue;
    if (it != part->fields.end())
        oldValue = it->second;
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

void DesignDocument::applyValues(const std::vector<std::pair<std::string, double>> &values,
                                 std::optional<ESeries> series, const QString &text)
{
    struct Change
    {
        std::string id, field;
        std::optional<Value> before;
        std::optional<Value> after; ///< nullopt: the value stays
        std::optional<ESeries> seriesBefore;
        bool series = false;
    };
    std::vector<Change> changes;
    for (const auto &[id, v] : values) {
        const Part *part = m_design.findPart(id);
        if (!part || part->primaryField().empty() || !(v > 0) || !std::isfinite(v))
            continue;
        Change c{id, std::string(part->primaryField()), {}, {}, part->series, false};
        if (const auto it = part->fields.find(c.field); it != part->fields.end())
            c.before = it->second;
        const Value after{v, formatEngineering(v, 3)};
        if (c.before != after)
            c.after = after;
        c.series = series && part->series != series;
        if (c.after || c.series)
            changes.push_back(std::move(c));
    }
    if (changes.empty())
        return;
    m_undoStack.beginMacro(text);
    for (const Change &c : changes) {
        if (c.after)
            m_undoStack.push(new SetFieldCommand(this, c.id, c.field, c.before, c.after, false));
        if (c.series)
            m_undoStack.push(new SetSeriesCommand(this, c.id, c.seriesBefore, series));
    }
    m_undoStack.endMacro();
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

void DesignDocument::mirrorPart(const std::string &partId)
{
    if (!m_design.findPart(partId))
        return;
    SketchLayout after = m_layout;
    SketchPlacement &placement = after.parts[partId];
    placement.mirror = !placement.mirror;
    m_undoStack.push(
        new SetSketchCommand(this, m_design.sketch, after, tr("Mirror %1").arg(toQString(partId))));
}

namespace {

struct GainBlockPreset
{
    const char *name;
    const char *gain, *poles, *rIn, *cIn, *rOut;
};

// Round numbers of our own choosing, typical of broad classes of amplifiers.
const GainBlockPreset kPresets[] = {
    {"general purpose (100 dB, 10 Hz / 5 MHz)", "100dB", "10, 5M", "10M", "5p", "100"},
    {"wide band (90 dB, 1 kHz / 200 MHz)", "90dB", "1k, 200M", "1M", "2p", "30"},
    {"precision low speed (130 dB, 0.3 Hz / 1 MHz)", "130dB", "0.3, 1M", "100M", "8p", "200"},
    {"FET input (110 dB, 10 Hz / 40 MHz)", "110dB", "10, 40M", "1T", "4p", "50"},
};

std::vector<std::string> splitList(const std::string &text)
{
    std::vector<std::string> items;
    std::string current;
    for (char ch : text) {
        if (ch == ',' || ch == ';' || ch == ' ' || ch == '\t') {
            if (!current.empty())
                items.push_back(current);
            current.clear();
        } else {
            current += ch;
        }
    }
    if (!current.empty())
        items.push_back(current);
    return items;
}

} // namespace

bool DesignDocument::setFrequencyListText(const std::string &partId, const std::string &list,
                                          const QString &text, QString *error)
{
    const Part *part = m_design.findPart(partId);
    if (!part || part->type != PartType::GainBlock || (list != "poles_hz" && list != "zeros_hz"))
        return false;
    std::vector<Value> values;
    const auto items = splitList(toStdString(text));
    for (std::size_t i = 0; i < items.size(); ++i) {
        auto parsed = parseValue(items[i], ValueKind::Frequency, ValueRange::Positive);
        if (!parsed) {
            if (error) {
                Diagnostic d = parsed.diagnostics().front();
                d.part = partId;
                d.field = list + "[" + std::to_string(i) + "]";
                *error = toQString(d.toString());
            }
            return false;
        }
        values.push_back(Value{*parsed, items[i]});
    }
    const std::vector<Value> &before = list == "poles_hz" ? part->polesHz : part->zerosHz;
    if (values == before)
        return true;
    m_undoStack.push(new SetFrequencyListCommand(this, partId, list, before, values));
    return true;
}

QStringList DesignDocument::gainBlockPresets()
{
    QStringList names;
    for (const auto &p : kPresets)
        names << QString::fromUtf8(p.name);
    return names;
}

int DesignDocument::gainBlockPresetInEffect(const std::string &partId) const
{
    const Part *part = m_design.findPart(partId);
    if (!part || part->type != PartType::GainBlock || part->has("gbw") || !part->zerosHz.empty())
        return -1;
    auto same = [](double a, const char *text, ValueKind kind) {
        auto v = parseValue(text, kind, ValueRange::Any);
        return v && std::abs(a - *v) <= 1e-9 * std::abs(*v);
    };
    for (int i = 0; i < int(std::size(kPresets)); ++i) {
        const GainBlockPreset &p = kPresets[i];
        const auto poles = splitList(p.poles);
        bool match = same(part->number("gain"), p.gain, ValueKind::Gain)
            && same(part->number("r_in"), p.rIn, ValueKind::Resistance)
            && same(part->number("c_in"), p.cIn, ValueKind::Capacitance)
            && same(part->number("r_out"), p.rOut, ValueKind::Resistance)
            && poles.size() == part->polesHz.size();
        for (std::size_t k = 0; match && k < poles.size(); ++k)
            match = same(part->polesHz[k].si, poles[k].c_str(), ValueKind::Frequency);
        if (match)
            return i;
    }
    return -1;
}

void DesignDocument::applyGainBlockPreset(const std::string &partId, int index)
{
    const Part *part = m_design.findPart(partId);
    if (!part || part->type != PartType::GainBlock || index < 0
        || index >= int(std::size(kPresets)))
        return;
    const GainBlockPreset &p = kPresets[index];
    m_undoStack.beginMacro(tr("Gain block preset: %1").arg(QString::fromUtf8(p.name)));
    QString ignored;
    setFieldText(partId, "gain", QString::fromUtf8(p.gain), &ignored);
    if (m_design.findPart(partId)->has("gbw"))
        setFieldText(partId, "gbw", QString(), &ignored);
    setFrequencyListText(partId, "poles_hz", QString::fromUtf8(p.poles), &ignored);
    setFieldText(partId, "r_in", QString::fromUtf8(p.rIn), &ignored);
    setFieldText(partId, "c_in", QString::fromUtf8(p.cIn), &ignored);
    setFieldText(partId, "r_out", QString::fromUtf8(p.rOut), &ignored);
    m_undoStack.endMacro();
}

QStringList DesignDocument::tidy(Design &design) const
{
    QStringList notices;
    for (Candidate &c : design.candidates) {
        const auto dropped = std::erase_if(
            c.values, [&](const auto &entry) { return design.findPart(entry.first) == nullptr; });
        if (dropped > 0 && !c.values.empty())
            notices << tr("Candidate \"%1\" no longer sets the deleted part's value.")
                           .arg(toQString(c.name));
    }
    const auto emptied = std::erase_if(design.candidates, [&](const Candidate &c) {
        const Candidate *before = findCandidate(m_design, c.name);
        if (!c.values.empty() || !before || before->values.empty())
            return false;
        notices << tr("Candidate \"%1\" named only deleted parts and was removed.")
                       .arg(toQString(c.name));
        return true;
    });
    (void)emptied;
    const Part *input = design.findPart(design.input);
    if (!input || !partSpec(input->type).isSignalSource) {
        std::vector<std::string> sources;
        for (const Part &p : design.parts) {
            if (partSpec(p.type).isSignalSource)
                sources.push_back(p.id);
        }
        const std::string chosen = sources.size() == 1 ? sources.front() : std::string();
        if (chosen != design.input && !chosen.empty())
            notices << tr("The signal source is now %1.").arg(toQString(chosen));
        design.input = chosen;
    }
    return notices;
}

void DesignDocument::pushDesign(Design after, const QString &text)
{
    const QStringList notices = tidy(after);
    if (after == m_design)
        return;
    m_undoStack.push(new SetDesignCommand(this, m_design, std::move(after), text));
    if (!notices.isEmpty())
        emit noticeIssued(notices.join(QLatin1Char(' ')));
}

void DesignDocument::setProperties(const Design &properties, const QString &text)
{
    Design after = m_design;
    after.title = properties.title;
    after.notes = properties.notes;
    after.input = properties.input;
    after.output = properties.output;
    after.sweep = properties.sweep;
    after.specs = properties.specs;
    after.temperature = properties.temperature;
    after.noiseBand = properties.noiseBand;
    after.noiseSpotHz = properties.noiseSpotHz;
    after.signalLevel = properties.signalLevel;
    if (after == m_design)
        return;
    if (!after.sketch)
        after.sketch = m_layout;
    m_undoStack.push(new SetDesignCommand(this, m_design, std::move(after), text));
}

bool DesignDocument::renamePart(const std::string &from, const std::string &to, QString *error)
{
    if (!m_design.findPart(from)) {
        if (error)
            *error = tr("There is no part %1.").arg(toQString(from));
        return false;
    }
    if (to == from)
        return true;
    if (!isValidPartId(to)) {
        if (error)
            *error = tr("\"%1\" cannot name a part: use letters, digits, '_' and '-'.")
                         .arg(toQString(to));
        return false;
    }
    if (m_design.findPart(to)) {
        if (error)
            *error = tr("A part named %1 exists already.").arg(toQString(to));
        return false;
    }
    Design after = m_design;
    after.findPart(from)->id = to;
    for (Candidate &c : after.candidates) {
        if (auto node = c.values.extract(from))
            c.values[to] = node.mapped();
    }
    if (after.input == from)
        after.input = to;
    SketchLayout layout = m_layout;
    if (auto node = layout.parts.extract(from)) {
        node.key() = to;
        layout.parts.insert(std::move(node));
    }
    after.sketch = layout;
    pushDesign(std::move(after), tr("Rename %1 to %2").arg(toQString(from), toQString(to)));
    return true;
}

void DesignDocument::applyDesign(const Design &design)
{
    m_design = design;
    rebuildLayout();
    emit structureChanged();
    scheduleRecompute();
}

void DesignDocument::applyFrequencyList(const std::string &partId, const std::string &list,
                                        const std::vector<Value> &values)
{
    Part *part = m_design.findPart(partId);
    if (!part)
        return;
    (list == "poles_hz" ? part->polesHz : part->zerosHz) = values;
    emit partChanged(toQString(partId));
    scheduleRecompute();
}

void DesignDocument::applyField(const std::string &partId, const std::string &field,
                                const std::optional<Value> &value)
{
    Part *part = m_design.findPart(partId);
    if (!part)
        return;
    if (value)
        part->fields[field] = *value;
    else
        part->fields.erase(field);
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

} // namespace loopsketch::ui
