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

void DesignDocument::addGround(double x, double y)
{
    Design after = m_design;
    SketchLayout layout = m_layout;
    layout.grounds.push_back({snapToGrid(x), snapToGrid(y)});
    after.sketch = layout;
    pushDesign(std::move(after), tr("Add ground symbol"));
}

bool DesignDocument::moveGround(int index, double x, double y)
{
    if (index < 0 || index >= int(m_layout.grounds.size()))
        return false;
    SketchLayout after = m_layout;
    after.grounds[std::size_t(index)] = {snapToGrid(x), snapToGrid(y)};
    if (after == m_layout)
        return false;
    m_undoStack.push(new SetSketchCommand(this, m_design.sketch, after, tr("Move ground symbol")));
    return true;
}

void DesignDocument::removeGrounds(const std::vector<int> &indices)
{
    SketchLayout after = m_layout;
    std::vector<int> sorted = indices;
    std::sort(sorted.rbegin(), sorted.rend());
    bool removed = false;
    for (int i : sorted) {
        if (i >= 0 && i < int(after.grounds.size())) {
            after.grounds.erase(after.grounds.begin() + i);
            removed = true;
        }
    }
    if (removed)
        m_undoStack.push(
            new SetSketchCommand(this, m_design.sketch, after, tr("Delete ground symbol")));
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

namespace {

std::set<std::string> nodeNames(const Design &design)
{
    std::set<std::string> names;
    for (const Part &p : design.parts)
        names.insert(p.nodes.begin(), p.nodes.end());
    return names;
}

/// "n1", "n2" ...: the first not in `used`, which then holds it.
std::string freshNode(std::set<std::string> &used)
{
    for (int k = 1;; ++k) {
        std::string node = "n" + std::to_string(k);
        if (used.insert(node).second)
            return node;
    }
}

int pinsOn(const Design &design, const std::string &node)
{
    int n = 0;
    for (const Part &p : design.parts)
        n += int(std::count(p.nodes.begin(), p.nodes.end(), node));
    return n;
}

/// The node of one pin; nullptr when there is no such part or terminal.
std::string *pinNode(Design &design, const PinRef &pin)
{
    Part *part = design.findPart(pin.part);
    if (!part)
        return nullptr;
    const auto &terminals = partSpec(part->type).terminals;
    const auto t = std::find(terminals.begin(), terminals.end(), pin.terminal);
    const auto index = std::size_t(t - terminals.begin());
    if (t == terminals.end() || index >= part->nodes.size())
        return nullptr;
    return &part->nodes[index];
}

/// Joins two nodes: ground wins; otherwise the node with more pins keeps its name, so wiring
/// a new part into a named node ("in", "out") does not rename it.
void joinNodes(Design &design, std::string keep, std::string drop)
{
    if (keep == drop)
        return;
    if (drop == kGroundNode || (keep != kGroundNode && pinsOn(design, drop) > pinsOn(design, keep)))
        std::swap(keep, drop);
    for (Part &p : design.parts) {
        for (std::string &n : p.nodes) {
            if (n == drop)
                n = keep;
        }
    }
}

/// Removes wires (edges of `wiring`) from `design`: on each node that lost a wire, every
/// group of pins still joined by the remaining wires but the largest gets a fresh node.
/// Returns the number of wires removed.
int splitWires(Design &design, const SketchWiring &wiring,
               const std::vector<std::pair<PinRef, PinRef>> &wires)
{
    auto removed = [&](const RoutedWire &e) {
        for (const auto &[a, b] : wires) {
            if ((e.from == a && e.to == b) || (e.from == b && e.to == a))
                return true;
        }
        return false;
    };
    std::map<std::string, std::vector<const RoutedWire *>> kept;
    std::set<std::string> touched;
    int count = 0;
    for (const RoutedWire &e : wiring.edges) {
        if (removed(e)) {
            touched.insert(e.node);
            ++count;
        } else {
            kept[e.node].push_back(&e);
        }
    }
    std::set<std::string> used = nodeNames(design);
    for (const std::string &node : touched) {
        // The pins of the node, grouped by the wires that stay (union-find).
        std::vector<PinRef> pins;
        for (const Part &p : design.parts) {
            const auto &terminals = partSpec(p.type).terminals;
            for (std::size_t i = 0; i < p.nodes.size() && i < terminals.size(); ++i) {
                if (p.nodes[i] == node)
                    pins.push_back({p.id, std::string(terminals[i])});
            }
        }
        std::vector<std::size_t> parent(pins.size());
        for (std::size_t i = 0; i < parent.size(); ++i)
            parent[i] = i;
        auto find = [&](std::size_t i) {
            while (parent[i] != i)
                i = parent[i] = parent[parent[i]];
            return i;
        };
        auto indexOf = [&](const PinRef &pin) {
            return std::size_t(std::find(pins.begin(), pins.end(), pin) - pins.begin());
        };
        for (const RoutedWire *e : kept[node]) {
            const std::size_t a = indexOf(e->from), b = indexOf(e->to);
            if (a < pins.size() && b < pins.size())
                parent[find(a)] = find(b);
        }
        std::map<std::size_t, std::vector<std::size_t>> groups;
        for (std::size_t i = 0; i < pins.size(); ++i)
            groups[find(i)].push_back(i);
        std::size_t largest = groups.empty() ? 0 : groups.begin()->first;
        for (const auto &[root, members] : groups) {
            if (members.size() > groups[largest].size())
                largest = root;
        }
        for (const auto &[root, members] : groups) {
            if (root == largest)
                continue;
            const std::string fresh = freshNode(used);
            for (std::size_t i : members)
                *pinNode(design, pins[i]) = fresh;
        }
    }
    return count;
}

} // namespace

std::string DesignDocument::nextFreeId(PartType type, const Design &design)
{
    static const std::map<PartType, std::string> prefixes
        = {{PartType::Resistor, "R"}, {PartType::Capacitor, "C"}, {PartType::Inductor, "L"},
           {PartType::VSource, "VS"}, {PartType::ISource, "IS"},  {PartType::GainBlock, "U"},
           {PartType::Load, "RL"}};
    const std::string prefix = prefixes.at(type);
    std::string id;
    for (int n = 1; id.empty() || design.findPart(id); ++n)
        id = prefix + std::to_string(n);
    return id;
}

std::string DesignDocument::addPart(PartType type, double x, double y)
{
    const std::string id = nextFreeId(type, m_design);
    std::set<std::string> nodes;
    for (const Part &p : m_design.parts)
        nodes.insert(p.nodes.begin(), p.nodes.end());
    Part part;
    part.id = id;
    part.type = type;
    int k = 1;
    for (std::size_t i = 0; i < partSpec(type).terminals.size(); ++i) {
        std::string node;
        do
            node = "n" + std::to_string(k++);
        while (nodes.count(node));
        nodes.insert(node);
        part.nodes.push_back(node);
    }
    for (const FieldSpec &f : partSpec(type).fields) {
        if (f.required)
            part.fields[std::string(f.name)] = f.kind == ValueKind::Gain ? Value{1e5, "100dB"}
                : f.kind == ValueKind::Capacitance                       ? Value{1e-9, "1n"}
                : f.kind == ValueKind::Inductance                        ? Value{1e-3, "1m"}
                                                                         : Value{1e3, "1k"};
    }
    if (type == PartType::GainBlock) {
        // A finite gain-bandwidth from the start, so bandwidth, margins and the step
        // response mean something as soon as the loop is closed.
        part.fields["gbw"] = Value{10e6, "10M"};
    }
    Design after = m_design;
    after.parts.push_back(part);
    SketchLayout layout = m_layout;
    // A free grid place: step right until no part sits within 80 units.
    double px = snapToGrid(x), py = snapToGrid(y);
    for (int tries = 0; tries < 50; ++tries) {
        bool taken = false;
        for (const auto &[other, placement] : layout.parts)
            taken = taken || (std::abs(placement.x - px) < 80 && std::abs(placement.y - py) < 60);
        if (!taken)
            break;
        px += 100;
    }
    layout.parts[id] = {px, py, 0};
    after.sketch = layout;
    if (after.input.empty() && partSpec(type).isSignalSource)
        after.input = id;
    pushDesign(std::move(after), tr("Add %1").arg(toQString(id)));
    return id;
}

void DesignDocument::removeParts(const std::vector<std::string> &partIds)
{
    Design after = m_design;
    bool removed = false;
    for (const std::string &id : partIds) {
        const auto it = std::find_if(after.parts.begin(), after.parts.end(),
                                     [&](const Part &p) { return p.id == id; });
        if (it == after.parts.end())
            continue;
        after.parts.erase(it);
        removed = true;
    }
    if (!removed)
        return;
    SketchLayout layout = m_layout;
    for (const std::string &id : partIds)
        layout.parts.erase(id);
    after.sketch = layout;
    pushDesign(std::move(after),
               partIds.size() == 1 ? tr("Delete %1").arg(toQString(partIds[0]))
                                   : tr("Delete %1 parts").arg(partIds.size()));
}

bool DesignDocument::connectPins(const std::string &partA, const std::string &terminalA,
                                 const std::string &partB, const std::string &terminalB)
{
    const Part *a = m_design.findPart(partA);
    const Part *b = m_design.findPart(partB);
    if (!a || !b)
        return false;
    const std::string keep = a->node(terminalA);
    const std::string drop = b->node(terminalB);
    if (keep.empty() || drop.empty() || keep == drop)
        return false;
    Design after = m_design;
    joinNodes(after, keep, drop);
    if (!after.sketch)
        after.sketch = m_layout;
    pushDesign(
        std::move(after),
        tr("Connect %1.%2 to %3.%4")
            .arg(toQString(partA), toQString(terminalA), toQString(partB), toQString(terminalB)));
    return true;
}

bool DesignDocument::groundPin(const std::string &partId, const std::string &terminal)
{
    const Part *part = m_design.findPart(partId);
    if (!part)
        return false;
    const auto &terminals = partSpec(part->type).terminals;
    const auto t = std::find(terminals.begin(), terminals.end(), terminal);
    if (t == terminals.end() || part->nodes[std::size_t(t - terminals.begin())] == kGroundNode)
        return false;
    Design after = m_design;
    after.findPart(partId)->nodes[std::size_t(t - terminals.begin())] = std::string(kGroundNode);
    if (!after.sketch)
        after.sketch = m_layout;
    pushDesign(std::move(after), tr("Ground %1.%2").arg(toQString(partId), toQString(terminal)));
    return true;
}

bool DesignDocument::disconnectPin(const std::string &partId, const std::string &terminal)
{
    Design after = m_design;
    std::string *node = pinNode(after, {partId, terminal});
    if (!node || (*node != kGroundNode && pinsOn(after, *node) < 2))
        return false;
    std::set<std::string> used = nodeNames(after);
    *node = freshNode(used);
    if (!after.sketch)
        after.sketch = m_layout;
    pushDesign(std::move(after),
               tr("Disconnect %1.%2").arg(toQString(partId), toQString(terminal)));
    return true;
}

bool DesignDocument::removeWires(const std::vector<std::pair<PinRef, PinRef>> &wires)
{
    Design after = m_design;
    const int removed = splitWires(after, routeWires(m_design, m_layout), wires);
    if (removed == 0)
        return false;
    if (!after.sketch)
        after.sketch = m_layout;
    pushDesign(std::move(after),
               removed == 1 ? tr("Delete wire %1.%2 – %3.%4")
                                  .arg(toQString(wires.front().first.part),
                                       toQString(wires.front().first.terminal),
                                       toQString(wires.front().second.part),
                                       toQString(wires.front().second.terminal))
                            : tr("Delete %1 wires").arg(removed));
    return true;
}

bool DesignDocument::reattachWire(const PinRef &keep, const PinRef &leave, const PinRef &target)
{
    Design after = m_design;
    if (splitWires(after, routeWires(m_design, m_layout), {{keep, leave}}) == 0)
        return false;
    std::string *from = pinNode(after, keep);
    std::string *to = target.part.empty() ? nullptr : pinNode(after, target);
    if (!from || (!target.part.empty() && !to))
        return false;
    joinNodes(after, *from, to ? *to : std::string(kGroundNode));
    if (!after.sketch)
        after.sketch = m_layout;
    const QString where = target.part.empty()
        ? tr("ground")
        : QStringLiteral("%1.%2").arg(toQString(target.part), toQString(target.terminal));
    pushDesign(std::move(after),
               tr("Move wire end from %1.%2 to %3")
                   .arg(toQString(leave.part), toQString(leave.terminal), where));
    return true;
}

bool DesignDocument::movePin(const PinRef &pin, const PinRef &target)
{
    Design after = m_design;
    std::string *node = pinNode(after, pin);
    std::string *to = target.part.empty() ? nullptr : pinNode(after, target);
    if (!node || (!target.part.empty() && !to) || pin == target)
        return false;
    std::set<std::string> used = nodeNames(after);
    *node = freshNode(used);
    // The target's node, read again: it is the pin's old node when both shared it.
    to = target.part.empty() ? nullptr : pinNode(after, target);
    joinNodes(after, *node, to ? *to : std::string(kGroundNode));
    if (after == m_design)
        return false;
    if (!after.sketch)
        after.sketch = m_layout;
    const QString where = target.part.empty()
        ? tr("ground")
        : QStringLiteral("%1.%2").arg(toQString(target.part), toQString(target.terminal));
    pushDesign(std::move(after),
               tr("Move %1.%2 to %3").arg(toQString(pin.part), toQString(pin.terminal), where));
    return true;
}

std::vector<std::string> DesignDocument::pasteParts(const Design &fragment, const QString &text)
{
    std::vector<std::string> ids;
    if (fragment.parts.empty())
        return ids;
    Design after = m_design;
    SketchLayout layout = m_layout;
    auto placed = [&](const std::string &id) {
        if (fragment.sketch) {
            if (const auto it = fragment.sketch->parts.find(id); it != fragment.sketch->parts.end())
                return it->second;
        }
        return SketchPlacement{};
    };
    // Two grid steps down and right, further while a copy would land on or beside a part
    // (the free-place rule of addPart()), so a whole circuit pasted lands clear of itself.
    double offset = 2 * kGrid;
    for (int tries = 0; tries < 200; ++tries) {
        bool taken = false;
        for (const Part &p : fragment.parts) {
            const SketchPlacement at = placed(p.id);
            for (const auto &[other, placement] : layout.parts)
                taken = taken
                    || (std::abs(placement.x - (at.x + offset)) < 80
                        && std::abs(placement.y - (at.y + offset)) < 60);
        }
        if (!taken)
            break;
        offset += 2 * kGrid;
    }
    std::set<std::string> used = nodeNames(after);
    std::map<std::string, std::string> nodes{{std::string(kGroundNode), std::string(kGroundNode)}};
    for (Part part : fragment.parts) {
        SketchPlacement at = placed(part.id);
        part.id = nextFreeId(part.type, after);
        for (std::string &n : part.nodes) {
            auto it = nodes.find(n);
            if (it == nodes.end())
                it = nodes.emplace(n, freshNode(used)).first;
            n = it->second;
        }
        at.x = snapToGrid(at.x + offset);
        at.y = snapToGrid(at.y + offset);
        layout.parts[part.id] = at;
        ids.push_back(part.id);
        after.parts.push_back(std::move(part));
    }
    after.sketch = layout;
    pushDesign(std::move(after), text);
    return ids;
}

Design designWithCandidate(const Design &design, const Candidate &candidate, QString *problem)
{
    auto applied = applyCandidate(design, candidate);
    if (!applied) {
        if (problem)
            *problem = toQString(applied.errorText());
        return design;
    }
    return std::move(applied).value();
}

QString DesignDocument::nextCandidateName() const
{
    for (int n = 1;; ++n) {
        const QString name = tr("Candidate %1").arg(n);
        if (!findCandidate(m_design, toStdString(name)))
            return name;
    }
}

QString DesignDocument::candidateNameProblem(const QString &name, const QString &ignore) const
{
    const QString trimmed = name.trimmed();
    if (trimmed.isEmpty())
        return tr("A candidate needs a name that is not empty.");
    if (trimmed != ignore.trimmed() && findCandidate(m_design, toStdString(trimmed)))
        return tr("A candidate named \"%1\" exists already; choose another name.").arg(trimmed);
    return {};
}

bool DesignDocument::pinCandidate(const QString &name, QString *error)
{
    const QString problem = candidateNameProblem(name);
    if (!problem.isEmpty()) {
        if (error)
            *error = problem;
        return false;
    }
    Candidate c;
    c.name = toStdString(name.trimmed());
    for (const Part &p : m_design.parts) {
        const std::string field(p.primaryField());
        if (field.empty() || p.type == PartType::Load)
            continue;
        const auto it = p.fields.find(field);
        c.values[p.id] = it != p.fields.end() ? it->second : Value{p.number(field), {}};
    }
    if (c.values.empty()) {
        if (error)
            *error = tr("There is no resistor, capacitor or inductor whose value could be pinned.");
        return false;
    }
    std::vector<Candidate> after = m_design.candidates;
    after.push_back(std::move(c));
    m_undoStack.push(new SetCandidatesCommand(this, m_design.candidates, std::move(after),
                                              tr("Pin candidate %1").arg(name.trimmed())));
    return true;
}

bool DesignDocument::renameCandidate(const QString &from, const QString &to, QString *error)
{
    const std::string oldName = toStdString(from);
    if (!findCandidate(m_design, oldName)) {
        if (error)
            *error = tr("There is no candidate named \"%1\".").arg(from);
        return false;
    }
    const QString problem = candidateNameProblem(to, from);
    if (!problem.isEmpty()) {
        if (error)
            *error = problem;
        return false;
    }
    const std::string newName = toStdString(to.trimmed());
    if (newName == oldName)
        return true;
    std::vector<Candidate> after = m_design.candidates;
    for (Candidate &c : after) {
        if (c.name == oldName)
            c.name = newName;
    }
    m_undoStack.push(
        new SetCandidatesCommand(this, m_design.candidates, std::move(after),
                                 tr("Rename candidate %1 to %2").arg(from, to.trimmed())));
    return true;
}

bool DesignDocument::deleteCandidate(const QString &name)
{
    std::vector<Candidate> after = m_design.candidates;
    const std::string key = toStdString(name);
    const auto removed = std::erase_if(after, [&](const Candidate &c) { return c.name == key; });
    if (removed == 0)
        return false;
    m_undoStack.push(new SetCandidatesCommand(this, m_design.candidates, std::move(after),
                                              tr("Delete candidate %1").arg(name)));
    return true;
}

bool DesignDocument::makeCandidateCurrent(const QString &name, QString *error)
{
    const Candidate *c = findCandidate(m_design, toStdString(name));
    if (!c) {
        if (error)
            *error = tr("There is no candidate named \"%1\".").arg(name);
        return false;
    }
    std::vector<std::pair<std::string, Value>> changes;
    for (const auto &[id, value] : c->values) {
        const Part *p = m_design.findPart(id);
        if (!p || p->primaryField().empty()) {
            if (error)
                *error = tr("Candidate \"%1\" changes part %2, which has no value.")
                             .arg(name, toQString(id));
            return false;
        }
        const auto it = p->fields.find(std::string(p->primaryField()));
        if (it == p->fields.end() || it->second != value)
            changes.emplace_back(id, value);
    }
    if (changes.empty()) {
        if (error)
            *error = tr("The design already has the values of candidate \"%1\".").arg(name);
        return false;
    }
    m_undoStack.beginMacro(tr("Make candidate %1 current").arg(name));
    for (const auto &[id, value] : changes) {
        const Part *p = m_design.findPart(id);
        const std::string field(p->primaryField());
        const auto it = p->fields.find(field);
        std::optional<Value> before;
        if (it != p->fields.end())
            before = it->second;
        m_undoStack.push(new SetFieldCommand(this, id, field, before, value, false));
    }
    m_undoStack.endMacro();
    return true;
}

void DesignDocument::applyCandidates(const std::vector<Candidate> &candidates)
{
    m_design.candidates = candidates;
    emit candidatesChanged();
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
    // Everything the window shows, the Noise panel's analysis included.
    AnalysisOptions options;
    options.noise = true;
    auto result = analyze(m_design, toStdString(m_filePath), options);
    m_lastAnalysisMs
        = std::chrono::duration<double, std::milli>(std::chrono::steady_clock::now() - start)
              .count();
    if (!result) {
        // Never leave the last good numbers standing as if they were current.
        m_analysis.reset();
        m_diagnostics = toQString(result.errorText());
        QString partId, reason = m_diagnostics;
        if (!result.diagnostics().empty()) {
            // Over the plots, the first problem without the file's path.
            Diagnostic first = result.diagnostics().front();
            partId = toQString(first.part);
            first.file.clear();
            reason = toQString(first.toString());
        }
        emit diagnosticsChanged(m_diagnostics);
        emit analysisUnavailable(reason, partId);
        return;
    }
    m_analysis = std::move(result).value();
    // Where the numbers cannot be trusted to full accuracy, the status line says so.
    QStringList warnings;
    for (const Diagnostic &w : m_analysis->warnings)
        warnings << tr("Warning: %1").arg(toQString(w.toString()));
    m_diagnostics = warnings.join(QLatin1Char('\n'));
    emit diagnosticsChanged(m_diagnostics);
    emit analysisChanged(*m_analysis);
}

} // namespace loopsketch::ui
