#include "sketch/inspector.h"

#include "support/qtadapter.h"
#include "window/designdocument.h"

#include "loopsketch/base/eseries.h"
#include "loopsketch/base/value.h"

#include <QComboBox>
#include <QFormLayout>
#include <QLabel>
#include <QLineEdit>
#include <QVBoxLayout>

#include <cmath>

namespace loopsketch::ui {

namespace {

/// Adds a form row holding `editor` with a hidden error line under it; returns the line.
QLabel *addRowWithError(QFormLayout *form, const QString &label, QWidget *editor)
{
    auto *error = new QLabel(editor->parentWidget());
    error->setStyleSheet(QStringLiteral("color: #b3261e; font-size: 8pt;"));
    error->setWordWrap(true);
    error->hide();
    auto *box = new QVBoxLayout;
    box->setSpacing(1);
    box->addWidget(editor);
    box->addWidget(error);
    form->addRow(label, box);
    return error;
}

QString fieldText(const Part &part, const FieldSpec &spec)
{
    const auto it = part.fields.find(std::string(spec.name));
    if (it == part.fields.end())
        return {};
    if (!it->second.text.empty())
        return toQString(it->second.text);
    return toQString(formatEngineering(it->second.si, 4));
}

QString defaultHint(const FieldSpec &spec)
{
    if (std::isinf(spec.defaultValue))
        return QObject::tr("∞ (ideal)");
    if (spec.defaultValue == 0.0)
        return QObject::tr("0 (not given)");
    return toQString(formatValue(spec.defaultValue, spec.kind));
}

QString typeLabel(PartType type)
{
    switch (type) {
    case PartType::Resistor:
        return QObject::tr("resistor");
    case PartType::Capacitor:
        return QObject::tr("capacitor");
    case PartType::Inductor:
        return QObject::tr("inductor");
    case PartType::VSource:
        return QObject::tr("signal source (voltage)");
    case PartType::ISource:
        return QObject::tr("signal source (current)");
    case PartType::GainBlock:
        return QObject::tr("gain block");
    case PartType::Load:
        return QObject::tr("load");
    }
    return {};
}

/// A field in the designer's words, with its unit, and a tooltip that also names the file key.
struct FieldWords
{
    QString label;
    QString tip;
};

FieldWords fieldWords(PartType type, std::string_view field)
{
    struct Entry
    {
        const char *field;
        const char *label;
        const char *tip;
    };
    static const Entry entries[] = {
        {"gain", "open-loop gain", "Low-frequency gain of the block, in V/V or dB (\"110dB\")."},
        {"gbw", "gain-bandwidth (Hz)",
         "Gain-bandwidth product; the first pole sits at gain-bandwidth / gain."},
        {"r_in", "input resistance (Ω)", "Differential resistance between the inputs."},
        {"c_in", "input capacitance (F)", "Differential capacitance between the inputs."},
        {"r_out", "output resistance (Ω)", "Resistance in series with the output."},
        {"en", "voltage noise density (V/√Hz)", "Input voltage noise density, white part."},
        {"en_corner_hz", "voltage noise 1/f corner (Hz)",
         "Below this frequency the voltage noise density rises as 1/√f."},
        {"in", "current noise density (A/√Hz)", "Input current noise density, white part."},
        {"in_corner_hz", "current noise 1/f corner (Hz)",
         "Below this frequency the current noise density rises as 1/√f."},
        {"c_cm", "common-mode capacitance (F)", "Capacitance from each input to ground."},
        {"r_series", "source resistance (Ω)", "Internal resistance in series with the source."},
        {"r_parallel", "source resistance (Ω)", "Internal resistance across the source."},
        {"c_parallel", "source capacitance (F)", "Internal capacitance across the source."},
        {"i_dc", "DC current (A)", "DC current through the source; its shot noise counts."},
    };
    const QString key = QString::fromUtf8(field.data(), qsizetype(field.size()));
    for (const Entry &e : entries) {
        if (field == e.field)
            return {QObject::tr(e.label),
                    QObject::tr("%1 (file key \"%2\")").arg(QObject::tr(e.tip), key)};
    }
    if (field == "value") {
        const QString unit = type == PartType::Resistor ? QStringLiteral("Ω")
            : type == PartType::Capacitor               ? QStringLiteral("F")
                                                        : QStringLiteral("H");
        return {QObject::tr("value (%1)").arg(unit),
                QObject::tr("Value; wheel over the part steps it through its E-series.")};
    }
    if (type == PartType::Load && field == "r")
        return {QObject::tr("load resistance (Ω)"), QObject::tr("Resistance of the load.")};
    if (type == PartType::Load && field == "c")
        return {QObject::tr("load capacitance (F)"), QObject::tr("Capacitance across the load.")};
    // Any other field in core's words (one label per field: the sheet and `analyze` use them).
    if (const FieldSpec *spec = findFieldSpec(type, field)) {
        const QString label = toQString(spec->label);
        return {spec->unit.empty() ? label
                                   : QStringLiteral("%1 (%2)").arg(label, toQString(spec->unit)),
                QObject::tr("%1 (file key \"%2\")").arg(label, key)};
    }
    return {key, key};
}

const char *kErrorStyle
    = "QLineEdit, QComboBox { border: 1.5px solid #b3261e; background: #fdeceb; }";

} // namespace

Inspector::Inspector(DesignDocument *document, QWidget *parent)
    : QWidget(parent), m_document(document)
{
    auto *layout = new QVBoxLayout(this);
    layout->setContentsMargins(8, 6, 8, 6);
    m_header = new QLabel(this);
    m_header->setWordWrap(true);
    layout->addWidget(m_header);
    layout->addStretch(1);
    showPart({});
}

void Inspector::showPart(const std::string &partId)
{
    m_partId = partId;
    m_edits.clear();
    m_errors.clear();
    m_series = nullptr;
    m_tolerance = nullptr;
    m_toleranceError = nullptr;
    m_presets = nullptr;
    m_name = nullptr;
    m_nameError = nullptr;
    if (m_form) {
        m_form->hide();
        m_form->deleteLater();
        m_form = nullptr;
    }
    const Part *part = m_document->design().findPart(partId);
    if (!part) {
        m_header->setText(tr("<span style='color:#5a6270'>Select a part on the Sketch to edit "
                             "it. Wheel over a part steps its value through its E-series; "
                             "Shift+wheel steps a decade; Ctrl+wheel zooms.</span>"));
        return;
    }
    QStringList nodes;
    const auto &terminals = partSpec(part->type).terminals;
    for (std::size_t i = 0; i < terminals.size() && i < part->nodes.size(); ++i)
        nodes << toQString(terminals[i]) + QStringLiteral(" → ") + toQString(part->nodes[i]);
    m_header->setText(
        QStringLiteral("<b style='font-size:11pt'>%1</b> &nbsp;%2<br>"
                       "<span style='color:#5a6270'>%3</span>")
            .arg(toQString(part->id), typeLabel(part->type), nodes.join(QStringLiteral(", "))));

    m_form = new QWidget(this);
    auto *form = new QFormLayout(m_form);
    form->setContentsMargins(0, 4, 0, 0);
    form->setFieldGrowthPolicy(QFormLayout::AllNonFixedFieldsGrow);
    // Each label above its field: the dock is narrow and the gain block's labels are long,
    // so side by side the fields were squeezed to a few characters.
    form->setRowWrapPolicy(QFormLayout::WrapAllRows);
    m_name = new QLineEdit(toQString(part->id), m_form);
    m_name->setToolTip(tr("The part's name; candidates and the input follow a new name."));
    m_nameError = addRowWithError(form, tr("name"), m_name);
    connect(m_name, &QLineEdit::editingFinished, this, [this] {
        const std::string to = toStdString(m_name->text().trimmed());
        if (to == m_partId)
            return;
        QString message;
        const std::string from = m_partId;
        if (m_document->renamePart(from, to, &message))
            showPart(to);
        else
            markError(m_name, m_nameError, message);
    });
    for (const FieldSpec &spec : partSpec(part->type).fields) {
        const std::string field(spec.name);
        auto *edit = new QLineEdit(m_form);
        edit->setText(fieldText(*part, spec));
        if (!spec.required)
            edit->setPlaceholderText(defaultHint(spec));
        const FieldWords words = fieldWords(part->type, spec.name);
        edit->setToolTip(words.tip);
        QLabel *error = addRowWithError(form, words.label, edit);
        m_edits[field] = edit;
        m_errors[field] = error;
        connect(edit, &QLineEdit::editingFinished, this, [this, field] { commitField(field); });
    }
    if (!part->primaryField().empty())
        addSeriesRows(form, *part);
    if (part->type == PartType::GainBlock)
        addGainBlockRows(form, *part);
    static_cast<QVBoxLayout *>(layout())->insertWidget(1, m_form);
}

void Inspector::addSeriesRows(QFormLayout *form, const Part &part)
{
    m_series = new QComboBox(m_form);
    m_series->addItem(tr("none (E24 for stepping)"));
    for (ESeries s : allESeries())
        m_series->addItem(toQString(toString(s)));
    m_series->setCurrentIndex(part.series ? int(*part.series) + 1 : 0);
    form->addRow(tr("series"), m_series);
    connect(m_series, &QComboBox::activated, this, [this](int index) {
        std::optional<ESeries> s;
        if (index > 0)
            s = allESeries()[std::size_t(index - 1)];
        m_document->setSeries(m_partId, s);
    });

    m_tolerance = new QComboBox(m_form);
    m_tolerance->setEditable(true);
    m_tolerance->addItems({QString(), QStringLiteral("0.1%"), QStringLiteral("0.5%"),
                           QStringLiteral("1%"), QStringLiteral("2%"), QStringLiteral("5%"),
                           QStringLiteral("10%"), QStringLiteral("20%")});
    m_tolerance->setCurrentText(part.tolerance ? toQString(part.tolerance->text) : QString());
    m_toleranceError = addRowWithError(form, tr("tolerance"), m_tolerance);
    connect(m_tolerance, &QComboBox::activated, this, [this](int) { commitTolerance(); });
    connect(m_tolerance->lineEdit(), &QLineEdit::editingFinished, this,
            [this] { commitTolerance(); });
}

void Inspector::addGainBlockRows(QFormLayout *form, const Part &part)
{
    for (const char *list : {"poles_hz", "zeros_hz"}) {
        const std::vector<Value> &values
            = std::string(list) == "poles_hz" ? part.polesHz : part.zerosHz;
        QStringList texts;
        for (const Value &v : values)
            texts << (v.text.empty() ? toQString(formatEngineering(v.si, 4)) : toQString(v.text));
        auto *edit = new QLineEdit(texts.join(QStringLiteral(", ")), m_form);
        edit->setPlaceholderText(tr("none"));
        const bool poles = std::string(list) == "poles_hz";
        edit->setToolTip(tr("%1 of the open-loop gain: frequencies in Hz, separated by "
                            "commas (file key \"%2\")")
                             .arg(poles ? tr("Poles") : tr("Zeros"), QString::fromLatin1(list)));
        QLabel *error = addRowWithError(form, poles ? tr("poles (Hz)") : tr("zeros (Hz)"), edit);
        m_edits[list] = edit;
        m_errors[list] = error;
        const std::string name(list);
        connect(edit, &QLineEdit::editingFinished, this, [this, name] {
            QLineEdit *e = fieldEdit(name);
            QString message;
            const bool ok = m_document->setFrequencyListText(m_partId, name, e->text(), &message);
            markError(e, m_errors[name], ok ? QString() : message);
        });
    }
    m_presets = new QComboBox(m_form);
    m_presets->addItem(tr("custom"));
    m_presets->addItems(DesignDocument::gainBlockPresets());
    m_presets->setToolTip(tr("Generic gain blocks with round numbers; no real device is "
                             "modelled. \"custom\": the values are the block's own."));
    m_presets->setCurrentIndex(m_document->gainBlockPresetInEffect(m_partId) + 1);
    form->addRow(tr("preset"), m_presets);
    connect(m_presets, &QComboBox::activated, this, [this](int index) {
        if (index > 0)
            m_document->applyGainBlockPreset(m_partId, index - 1);
        m_presets->setCurrentIndex(m_document->gainBlockPresetInEffect(m_partId) + 1);
    });
    auto *hint = new QLabel(tr("Gain in V/V or dB (\"110dB\"); the gain-bandwidth sets the "
                               "first pole at gain-bandwidth / gain, and the poles listed "
                               "come after it."),
                            m_form);
    hint->setWordWrap(true);
    hint->setStyleSheet(QStringLiteral("color: #5a6270; font-size: 8pt;"));
    form->addRow(hint);
}

void Inspector::refresh()
{
    const Part *part = m_document->design().findPart(m_partId);
    if (!part) {
        showPart({});
        return;
    }
    for (const FieldSpec &spec : partSpec(part->type).fields) {
        const std::string field(spec.name);
        QLineEdit *edit = fieldEdit(field);
        if (!edit || m_errors[field]->isVisible())
            continue;
        const QString text = fieldText(*part, spec);
        if (edit->text() != text)
            edit->setText(text);
    }
    if (part->type == PartType::GainBlock) {
        for (const char *list : {"poles_hz", "zeros_hz"}) {
            QLineEdit *edit = fieldEdit(list);
            if (!edit || m_errors[list]->isVisible())
                continue;
            QStringList texts;
            for (const Value &v : std::string(list) == "poles_hz" ? part->polesHz : part->zerosHz)
                texts << (v.text.empty() ? toQString(formatEngineering(v.si, 4))
                                         : toQString(v.text));
            edit->setText(texts.join(QStringLiteral(", ")));
        }
    }
    if (m_series)
        m_series->setCurrentIndex(part->series ? int(*part->series) + 1 : 0);
    if (m_presets)
        m_presets->setCurrentIndex(m_document->gainBlockPresetInEffect(m_partId) + 1);
    if (m_tolerance && !m_toleranceError->isVisible())
        m_tolerance->setCurrentText(part->tolerance ? toQString(part->tolerance->text) : QString());
}

QLineEdit *Inspector::fieldEdit(const std::string &field) const
{
    const auto it = m_edits.find(field);
    return it == m_edits.end() ? nullptr : it->second;
}

QString Inspector::fieldLabel(const std::string &field) const
{
    QLineEdit *edit = fieldEdit(field);
    auto *form = m_form ? qobject_cast<QFormLayout *>(m_form->layout()) : nullptr;
    if (!edit || !form)
        return {};
    for (int row = 0; row < form->rowCount(); ++row) {
        QLayoutItem *fieldItem = form->itemAt(row, QFormLayout::FieldRole);
        QLayout *box = fieldItem ? fieldItem->layout() : nullptr;
        if (box && box->indexOf(edit) >= 0) {
            if (auto *label
                = qobject_cast<QLabel *>(form->itemAt(row, QFormLayout::LabelRole)->widget()))
                return label->text();
        }
    }
    return {};
}

QString Inspector::fieldError(const std::string &field) const
{
    const auto it = m_errors.find(field);
    return it == m_errors.end() || it->second->isHidden() ? QString() : it->second->text();
}

void Inspector::markError(QWidget *widget, QLabel *label, const QString &message)
{
    widget->setStyleSheet(message.isEmpty() ? QString() : QString::fromLatin1(kErrorStyle));
    widget->setToolTip(message);
    label->setText(message);
    label->setVisible(!message.isEmpty());
}

void Inspector::commitField(const std::string &field)
{
    QLineEdit *edit = fieldEdit(field);
    if (!edit)
        return;
    QString error;
    const bool ok = m_document->setFieldText(m_partId, field, edit->text(), &error);
    markError(edit, m_errors[field], ok ? QString() : error);
}

void Inspector::commitTolerance()
{
    if (!m_tolerance)
        return;
    QString error;
    const bool ok = m_document->setToleranceText(m_partId, m_tolerance->currentText(), &error);
    markError(m_tolerance, m_toleranceError, ok ? QString() : error);
}

} // namespace loopsketch::ui
