#include "panels/scanpanel.h"

#include "support/qtadapter.h"
#include "window/designdocument.h"

#include "loopsketch/analysis/trialmetrics.h"
#include "loopsketch/base/value.h"

#include <QAreaSeries>
#include <QCategoryAxis>
#include <QComboBox>
#include <QLabel>
#include <QLineEdit>
#include <QLineSeries>
#include <QScatterSeries>
#include <QValueAxis>

#include <cmath>
#include <limits>
#include <optional>

namespace loopsketch::ui {

namespace {

constexpr double kNaN = std::numeric_limits<double>::quiet_NaN();

/// The hover line while no point is under the pointer.
QString hoverHint()
{
    return QObject::tr("Point at a value to read every metric there; click it to use it.");
}

} // namespace

ScanChart::ScanChart(QWidget *parent) : PlotPanel(tr("Scan"), parent)
{
    // Room on the right for the last decade's label ("100 pF").
    chart()->setMargins(QMargins(6, 4, 18, 4));
    m_x = addLogAxis(tr("value"), Qt::AlignBottom);
    m_y = addValueAxis(tr("metric"), Qt::AlignLeft);
    m_bandLo = new QLineSeries(this);
    m_bandHi = new QLineSeries(this);
    m_band = new QAreaSeries(m_bandHi, m_bandLo);
    m_band->setName(tr("spec"));
    QColor fill = palette::kGreen;
    fill.setAlphaF(0.15f);
    m_band->setBrush(fill);
    m_band->setPen(QPen(palette::kGreen, 1, Qt::DotLine));
    chart()->addSeries(m_band);
    m_band->attachAxis(m_x);
    m_band->attachAxis(m_y);
    // Short names: the five entries fit one legend row in a 390-pixel dock (1280 x 800).
    m_line = addLine(tr("metric"), QColor(0x88, 0x88, 0x88), Qt::SolidLine, m_x, m_y, false);
    m_current = addLine(tr("now"), palette::kOrange, Qt::DashLine, m_x, m_y);
    m_pass = addMarker(tr("meets specs"), palette::kGreen, m_x, m_y, 9);
    m_fail = addMarker(tr("fails"), palette::kVermillion, m_x, m_y, 9);
    m_fail->setMarkerShape(QScatterSeries::MarkerShapeRectangle);
    m_unstable = addMarker(tr("unstable"), palette::kBlack, m_x, m_y, 9);
    m_unstable->setMarkerShape(QScatterSeries::MarkerShapeRectangle);
    // No axes before the first scan: empty ones lay their titles over each other.
    m_x->setVisible(false);
    m_y->setVisible(false);
    setTitle(tr("no scan yet: choose a part above"));
}

void ScanChart::showScan(const ScanResult &scan, const ScanMetricInfo &metric, double current,
                         double bandLo, double bandHi, const QString &gainUnit)
{
    QList<QPointF> line, pass, fail, unstable;
    double yLo = std::numeric_limits<double>::infinity(), yHi = -yLo;
    for (const ScanRow &row : scan.rows) {
        if (!row.done || row.values.empty())
            continue;
        const OptionalNumber v = row.metrics.*metric.member;
        const double x = std::log10(std::abs(row.values[0]));
        if (!v || !std::isfinite(*v)) {
            // An unstable design has no bandwidth: marked on the axis, not left out silently.
            if (row.metrics.stable && !*row.metrics.stable)
                unstable.append(QPointF(x, kNaN));
            continue;
        }
        const QPointF p(x, *v);
        line.append(p);
        (row.metrics.specsPass.value_or(false) ? pass : fail).append(p);
        if (row.metrics.stable && !*row.metrics.stable)
            unstable.append(p);
        yLo = std::min(yLo, *v);
        yHi = std::max(yHi, *v);
    }
    if (!(yLo <= yHi)) {
        yLo = 0;
        yHi = 1;
    }
    for (double b : {bandLo, bandHi})
        if (std::isfinite(b)) {
            yLo = std::min(yLo, b);
            yHi = std::max(yHi, b);
        }
    const double pad = std::max(1e-12, 0.08 * (yHi - yLo));
    yLo -= pad;
    yHi += pad;
    for (QPointF &p : unstable)
        if (!std::isfinite(p.y()))
            p.setY(yLo + pad / 2);
    const auto &axis = scan.axes.front();
    const double xLo = std::log10(std::abs(axis.values.front())),
                 xHi = std::log10(std::abs(axis.values.back()));
    m_x->setVisible(true);
    m_y->setVisible(true);
    setDecadeRange(m_x, std::floor(xLo), std::ceil(xHi), toStdString(toQString(axis.unit)));
    setNiceRange(m_y, yLo, yHi, 6);
    m_line->replace(line);
    m_pass->replace(pass);
    m_fail->replace(fail);
    m_unstable->replace(unstable);
    const double cx = std::log10(std::abs(current));
    m_current->replace(std::isfinite(cx) ? QList<QPointF>{{cx, yLo}, {cx, yHi}} : QList<QPointF>{});
    const double lo = std::isfinite(bandLo) ? bandLo : yLo,
                 hi = std::isfinite(bandHi) ? bandHi : yHi;
    const bool band = std::isfinite(bandLo) || std::isfinite(bandHi);
    m_bandLo->replace(band ? QList<QPointF>{{std::floor(xLo), lo}, {std::ceil(xHi), lo}}
                           : QList<QPointF>{});
    m_bandHi->replace(band ? QList<QPointF>{{std::floor(xLo), hi}, {std::ceil(xHi), hi}}
                           : QList<QPointF>{});
    m_band->setVisible(band);
    const QString unit = scanMetricUnit(metric, gainUnit);
    m_y->setTitleText(unit.isEmpty() ? metric.name : metric.name + " (" + unit + ")");
    m_x->setTitleText(toQString(axis.name()) + " ("
                      + toQString(axis.series == ESeries::E24 ? "E24" : toString(axis.series))
                      + ")");
    setTitle(tr("%1 against %2, %3 values")
                 .arg(metric.name, toQString(axis.name()))
                 .arg(scan.rows.size()));
}

QPoint ScanChart::positionOf(QScatterSeries *series, QPointF p) const
{
    return mapFromScene(chart()->mapToScene(chart()->mapToPosition(p, series)));
}

void ScanChart::plotClicked(QPoint position)
{
    // The nearest marker within its own size and a little more.
    constexpr int kReach = 9;
    std::optional<QPointF> nearest;
    int best = kReach + 1;
    for (QScatterSeries *s : {m_pass, m_fail})
        for (const QPointF &p : s->points()) {
            const int d = (positionOf(s, p) - position).manhattanLength();
            if (d < best) {
                best = d;
                nearest = p;
            }
        }
    if (nearest)
        emit pointClicked(*nearest);
}

ScanPanel::ScanPanel(DesignDocument *document, QWidget *parent) : ScanRunPanel(document, parent)
{
    m_target = new QComboBox(this);
    m_target->setObjectName(QStringLiteral("scanTarget"));
    m_from = new QLineEdit(this);
    m_to = new QLineEdit(this);
    m_from->setPlaceholderText(tr("a tenth"));
    m_to->setPlaceholderText(tr("ten times"));
    makeRunControls(tr("its series"), tr("Scan"));
    m_hover->setTextInteractionFlags(Qt::TextSelectableByMouse);
    m_hover->setText(hoverHint());
    m_chart = new ScanChart(this);
    for (QLineEdit *end : {m_from, m_to})
        end->setMaximumWidth(end->fontMetrics().horizontalAdvance(end->placeholderText()) + 12);
    layOut({new QLabel(tr("Part"), this), m_target, new QLabel(tr("from"), this), m_from,
            new QLabel(tr("to"), this), m_to},
           tr("Show"), m_chart, 2, false);

    connect(m_target, &QComboBox::currentIndexChanged, this, [this] {
        m_from->clear();
        m_to->clear();
    });
    // A part chosen from the list is scanned at once over its default range (25 values of the
    // demo's CF take a few tens of milliseconds).
    connect(m_target, &QComboBox::activated, this, [this] { run(); });
    connect(m_chart, &ScanChart::pointClicked, this,
            [this](const QPointF &p) { applyRow(rowNear(p.x())); });
    for (QScatterSeries *s : {m_chart->passSeries(), m_chart->failSeries()}) {
        // The line under the chart: the value, the metric shown and the verdict; every
        // metric, one a line, in the tooltip of the point under the pointer.
        connect(s, &QScatterSeries::hovered, this, [this](const QPointF &p, bool state) {
            const int row = rowNear(p.x());
            m_hover->setText(state ? rowSummary(row) : hoverHint());
            m_chart->chart()->setToolTip(
                state ? rowText(row).replace(QStringLiteral(" · "), QStringLiteral("\n"))
                      : QString());
        });
    }
    refreshTargets();
}

QString ScanPanel::finishedText(const ScanResult &scan) const
{
    return scan.cancelled
        ? tr("cancelled after %1 of %2 values").arg(scan.completed).arg(scan.rows.size())
        : QString();
}

void ScanPanel::refreshTargets()
{
    const QString was = m_target->currentText();
    const QSignalBlocker block(m_target);
    m_target->clear();
    m_target->addItems(scanTargetNames(m_document->design()));
    const int at = m_target->findText(was);
    if (at >= 0)
        m_target->setCurrentIndex(at);
}

void ScanPanel::scanPart(const QString &target)
{
    refreshTargets();
    int at = m_target->findText(target);
    if (at < 0) {
        m_target->addItem(target);
        at = m_target->count() - 1;
    }
    m_target->setCurrentIndex(at);
    m_from->clear();
    m_to->clear();
    run();
}

void ScanPanel::scanSelectedOrAsk(const std::vector<std::string> &selected)
{
    refreshTargets();
    for (const std::string &id : selected)
        if (m_target->findText(toQString(id)) >= 0) {
            scanPart(toQString(id));
            return;
        }
    m_target->setFocus();
    m_target->showPopup();
}

void ScanPanel::run()
{
    QString text = m_target->currentText();
    if (!m_from->text().trimmed().isEmpty() || !m_to->text().trimmed().isEmpty())
        text += QLatin1Char(':') + m_from->text().trimmed() + QLatin1Char(':')
            + m_to->text().trimmed();
    auto target = parseScanTarget(toStdString(text), "Part");
    if (!target) {
        setStatus(toQString(target.errorText()));
        return;
    }
    auto axis = resolveScanAxis(m_document->design(), *target, chosenSeries());
    if (!axis) {
        setStatus(toQString(axis.errorText()));
        return;
    }
    startRun(
        {*axis},
        tr("scanning %1 values of %2 …").arg(axis->values.size()).arg(toQString(axis->name())));
}

int ScanPanel::rowNear(double x) const
{
    if (!m_scan)
        return -1;
    int best = -1;
    double distance = 0;
    for (std::size_t i = 0; i < m_scan->rows.size(); ++i) {
        const double d = std::abs(std::log10(std::abs(m_scan->rows[i].values[0])) - x);
        if (best < 0 || d < distance) {
            best = int(i);
            distance = d;
        }
    }
    return best;
}

QString ScanPanel::rowSummary(int index) const
{
    if (!m_scan || index < 0 || std::size_t(index) >= m_scan->rows.size())
        return {};
    const ScanRow &row = m_scan->rows[std::size_t(index)];
    const ScanAxis &axis = m_scan->axes.front();
    const QString value = toQString(axis.name()) + QStringLiteral(" = ")
        + toQString(formatEngineering(row.values[0], 3, axis.unit));
    if (!row.metrics.problem.empty())
        return value + QStringLiteral(": ") + toQString(row.metrics.problem);
    const ScanMetricInfo &m = scanMetricInfos()[std::size_t(metricIndex())];
    return QStringList{
        value,
        m.name + QLatin1Char(' ')
            + scanValueText(row.metrics.*m.member, scanMetricUnit(m, toQString(m_scan->gainUnit))),
        row.metrics.stable.value_or(false) ? tr("stable") : tr("UNSTABLE"),
        row.metrics.specsPass.value_or(false) ? tr("meets every spec") : tr("fails a spec"),
        tr("click to use it")}
        .join(QStringLiteral(" · "));
}

QString ScanPanel::rowText(int index) const
{
    if (!m_scan || index < 0 || std::size_t(index) >= m_scan->rows.size())
        return {};
    const ScanRow &row = m_scan->rows[std::size_t(index)];
    const ScanAxis &axis = m_scan->axes.front();
    const QString gainUnit = toQString(m_scan->gainUnit);
    QStringList parts{toQString(axis.name()) + QStringLiteral(" = ")
                      + toQString(formatEngineering(row.values[0], 3, axis.unit))};
    if (!row.metrics.problem.empty())
        return parts.front() + QStringLiteral(": ") + toQString(row.metrics.problem);
    for (const ScanMetricInfo &m : scanMetricInfos())
        parts.append(m.name + QLatin1Char(' ')
                     + scanValueText(row.metrics.*m.member, scanMetricUnit(m, gainUnit)));
    parts.append(row.metrics.stable.value_or(false) ? tr("stable") : tr("UNSTABLE"));
    parts.append(row.metrics.specsPass.value_or(false) ? tr("meets every spec")
                                                       : tr("fails a spec"));
    return parts.join(QStringLiteral(" · "));
}

bool ScanPanel::applyRow(int index)
{
    if (!m_scan || index < 0 || std::size_t(index) >= m_scan->rows.size())
        return false;
    return applyValues(m_scan->rows[std::size_t(index)].values);
}

void ScanPanel::redraw()
{
    if (!m_scan || m_scan->axes.empty())
        return;
    const ScanMetricInfo &metric = scanMetricInfos()[std::size_t(metricIndex())];
    const Design &d = m_document->design();
    const double current = designValue(m_scan->axes.front());
    // The spec as a band: the gain window, the bandwidth and phase-margin minimums.
    double lo = kNaN, hi = kNaN;
    const Specs &s = d.specs;
    if (metric.member == &ScanMetrics::gain) {
        if (s.gainMin)
            lo = s.gainMin->si;
        if (s.gainMax)
            hi = s.gainMax->si;
    } else if (metric.member == &ScanMetrics::bandwidthHz && s.bandwidthMin) {
        lo = s.bandwidthMin->si;
    } else if (metric.member == &ScanMetrics::phaseMarginDeg && s.phaseMarginMinDeg) {
        lo = *s.phaseMarginMinDeg;
    }
    m_chart->showScan(*m_scan, metric, current, lo, hi, toQString(m_scan->gainUnit));
}

} // namespace loopsketch::ui
