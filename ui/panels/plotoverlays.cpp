// PlotPanel's candidate overlays: one dashed copy of each curve per pinned candidate, their
// series kept by slot, and the legend that names them.
#include "panels/plotpanel.h"

#include "support/qtadapter.h"

#include <QChart>
#include <QLegend>
#include <QLegendMarker>
#include <QLineSeries>
#include <QScatterSeries>
#include <QTimer>
#include <QToolButton>

namespace loopsketch::ui {

void PlotPanel::enableOverlays(QAbstractAxis *x)
{
    m_overlayX = x;
    if (m_overlayAction)
        return;
    m_overlayAction = new QAction(tr("Overlay candidates"), this);
    m_overlayAction->setCheckable(true);
    m_overlayAction->setToolTip(
        tr("Overlay the pinned candidates' curves (thin, dashed, each named in the legend)"));
    addAction(m_overlayAction);
    setContextMenuPolicy(Qt::ActionsContextMenu);
    m_overlayButton = new QToolButton(this);
    m_overlayButton->setDefaultAction(m_overlayAction);
    m_overlayButton->setAutoRaise(true);
    m_overlayButton->setToolButtonStyle(Qt::ToolButtonTextOnly);
    QFont f = m_overlayButton->font();
    f.setPointSizeF(7.5);
    m_overlayButton->setFont(f);
    m_overlayButton->adjustSize();
    m_overlayButton->move(width() - m_overlayButton->width() - 4, 2);
    connect(m_overlayAction, &QAction::toggled, this, [this] { rebuildOverlays(); });
}

void PlotPanel::setOverlaySources(std::vector<OverlaySource> sources)
{
    m_overlaySources = std::move(sources);
    if (m_overlayAction && (m_overlayAction->isChecked() || !m_overlaySeries.empty()))
        rebuildOverlays();
}

QStringList PlotPanel::overlaySeriesNames() const
{
    QStringList names;
    for (const QXYSeries *s : m_overlaySeries)
        names << s->name();
    return names;
}

QStringList PlotPanel::legendLabels() const
{
    QStringList labels;
    for (const QLegendMarker *m : chart()->legend()->markers()) {
        if (m->isVisible())
            labels << m->label();
    }
    return labels;
}

void PlotPanel::refreshOverlays()
{
    if (m_overlayAction && (m_overlayAction->isChecked() || !m_overlaySeries.empty()))
        rebuildOverlays();
}

void PlotPanel::removeOverlaySeries(QXYSeries *s)
{
    chart()->removeSeries(s);
    m_fullCurves.erase(s);
    std::erase_if(m_series, [s](const auto &kv) { return kv.second == s; });
    delete s;
}

QXYSeries *PlotPanel::overlaySeries(std::size_t slot, const OverlayLine &line, const QString &name)
{
    QXYSeries *s = slot < m_overlaySeries.size() ? m_overlaySeries[slot] : nullptr;
    const bool isMarkers = s && s->type() == QAbstractSeries::SeriesTypeScatter;
    if (s && (!s->attachedAxes().contains(line.y) || isMarkers != line.markers)) {
        // Same slot, other axis or kind: replaced by a fresh series.
        removeOverlaySeries(s);
        s = nullptr;
    }
    if (!s) {
        if (line.markers) {
            auto *markers = new QScatterSeries;
            markers->setMarkerShape(QScatterSeries::MarkerShapeCircle);
            markers->setMarkerSize(9.0);
            s = markers;
        } else {
            s = new QLineSeries;
        }
        s->setName(name);
        chart()->addSeries(s);
        s->attachAxis(m_overlayX);
        s->attachAxis(line.y);
        if (slot < m_overlaySeries.size())
            m_overlaySeries[slot] = s;
        else
            m_overlaySeries.push_back(s);
        m_series[name] = s;
    } else if (s->name() != name) {
        rename(s, name);
    }
    return s;
}

void PlotPanel::rebuildOverlays()
{
    std::size_t used = 0;
    // A design that cannot be analysed has no candidates to show either.
    const bool unavailable = m_unavailable && m_unavailable->isVisible();
    if (m_overlayAction && m_overlayAction->isChecked() && m_overlayX && !unavailable) {
        for (std::size_t i = 0; i < m_overlaySources.size(); ++i) {
            const OverlaySource &source = m_overlaySources[i];
            if (!source.analysis || source.analysis->frequenciesHz.empty())
                continue;
            const std::vector<OverlayLine> lines = overlayLines(*source.analysis);
            std::vector<PlotCurve> quantities;
            for (const OverlayLine &line : lines)
                quantities.push_back(line.curve);
            const QString legend = overlayLegendText(source.name, quantities);
            for (std::size_t k = 0; k < lines.size(); ++k) {
                const OverlayLine &line = lines[k];
                const QString name = overlayName(source.name, line.curve);
                QXYSeries *s = overlaySeries(used, line, name);
                if (line.markers) {
                    // Hollow: the candidate's colour as the ring, the own poles stay filled.
                    auto *markers = static_cast<QScatterSeries *>(s);
                    markers->setBrush(Qt::NoBrush);
                    markers->setPen(QPen(overlayColour(int(i)), 1.6));
                    s->replace(line.points);
                } else {
                    QPen pen(overlayColour(int(i)), 1.0, overlayStyle(int(i)));
                    pen.setCosmetic(true);
                    pen.setCapStyle(Qt::FlatCap);
                    if (s->pen() != pen)
                        s->setPen(pen);
                    const double xMin = line.points.isEmpty() ? 0.0 : line.points.front().x();
                    const double xMax = line.points.isEmpty() ? 1.0 : line.points.back().x();
                    replaceThinned(s, line.points, xMin, xMax, line.format);
                }
                // One legend entry per candidate naming it and each of its quantities ("Fast:
                // T, gain"): its curves share one colour and dash, and one entry per curve
                // is elided past reading in a panel's width. The series keep their own
                // "candidate: quantity" names for the cursor text.
                for (QLegendMarker *m : chart()->legend()->markers(s)) {
                    m->setVisible(k == 0);
                    if (k == 0 && m->label() != legend)
                        m->setLabel(legend);
                }
                ++used;
            }
        }
    }
    while (m_overlaySeries.size() > used) {
        QXYSeries *s = m_overlaySeries.back();
        m_overlaySeries.pop_back();
        removeOverlaySeries(s);
    }
    // New series' legend entries show only once the legend has laid out (posted).
    QTimer::singleShot(0, this, [this] { placeLegend(); });
    if (std::isfinite(m_cursorAt))
        showFrequencyCursor(m_cursorAt);
}

void PlotPanel::placeLegend()
{
    // Below the plot while the entries fit in one row; beside it, one entry a line, when they
    // would be cut short there (Qt's legend elides rather than wraps).
    QLegend *legend = chart()->legend();
    const QFontMetricsF fm(legend->font());
    double needed = 0;
    for (const QLegendMarker *m : legend->markers()) {
        if (m->isVisible())
            needed += fm.horizontalAdvance(m->label()) + 2.4 * fm.height();
    }
    const Qt::Alignment want
        = needed > chart()->size().width() - 12.0 ? Qt::AlignRight : Qt::AlignBottom;
    if (legend->alignment() != want)
        legend->setAlignment(want);
}

} // namespace loopsketch::ui
