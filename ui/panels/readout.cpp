#include "panels/readout.h"

#include "panels/noisepanel.h"
#include "support/flowlayout.h"
#include "support/qtadapter.h"

#include "loopsketch/analysis/trialmetrics.h"
#include "loopsketch/base/value.h"

#include <QEvent>
#include <QFontMetrics>
#include <QLabel>
#include <QRegularExpression>
#include <QVBoxLayout>

#include <cmath>

namespace loopsketch::ui {

namespace {

/// kFollows: a reading kept for a moment while the one for these values follows (grey).
/// The noise cell greys when the noise of the values shown takes longer than this (the
/// window greys the whole strip after the same time).
constexpr int kNoiseGreysAfterMs = 150;

enum Verdict { kNoVerdict = 0, kPass = 1, kFail = -1, kFollows = 2 };

QString dB(const OptionalNumber &v)
{
    if (!v || !std::isfinite(*v))
        return QStringLiteral("—");
    const double shown = std::abs(*v) < 0.05 ? 0.0 : *v;
    return QString::number(shown, 'f', std::abs(shown) >= 100 ? 0 : 1) + QStringLiteral(" dB");
}

QString signedPct(const OptionalNumber &v)
{
    if (!v || !std::isfinite(*v))
        return QStringLiteral("—");
    if (std::abs(*v) < 0.01)
        return QStringLiteral("< 0.01 %");
    return (*v >= 0 ? QStringLiteral("+") : QString())
        + QString::number(*v, 'f', std::abs(*v) < 10 ? 2 : 1) + QStringLiteral(" %");
}

/// The height of one line of the application font at `points` and `weight`.
int lineHeight(double points, QFont::Weight weight)
{
    QFont font;
    font.setPointSizeF(points);
    font.setWeight(weight);
    return QFontMetrics(font).height();
}

} // namespace

Readout::Readout(QWidget *parent) : QWidget(parent)
{
    m_noiseFollows = new QTimer(this);
    m_noiseFollows->setSingleShot(true);
    m_noiseFollows->setInterval(kNoiseGreysAfterMs);
    connect(m_noiseFollows, &QTimer::timeout, this, [this] {
        Cell &c = cell(9);
        setCell(9, c.title->text(), c.value->text(), c.value->toolTip(), kFollows);
    });
    auto *column = new QVBoxLayout(this);
    column->setContentsMargins(0, 0, 0, 0);
    column->setSpacing(0);
    // The readings flow onto a second line where the window is too narrow for one.
    m_strip = new QWidget(this);
    m_flow = new FlowLayout(m_strip, 18, 4);
    m_flow->setContentsMargins(10, 6, 10, 6);
    m_strip->installEventFilter(this);
    column->addWidget(m_strip);
    // An unstable loop is the first thing the strip says: white on red, the poles below.
    m_banner = new QLabel(this);
    m_banner->setStyleSheet(QStringLiteral("background: #b3261e; color: white; font-size: 9pt; "
                                           "padding: 2px 8px; border-radius: 3px;"));
    m_banner->setTextFormat(Qt::RichText);
    m_banner->hide();
    m_flow->addWidget(m_banner);
    for (int i = 0; i < 10; ++i) {
        auto *holder = new QWidget(m_strip);
        auto *box = new QVBoxLayout(holder);
        box->setContentsMargins(0, 0, 0, 0);
        box->setSpacing(1);
        auto *title = new QLabel(holder);
        auto *value = new QLabel(holder);
        title->setStyleSheet(QStringLiteral("color: #5a6270; font-size: 8pt;"));
        value->setStyleSheet(
            QStringLiteral("color: #1d2127; font-size: 10.5pt; font-weight: 600;"));
        value->setTextInteractionFlags(Qt::TextSelectableByMouse);
        // Heights fixed by the fonts, not by the text: a glyph from a fallback font ("—",
        // "√") would otherwise change the strip's height by a pixel and move the Sketch.
        title->setFixedHeight(lineHeight(8.0, QFont::Normal));
        value->setFixedHeight(lineHeight(10.5, QFont::DemiBold));
        box->addWidget(title);
        box->addWidget(value);
        m_flow->addWidget(holder);
        m_cells.push_back({title, value});
    }
    m_warnings = new QLabel(this);
    m_warnings->setStyleSheet(QStringLiteral("color: #b3261e; padding: 0 10px 6px 10px;"));
    m_warnings->setWordWrap(true);
    m_warnings->setTextInteractionFlags(Qt::TextSelectableByMouse);
    m_warnings->hide();
    column->addWidget(m_warnings);
    setAutoFillBackground(true);
    QPalette p = palette();
    p.setColor(QPalette::Window, QColor(0xf3, 0xf5, 0xf8));
    setPalette(p);
}

void Readout::resizeEvent(QResizeEvent *event)
{
    QWidget::resizeEvent(event);
    fitStripHeight();
}

bool Readout::eventFilter(QObject *watched, QEvent *event)
{
    // A reading that changes its size (a longer number, the banner's style applied when first
    // shown) re-lays the strip out: its height follows at once, not at the next analysis, so
    // the strip never hides a line and the Sketch below does not jump on the first edit.
    if (watched == m_strip && event->type() == QEvent::LayoutRequest)
        fitStripHeight();
    return QWidget::eventFilter(watched, event);
}

void Readout::fitStripHeight()
{
    // The main window's dock area does not ask for a height for a width: say it instead.
    const int height = m_flow->heightForWidth(width());
    if (m_strip->minimumHeight() != height)
        m_strip->setMinimumHeight(height);
}

Readout::Cell &Readout::cell(int index)
{
    return m_cells.at(std::size_t(index));
}

void Readout::setCell(int index, const QString &title, const QString &value, const QString &tooltip,
                      int verdict)
{
    Cell &c = cell(index);
    if (c.title->text() != title)
        c.title->setText(title);
    if (c.value->text() != value)
        c.value->setText(value);
    c.value->setToolTip(tooltip);
    c.title->setToolTip(tooltip);
    QString colour = QStringLiteral("#1d2127");
    if (verdict == kPass)
        colour = QStringLiteral("#00734f");
    else if (verdict == kFail)
        colour = QStringLiteral("#b3261e");
    else if (verdict == kFollows)
        colour = QStringLiteral("#8a9099");
    // Restyling re-polishes the label, which costs more than the whole text update.
    const QString style
        = QStringLiteral("color: %1; font-size: 10.5pt; font-weight: 600;").arg(colour);
    if (c.value->styleSheet() != style)
        c.value->setStyleSheet(style);
}

void Readout::showUnavailable(const QString &reason)
{
    m_noiseFollows->stop();
    if (m_cells.empty())
        setCell(0, tr("closed-loop gain, exact"), QStringLiteral("—"));
    for (int i = 0; i < int(m_cells.size()); ++i) {
        // A title that carries numbers of the last analysis (a noise band) loses them.
        QString title = m_cells[std::size_t(i)].title->text();
        if (title.contains(QRegularExpression(QStringLiteral("\\d"))))
            title = title.section(QStringLiteral(", "), 0, 0);
        setCell(i, title, QStringLiteral("—"), tr("Not analysed: %1").arg(reason), kNoVerdict);
    }
    fitStripHeight();
}

void Readout::showAnalysis(const Analysis &a, const Design &design, bool noiseFollows)
{
    const std::string &unit = a.gainUnit;
    const Specs &specs = design.specs;
    // Core's spec check, the one the sheet, the Candidates panel and the spread yield use.
    const SpecCheck check = checkSpecs(specs, design.sweep, trialMetricsOf(a));
    showStability(a);
    const QString unstable = a.stabilityKnown ? tr("— (unstable)") : tr("— (stability unknown)");
    const QString unstableTip = a.stabilityKnown
        ? tr("no closed-loop value: the loop is unstable")
        : tr("no closed-loop value: the loop's stability is unknown");

    // Closed-loop gain (exact), checked against the spec window.
    int gainVerdict = kNoVerdict;
    QString gainSpec;
    if (specs.gainMin || specs.gainMax) {
        gainVerdict = check.gain ? kPass : kFail;
        gainSpec = tr("spec %1 … %2")
                       .arg(specs.gainMin ? engineering(specs.gainMin->si, unit) : QString("—"),
                            specs.gainMax ? engineering(specs.gainMax->si, unit) : QString("—"));
    }
    setCell(0, tr("closed-loop gain, exact"), engineering(a.exact.gain, unit, 4), gainSpec,
            gainVerdict);

    if (a.twoPort) {
        setCell(1, tr("two-port estimate"),
                engineering(a.twoPort->gain, unit, 4) + QStringLiteral("  (")
                    + signedPct(a.twoPort->gainErrorPct) + QStringLiteral(")"),
                tr("two-port estimate of the closed-loop gain, error against the exact "
                   "solution in brackets"));
    } else {
        setCell(1, tr("two-port estimate"), QStringLiteral("—"),
                a.topology ? toQString(a.twoPortProblem) : toQString(a.topologyReason));
    }

    const OptionalNumber t0 = a.returnRatio.loopGain;
    setCell(2, tr("loop gain T at DC"),
            t0 ? engineering(t0, "") + QStringLiteral("  (") + dB(toDecibels(std::abs(*t0)))
                    + QStringLiteral(")")
               : QStringLiteral("—"),
            tr("return ratio at DC, a pure ratio (no unit)"));
    setCell(3, tr("desensitivity 1+T"), dB(a.desensitivityDb), tr("at DC"));

    if (a.twoPort) {
        setCell(4, tr("loading in / out"),
                dB(a.twoPort->inputLoadingDb) + QStringLiteral(" / ")
                    + dB(a.twoPort->outputLoadingDb),
                tr("gain lost to the feedback network's loading at the input and the output "
                   "port"));
    } else {
        setCell(4, tr("loading in / out"), QStringLiteral("—"));
    }

    int bwVerdict = kNoVerdict;
    QString bwSpec;
    if (specs.bandwidthMin) {
        bwVerdict = check.bandwidth ? kPass : kFail;
        bwSpec = tr("spec ≥ %1").arg(engineering(specs.bandwidthMin->si, "Hz"));
    }
    // No -3 dB point inside the sweep: the closed loop is flat beyond its end.
    setCell(5, tr("bandwidth −3 dB"),
            !a.stable           ? unstable
                : a.bandwidthHz ? engineering(a.bandwidthHz, "Hz")
                                : QStringLiteral("> ") + engineering(design.sweep.stop.si, "Hz"),
            a.stable ? bwSpec : unstableTip, bwVerdict);

    int pmVerdict = kNoVerdict;
    QString pmSpec;
    if (specs.phaseMarginMinDeg) {
        pmVerdict = check.phaseMargin ? kPass : kFail;
        pmSpec = tr("spec ≥ %1").arg(degrees(specs.phaseMarginMinDeg));
    }
    setCell(6, tr("phase margin"), degrees(a.margins.phaseMarginDeg),
            pmSpec
                + (a.margins.crossoverHz
                       ? tr("  crossover %1").arg(engineering(a.margins.crossoverHz, "Hz"))
                       : QString()),
            pmVerdict);
    if (a.stable)
        setCell(7, tr("peaking"), dB(a.peakingDb),
                a.feedthroughDb
                    ? tr("feedthrough rises to %1 above the passband").arg(dB(a.feedthroughDb))
                    : QString());
    else
        setCell(7, tr("peaking"), unstable, unstableTip);
    showSpecVerdicts(a);
    if (noiseFollows)
        showNoiseFollows();
    else
        showNoise(a, specs, check);
    showWarnings(a);
    fitStripHeight();
}

void Readout::showStability(const Analysis &a)
{
    if (a.stable) {
        m_banner->hide();
        m_banner->clear();
    } else if (!a.stabilityKnown) {
        m_banner->setText(QStringLiteral("<b style=\"font-size: 11pt\">STABILITY UNKNOWN</b><br>")
                          + toQString(a.closedLoopReason).toHtmlEscaped());
        m_banner->setToolTip(toQString(a.closedLoopReason));
        m_banner->show();
    } else {
        const QString poles = unstablePolesText(a, 1);
        m_banner->setText(
            QStringLiteral("<b style=\"font-size: 11pt\">UNSTABLE</b><br>")
            + (a.rhpPoles == 1 ? tr("1 RHP pole: %1") : tr("%1 RHP poles: %2").arg(a.rhpPoles))
                  .arg(poles.toHtmlEscaped()));
        m_banner->setToolTip(toQString(a.closedLoopReason) + QStringLiteral("\n")
                             + unstablePolesText(a, 20));
        m_banner->show();
    }
}

void Readout::showSpecVerdicts(const Analysis &a)
{
    // The failing specs by name, their reasons in the tooltip (core's specVerdicts(), the
    // same verdicts as checkSpecs(): an unstable loop fails every spec, reason "unstable").
    if (!a.stable) {
        const std::string failing = failingSpecLabels(a.specs);
        setCell(8, tr("specs"),
                failing.empty()
                    ? (a.stabilityKnown ? tr("fail: unstable") : tr("fail: stability unknown"))
                    : (a.stabilityKnown ? tr("fails: %1 (unstable)")
                                        : tr("fails: %1 (stability unknown)"))
                          .arg(toQString(failing)),
                toQString(a.closedLoopReason), kFail);
    } else if (a.specs.empty()) {
        setCell(8, tr("specs"), tr("none set"));
    } else {
        QString reasons;
        for (const SpecVerdict &v : a.specs)
            reasons += (reasons.isEmpty() ? QString() : QStringLiteral("\n")) + toQString(v.label)
                + QStringLiteral(": ") + (v.pass ? tr("pass") : tr("fail"))
                + (v.reason.empty() ? QString() : QStringLiteral(" (") + toQString(v.reason) + ")");
        const std::string failing = failingSpecLabels(a.specs);
        if (failing.empty())
            setCell(8, tr("specs"), tr("all pass (%1)").arg(a.specs.size()), reasons, kPass);
        else
            setCell(8, tr("specs"), tr("fails: %1").arg(toQString(failing)), reasons, kFail);
    }
}

void Readout::showNoise(const Analysis &a, const Design &design)
{
    showNoise(a, design.specs, checkSpecs(design.specs, design.sweep, trialMetricsOf(a)));
}

void Readout::showNoiseFollows()
{
    // The noise of these values follows in a moment (the noise pass is a fraction of the
    // analysis): the last reading stays, so the strip does not flicker, and its tooltip says
    // whose it is; if the noise takes longer than the window's pending delay, it greys.
    Cell &c = cell(9);
    const bool shown = !c.value->text().isEmpty() && c.value->text() != QStringLiteral("—");
    const QString tip = tr("the noise for these values follows (the reading is that of the "
                           "previous values)");
    if (!shown) {
        setCell(9, tr("rms noise"), QStringLiteral("…"), tip, kFollows);
        return;
    }
    c.value->setToolTip(tip);
    c.title->setToolTip(tip);
    m_noiseFollows->start();
}

void Readout::showNoise(const Analysis &a, const Specs &specs, const SpecCheck &check)
{
    m_noiseFollows->stop();
    const QString unstable = a.stabilityKnown ? tr("— (unstable)") : tr("— (stability unknown)");
    const QString unstableTip = a.stabilityKnown
        ? tr("no closed-loop value: the loop is unstable")
        : tr("no closed-loop value: the loop's stability is unknown");
    // Integrated noise over core's band, referred to the output and to the input.
    if (a.noise && (a.noise->outputRms || a.noise->inputRms)) {
        const NoiseAnalysis &n = *a.noise;
        const NoiseUnitText u = noiseUnits(a);
        const auto rms = [](const OptionalNumber &v, const QString &symbol) {
            return v && std::isfinite(*v) ? toQString(formatEngineering(*v, 3, toStdString(symbol)))
                                          : QStringLiteral("—");
        };
        // Short title and value: the strip sets the window's minimum width (under 1280 px).
        QString value
            = rms(n.outputRms, u.output) + QStringLiteral(" / ") + rms(n.inputRms, u.input);
        if (n.snrDb)
            value += tr(", SNR %1 dB").arg(*n.snrDb, 0, 'f', 1);
        QString tip
            = tr("integrated noise: at the output / referred to the input, at %1 K\nband: %2")
                  .arg(n.temperatureK, 0, 'f', 2)
                  .arg(toQString(n.bandMethod));
        tip += tr("\nspot noise at %1: %2 / %3")
                   .arg(toQString(formatEngineering(n.spot.atHz, 4, "Hz")),
                        rms(n.spot.outputDensity, u.output + QStringLiteral("/√Hz")),
                        rms(n.spot.inputDensity, u.input + QStringLiteral("/√Hz")));
        if (n.snrDb && n.signalLevel)
            tip += tr("\nSNR of a full-scale sine of %1 peak: %2 dB")
                       .arg(rms(n.signalLevel, u.input))
                       .arg(*n.snrDb, 0, 'f', 2);
        if (n.outputPeak && n.slewRate)
            tip += tr("\noutput peak %1, slew rate needed %2")
                       .arg(rms(n.outputPeak, u.output),
                            rms(n.slewRate, u.output + QStringLiteral("/s")));
        if (n.noiseFigureDb)
            tip += tr("\nnoise figure %1 dB over the band (IEEE, T0 = 290 K)")
                       .arg(*n.noiseFigureDb, 0, 'f', 2);
        const bool noiseSpec = specs.outputNoiseMax || specs.snrMinDb;
        setCell(9, tr("rms noise, %1").arg(noiseBandText(n)), value, tip,
                !noiseSpec                           ? kNoVerdict
                    : check.outputNoise && check.snr ? kPass
                                                     : kFail);
    } else {
        setCell(9, tr("rms noise"), a.stable ? QStringLiteral("—") : unstable,
                !a.stable     ? unstableTip
                    : a.noise ? tr("no integrated noise: the gain is zero within the sweep")
                              : toQString(a.noiseProblem));
    }
}

void Readout::showWarnings(const Analysis &a)
{
    // Numbers whose accuracy the solver could not assure, or values no real part has.
    if (a.warnings.empty()) {
        m_warnings->hide();
        m_warnings->clear();
    } else {
        QStringList all;
        for (const Diagnostic &w : a.warnings)
            all << toQString(w.toString());
        QString text = tr("Warning: %1").arg(all.front());
        if (all.size() > 1)
            text += tr("  (and %n more)", nullptr, int(all.size() - 1));
        m_warnings->setText(text);
        m_warnings->setToolTip(all.join(QLatin1Char('\n')));
        m_warnings->show();
    }
}

QString Readout::warningText() const
{
    return m_warnings->isVisible() || !m_warnings->text().isEmpty() ? m_warnings->text()
                                                                    : QString();
}

QString Readout::plainText() const
{
    QStringList lines;
    for (const Cell &c : m_cells)
        lines << c.title->text() + QStringLiteral(": ") + c.value->text();
    if (!m_warnings->text().isEmpty())
        lines << m_warnings->text();
    return lines.join(QLatin1Char('\n'));
}

QString Readout::bannerText() const
{
    return m_banner->isHidden() ? QString() : m_banner->text();
}

QString Readout::cellText(const QString &title) const
{
    for (const Cell &c : m_cells) {
        if (c.title->text() == title)
            return c.value->text();
    }
    return {};
}

} // namespace loopsketch::ui
