#include "sketch/designpropertiespanel.h"

#include "support/errorline.h"
#include "support/qtadapter.h"
#include "window/designdocument.h"

#include "loopsketch/base/value.h"
#include "loopsketch/design/designfile.h"

#include <QComboBox>
#include <QEvent>
#include <QFormLayout>
#include <QJsonArray>
#include <QJsonDocument>
#include <QJsonObject>
#include <QLabel>
#include <QLineEdit>
#include <QPlainTextEdit>
#include <QSpinBox>
#include <QVBoxLayout>

#include <cmath>
#include <utility>

namespace loopsketch::ui {

namespace {

QString valueText(const std::optional<Value> &v)
{
    if (!v)
        return {};
    return v->text.empty() ? toQString(formatEngineering(v->si, 4)) : toQString(v->text);
}

QString valueText(const Value &v)
{
    return valueText(std::optional<Value>(v));
}

struct Row
{
    const char *key;
    const char *label;
    const char *tip;
    const char *placeholder;
};

/// Adds `row` to `form` of `panel`: its label and a line edit above a hidden error label.
std::pair<QLineEdit *, QLabel *> addEditRow(DesignPropertiesPanel *panel, QFormLayout *form,
                                            const Row &row)
{
    auto *edit = new QLineEdit(panel);
    edit->setObjectName(QString::fromLatin1(row.key));
    edit->setPlaceholderText(DesignPropertiesPanel::tr(row.placeholder));
    edit->setToolTip(DesignPropertiesPanel::tr(row.tip));
    QLabel *error = nullptr;
    QVBoxLayout *box = withErrorLine(edit, error);
    auto *label = new QLabel(DesignPropertiesPanel::tr(row.label), panel);
    label->setToolTip(DesignPropertiesPanel::tr(row.tip));
    form->addRow(label, box);
    return {edit, error};
}

} // namespace

DesignPropertiesPanel::DesignPropertiesPanel(DesignDocument *document, QWidget *parent)
    : QWidget(parent), m_document(document)
{
    auto *outer = new QVBoxLayout(this);
    outer->setContentsMargins(6, 4, 6, 4);
    auto *form = new QFormLayout;
    form->setRowWrapPolicy(QFormLayout::WrapAllRows);
    form->setFieldGrowthPolicy(QFormLayout::AllNonFixedFieldsGrow);
    outer->addLayout(form);

    auto addEdit = [&](const Row &row) {
        auto [edit, error] = addEditRow(this, form, row);
        m_edits[row.key] = edit;
        m_errors[row.key] = error;
        const std::string key = row.key;
        connect(edit, &QLineEdit::editingFinished, this, [this, key] { commit(key); });
    };

    addEdit({"title", "title", "The design's name, shown on the review sheet.", "untitled"});
    m_notes = new QPlainTextEdit(this);
    m_notes->setObjectName(QStringLiteral("notes"));
    m_notes->setToolTip(tr("Free text kept with the design (applied when you leave the box)."));
    m_notes->setFixedHeight(54);
    m_notes->installEventFilter(this);
    form->addRow(tr("notes"), m_notes);

    m_input = new QComboBox(this);
    m_input->setObjectName(QStringLiteral("input"));
    m_input->setToolTip(tr("The signal source whose value the gain is referred to."));
    m_inputHint = new QLabel(this);
    m_inputHint->setWordWrap(true);
    m_inputHint->setStyleSheet(QStringLiteral("color: #5a606b; font-size: 8pt;"));
    auto *inputBox = new QVBoxLayout;
    inputBox->setSpacing(1);
    inputBox->addWidget(m_input);
    inputBox->addWidget(m_inputHint);
    form->addRow(tr("signal source"), inputBox);
    onChoice(m_input, tr("Signal source"),
             [](Design &d, const QVariant &choice) { d.input = toStdString(choice.toString()); });

    m_output = new QComboBox(this);
    m_output->setObjectName(QStringLiteral("output"));
    m_output->addItem(tr("voltage across the load"), int(OutputKind::Voltage));
    m_output->addItem(tr("current through the load"), int(OutputKind::Current));
    m_output->setToolTip(tr("What the closed-loop gain delivers at the load."));
    form->addRow(tr("output"), m_output);
    onChoice(m_output, tr("Output"),
             [](Design &d, const QVariant &choice) { d.output = OutputKind(choice.toInt()); });

    addEdit({"sweep_start", "sweep start (Hz)", "Lowest frequency of every plot.", "1"});
    addEdit({"sweep_stop", "sweep stop (Hz)", "Highest frequency of every plot.", "1G"});
    m_points = new QSpinBox(this);
    m_points->setObjectName(QStringLiteral("points_per_decade"));
    m_points->setRange(1, 2000);
    m_points->setToolTip(tr("Frequencies computed per decade of the sweep."));
    form->addRow(tr("points per decade"), m_points);
    connect(m_points, &QSpinBox::editingFinished, this, [this] {
        if (m_refreshing || m_points->value() == m_document->design().sweep.pointsPerDecade)
            return;
        Design after = m_document->design();
        after.sweep.pointsPerDecade = m_points->value();
        m_document->setProperties(after, tr("Sweep: %1 points per decade").arg(m_points->value()));
    });
    addEdit({"temperature", "temperature",
             "Temperature of the resistors for their thermal noise: kelvin (300, \"300 K\") or "
             "degrees Celsius (\"25 °C\"). Empty: 25 °C.",
             "25 °C"});

    addEdit({"noise_band_low", "noise band from (Hz)",
             "Lower end of the band the output noise rms is integrated over. Both ends empty: "
             "from the sweep start until the integral has settled.",
             "sweep start"});
    addEdit({"noise_band_high", "noise band to (Hz)",
             "Upper end of the band the output noise rms is integrated over.", "until settled"});
    addEdit({"noise_spot_hz", "spot noise at (Hz)",
             "Frequency of the spot noise densities (output and input-referred) and the spot "
             "noise figure. Empty: 1 kHz.",
             "1 kHz"});
    addEdit({"signal_level", "full-scale signal (peak, V or A)",
             "Peak of a full-scale sine at the signal source: the signal of the SNR, the output "
             "peak and the slew rate it needs. Empty: no SNR.",
             "—"});

    auto *specsTitle = new QLabel(tr("<b>Specs</b> (empty: not checked)"), this);
    form->addRow(specsTitle);
    addEdit({"gain_min", "gain, lowest", "Lowest acceptable closed-loop gain (signed).", "—"});
    addEdit({"gain_max", "gain, highest", "Highest acceptable closed-loop gain (signed).", "—"});
    addEdit({"bandwidth_min", "bandwidth, least (Hz)",
             "Least acceptable closed-loop -3 dB bandwidth.", "—"});
    addEdit({"phase_margin_min_deg", "phase margin, least (°)",
             "Least acceptable phase margin of the loop, in degrees.", "—"});
    addEdit({"output_noise_max", "output noise, most (rms)",
             "Largest acceptable output noise rms over the noise band (V, or A for a current "
             "output).",
             "—"});
    addEdit({"snr_min_db", "SNR, least (dB)",
             "Least acceptable signal-to-noise ratio of the full-scale sine over the noise band, "
             "in dB. Needs the full-scale signal.",
             "—"});
    outer->addStretch(1);

    connect(m_document, &DesignDocument::designReset, this, &DesignPropertiesPanel::refresh);
    connect(m_document, &DesignDocument::structureChanged, this, &DesignPropertiesPanel::refresh);
    refresh();
}

QLineEdit *DesignPropertiesPanel::edit(const std::string &key) const
{
    const auto it = m_edits.find(key);
    return it == m_edits.end() ? nullptr : it->second;
}

QString DesignPropertiesPanel::error(const std::string &key) const
{
    const auto it = m_errors.find(key);
    return it == m_errors.end() || it->second->isHidden() ? QString() : it->second->text();
}

void DesignPropertiesPanel::refresh()
{
    m_refreshing = true;
    const Design &d = m_document->design();
    auto set = [this](const char *key, const QString &text) {
        QLineEdit *e = m_edits.at(key);
        if (!e->hasFocus() || !m_errors.at(key)->isHidden())
            e->setText(text);
        m_errors.at(key)->hide();
        e->setStyleSheet(QString());
    };
    set("title", toQString(d.title));
    if (!m_notes->hasFocus())
        m_notes->setPlainText(toQString(d.notes));
    set("sweep_start", valueText(d.sweep.start));
    set("sweep_stop", valueText(d.sweep.stop));
    m_points->setValue(d.sweep.pointsPerDecade);
    set("temperature", valueText(d.temperature));
    set("noise_band_low", d.noiseBand ? valueText(d.noiseBand->low) : QString());
    set("noise_band_high", d.noiseBand ? valueText(d.noiseBand->high) : QString());
    set("gain_min", valueText(d.specs.gainMin));
    set("gain_max", valueText(d.specs.gainMax));
    set("bandwidth_min", valueText(d.specs.bandwidthMin));
    set("phase_margin_min_deg",
        d.specs.phaseMarginMinDeg ? QString::number(*d.specs.phaseMarginMinDeg) : QString());
    set("noise_spot_hz", valueText(d.noiseSpotHz));
    set("signal_level", valueText(d.signalLevel));
    set("output_noise_max", valueText(d.specs.outputNoiseMax));
    set("snr_min_db", d.specs.snrMinDb ? QString::number(*d.specs.snrMinDb) : QString());
    m_output->setCurrentIndex(d.output == OutputKind::Current ? 1 : 0);

    m_input->clear();
    int sources = 0;
    for (const Part &p : d.parts) {
        if (!partSpec(p.type).isSignalSource)
            continue;
        ++sources;
        m_input->addItem(toQString(p.id), toQString(p.id));
    }
    const int current = m_input->findData(toQString(d.input));
    if (current < 0 && sources > 1) {
        m_input->insertItem(0, tr("choose…"), QString());
        m_input->setCurrentIndex(0);
    } else {
        m_input->setCurrentIndex(std::max(current, 0));
    }
    m_input->setEnabled(sources > 1);
    m_inputHint->setText(sources == 0       ? tr("No signal source yet: place one from Parts.")
                             : sources == 1 ? tr("The only signal source, chosen automatically.")
                             : current < 0  ? tr("Several signal sources: choose the input.")
                                            : QString());
    m_inputHint->setVisible(!m_inputHint->text().isEmpty());
    m_refreshing = false;
}

void DesignPropertiesPanel::showError(const std::string &key, const QString &message)
{
    QLabel *label = m_errors.at(key);
    QLineEdit *e = m_edits.at(key);
    label->setText(message);
    label->setVisible(!message.isEmpty());
    e->setStyleSheet(
        message.isEmpty() ? QString() : QStringLiteral("QLineEdit { border: 1px solid #b3261e; }"));
}

void DesignPropertiesPanel::commit(const std::string &key)
{
    if (m_refreshing)
        return;
    const QString raw = m_edits.at(key)->text().trimmed();
    const std::string text = toStdString(raw);
    Design after = m_document->design();
    auto parse = [&](ValueKind kind, ValueRange range, std::optional<Value> *target,
                     bool optional) -> bool {
        if (text.empty()) {
            if (!optional) {
                showError(key, tr("%1: a value is needed here").arg(QString::fromStdString(key)));
                return false;
            }
            *target = std::nullopt;
            return true;
        }
        auto parsed = parseValue(text, kind, range);
        if (!parsed) {
            Diagnostic d = parsed.diagnostics().front();
            d.field = key;
            showError(key, toQString(d.toString()));
            return false;
        }
        *target = Value{*parsed, text};
        return true;
    };
    QString label;
    if (key == "title") {
        after.title = text;
        label = tr("Title");
    } else if (key == "sweep_start" || key == "sweep_stop") {
        std::optional<Value> v;
        if (!parse(ValueKind::Frequency, ValueRange::Positive, &v, false))
            return;
        (key == "sweep_start" ? after.sweep.start : after.sweep.stop) = *v;
        if (!(after.sweep.start.si < after.sweep.stop.si)) {
            showError(key,
                      tr("%1: the sweep must start below where it stops")
                          .arg(QString::fromStdString(key)));
            return;
        }
        label = tr("Sweep");
    } else if (key == "temperature") {
        if (!readTemperature(raw, after))
            return;
        label = tr("Temperature");
    } else if (key == "noise_band_low" || key == "noise_band_high") {
        std::optional<Value> v;
        if (!parse(ValueKind::Frequency, ValueRange::Positive, &v, true)
            || !readNoiseBand(key, v, after))
            return;
        label = tr("Noise band");
    } else if (key == "gain_min" || key == "gain_max") {
        if (!parse(ValueKind::Gain, ValueRange::Any,
                   key == "gain_min" ? &after.specs.gainMin : &after.specs.gainMax, true))
            return;
        if (after.specs.gainMin && after.specs.gainMax
            && after.specs.gainMin->si > after.specs.gainMax->si) {
            showError(
                key,
                tr("%1: the lowest gain lies above the highest").arg(QString::fromStdString(key)));
            return;
        }
        label = tr("Gain spec");
    } else if (key == "bandwidth_min") {
        if (!parse(ValueKind::Frequency, ValueRange::Positive, &after.specs.bandwidthMin, true))
            return;
        label = tr("Bandwidth spec");
    } else if (key == "phase_margin_min_deg") {
        std::optional<Value> v;
        if (!parse(ValueKind::Plain, ValueRange::Any, &v, true))
            return;
        if (v && (v->si <= 0 || v->si >= 180)) {
            showError(key,
                      tr("%1: a phase margin lies between 0 and 180 degrees")
                          .arg(QString::fromStdString(key)));
            return;
        }
        after.specs.phaseMarginMinDeg = v ? std::optional<double>(v->si) : std::nullopt;
        label = tr("Phase margin spec");
    } else if (key == "noise_spot_hz") {
        if (!parse(ValueKind::Frequency, ValueRange::Positive, &after.noiseSpotHz, true))
            return;
        label = tr("Spot noise frequency");
    } else if (key == "signal_level" || key == "output_noise_max") {
        std::optional<Value> v;
        if (!readVoltageOrCurrent(key, raw, v))
            return;
        if (key == "signal_level") {
            if (!v && after.specs.snrMinDb) {
                showError(key,
                          tr("%1: the SNR spec needs the full-scale signal; clear it first")
                              .arg(QString::fromStdString(key)));
                return;
            }
            after.signalLevel = v;
            label = tr("Full-scale signal");
        } else {
            after.specs.outputNoiseMax = v;
            label = tr("Output noise spec");
        }
    } else if (key == "snr_min_db") {
        std::optional<Value> v;
        if (!parse(ValueKind::Plain, ValueRange::Any, &v, true))
            return;
        if (v && !after.signalLevel) {
            showError(key,
                      tr("%1: give the full-scale signal first").arg(QString::fromStdString(key)));
            return;
        }
        after.specs.snrMinDb = v ? std::optional<double>(v->si) : std::nullopt;
        label = tr("SNR spec");
    }
    showError(key, QString());
    m_document->setProperties(after, label);
}

bool DesignPropertiesPanel::readVoltageOrCurrent(const std::string &key, const QString &raw,
                                                 std::optional<Value> &value)
{
    // A voltage or a current: the loader's own reading of the text.
    value.reset();
    if (raw.isEmpty())
        return true;
    QJsonObject probe{
        {"schema", QString::fromUtf8(kDesignSchema.data(), qsizetype(kDesignSchema.size()))},
        {"parts", QJsonArray()},
        {"input", QString()},
        {"output", QStringLiteral("voltage")}};
    if (key == "signal_level")
        probe.insert(QStringLiteral("signal_level"), raw);
    else
        probe.insert(QStringLiteral("specs"),
                     QJsonObject{{QStringLiteral("output_noise_max"), raw}});
    auto parsed = parseDesign(QJsonDocument(probe).toJson().toStdString(), DesignRules::Draft);
    if (!parsed) {
        Diagnostic d = parsed.diagnostics().front();
        d.field = key;
        showError(key, toQString(d.toString()));
        return false;
    }
    value = key == "signal_level" ? parsed->signalLevel : parsed->specs.outputNoiseMax;
    return true;
}

bool DesignPropertiesPanel::readTemperature(const QString &raw, Design &after)
{
    if (raw.isEmpty()) {
        after.temperature.reset();
        return true;
    }
    // The loader's own reading of the text, so what is stored is what a file holds.
    QJsonObject probe{
        {"schema", QString::fromUtf8(kDesignSchema.data(), qsizetype(kDesignSchema.size()))},
        {"parts", QJsonArray()},
        {"input", QString()},
        {"output", QStringLiteral("voltage")},
        {"temperature", raw}};
    auto parsed = parseDesign(QJsonDocument(probe).toJson().toStdString(), DesignRules::Draft);
    if (!parsed) {
        Diagnostic d = parsed.diagnostics().front();
        showError("temperature", toQString(d.toString()));
        return false;
    }
    after.temperature = parsed->temperature;
    return true;
}

bool DesignPropertiesPanel::readNoiseBand(const std::string &key, const std::optional<Value> &end,
                                          Design &after)
{
    const bool low = key == "noise_band_low";
    const QString other = m_edits.at(low ? "noise_band_high" : "noise_band_low")->text().trimmed();
    if (!end && other.isEmpty()) {
        after.noiseBand.reset();
    } else if (!end || other.isEmpty()) {
        showError(key,
                  tr("%1: give both ends of the noise band, or neither")
                      .arg(QString::fromStdString(key)));
        return false;
    } else {
        std::optional<Value> o;
        auto parsed = parseValue(toStdString(other), ValueKind::Frequency, ValueRange::Positive);
        if (!parsed) {
            showError(
                key,
                tr("%1: the other end is not a frequency yet").arg(QString::fromStdString(key)));
            return false;
        }
        o = Value{*parsed, toStdString(other)};
        NoiseBand band{low ? *end : *o, low ? *o : *end};
        if (!(band.low.si < band.high.si)) {
            showError(
                key,
                tr("%1: the band must start below where it ends").arg(QString::fromStdString(key)));
            return false;
        }
        after.noiseBand = band;
    }
    showError(low ? "noise_band_high" : "noise_band_low", QString());
    return true;
}

void DesignPropertiesPanel::commitNotes()
{
    Design after = m_document->design();
    after.notes = toStdString(m_notes->toPlainText());
    m_document->setProperties(after, tr("Notes"));
}

bool DesignPropertiesPanel::eventFilter(QObject *watched, QEvent *event)
{
    if (watched == m_notes && event->type() == QEvent::FocusOut && !m_refreshing)
        commitNotes();
    return QWidget::eventFilter(watched, event);
}

void DesignPropertiesPanel::onChoice(QComboBox *box, const QString &what,
                                     std::function<void(Design &, const QVariant &)> set)
{
    connect(box, &QComboBox::activated, this, [this, box, what, set = std::move(set)] {
        if (m_refreshing)
            return;
        Design after = m_document->design();
        set(after, box->currentData());
        m_document->setProperties(after, what + QStringLiteral(": ") + box->currentText());
    });
}

} // namespace loopsketch::ui
