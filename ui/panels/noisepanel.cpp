#include "panels/noisepanel.h"

#include "support/qtadapter.h"

#include "loopsketch/base/value.h"
#include "loopsketch/report/noisenames.h"

#include <QAreaSeries>
#include <QCategoryAxis>
#include <QChart>
#include <QFontMetricsF>
#include <QGraphicsLayout>
#include <QGraphicsRectItem>
#include <QGraphicsSimpleTextItem>
#include <QGraphicsTextItem>
#include <QLegend>
#include <QLegendMarker>
#include <QLineSeries>
#include <QSignalBlocker>
#include <QTextDocument>
#include <QTextOption>

#include <algorithm>
#include <cmath>
#include <numeric>

namespace loopsketch::ui {

namespace {

/// Sources that never reach this share of the power at any frequency are not drawn.
constexpr double kDrawnShare = 0.03;

// Source colours by core's source order, so a source keeps its colour while edits reorder
// the stack. Vermillion is the input-referred curve's and black the total's.
const QColor kSourceColours[]
    = {palette::kBlue,   palette::kOrange, palette::kSkyBlue,       palette::kGreen,
       palette::kPurple, palette::kYellow, QColor(0x99, 0x99, 0x99)};

QColor sourceColour(std::size_t index)
{
    constexpr std::size_t n = std::size(kSourceColours);
    const QColor base = kSourceColours[index % n];
    // A second round of the palette, darker, for designs with many sources.
    return index < n ? base : base.darker(140);
}

// The sweep point nearest log10(f / Hz).
std::size_t nearestIndex(const std::vector<double> &hz, double log10Hz)
{
    std::size_t best = 0;
    for (std::size_t i = 1; i < hz.size(); ++i) {
        if (std::abs(std::log10(hz[i]) - log10Hz) < std::abs(std::log10(hz[best]) - log10Hz))
            best = i;
    }
    return best;
}

QString density(double v, const QString &unit)
{
    return toQString(formatEngineering(v, 3, toStdString(unit) + "/√Hz"));
}

} // namespace

NoiseUnitText noiseUnits(const Analysis &a)
{
    const NoiseUnits u = loopsketch::noiseUnits(a.gainUnit);
    return {toQString(u.output), toQString(u.input)};
}

QString noiseSourceName(const NoiseContribution &c)
{
    return toQString(noiseSourceLabel(c));
}

QString noiseBandText(const NoiseAnalysis &n)
{
    return toQString(formatEngineering(n.bandLowHz, 3, "Hz")) + QStringLiteral("–")
        + toQString(formatEngineering(n.bandHighHz, 3, "Hz"));
}

QString noiseBandKindText(const NoiseAnalysis &n)
{
    switch (n.bandKind) {
    case NoiseBandKind::Given:
        return QObject::tr("noise_band");
    case NoiseBandKind::Converged:
        return QObject::tr("to convergence");
    case NoiseBandKind::SweepStop:
        return QObject::tr("to the sweep stop, not converged");
    }
    return {};
}

std::vector<const NoiseContribution *> noiseSourcesByShare(const NoiseAnalysis &n)
{
    std::vector<const NoiseContribution *> sorted;
    for (const NoiseContribution &c : n.contributions)
        sorted.push_back(&c);
    // Without RMS values (no gain at some frequency) the sweep's summed power orders them.
    const auto weight = [&](const NoiseContribution *c) {
        if (n.outputRms && c->rms)
            return *c->rms;
        return std::accumulate(c->outputPsd.begin(), c->outputPsd.end(), 0.0);
    };
    std::stable_sort(sorted.begin(), sorted.end(),
                     [&](const auto *l, const auto *r) { return weight(l) > weight(r); });
    return sorted;
}

std::optional<double> noiseSharePct(const NoiseAnalysis &n, const NoiseContribution &c)
{
    if (!n.outputRms || !(*n.outputRms > 0) || !std::isfinite(*n.outputRms) || !c.rms)
        return std::nullopt;
    return 100.0 * *c.rms * *c.rms / (*n.outputRms * *n.outputRms);
}

NoisePanel::NoisePanel(QWidget *parent) : PlotPanel(tr("Noise"), parent)
{
    m_x = addLogAxis(tr("frequency (Hz)"), Qt::AlignBottom);
    m_y = addLogAxis(tr("output"), Qt::AlignLeft);
    m_yInput = addLogAxis(tr("input"), Qt::AlignRight);
    m_yInput->setGridLineVisible(false);
    // The right axis reads in the input-referred curve's colour.
    m_yInput->setTitleBrush(curveStyle(PlotCurve::NoiseInput).colour.darker(115));
    m_yInput->setLabelsColor(curveStyle(PlotCurve::NoiseInput).colour.darker(115));
    const CurveStyle &total = curveStyle(PlotCurve::NoiseOutput);
    const CurveStyle &input = curveStyle(PlotCurve::NoiseInput);
    // The cumulative output rms on a second right-hand axis, in its curve's colour: where the
    // curve climbs is where the noise comes from.
    const CurveStyle &cumulative = curveStyle(PlotCurve::NoiseCumulative);
    m_yCumulative = addLogAxis(tr("cumulative rms (V)"), Qt::AlignRight);
    m_yCumulative->setGridLineVisible(false);
    m_yCumulative->setTitleBrush(cumulative.colour.darker(110));
    m_yCumulative->setLabelsColor(cumulative.colour.darker(110));
    m_total = addLine(total.name, total.colour, total.style, m_x, m_y);
    m_input = addLine(input.name, input.colour, input.style, m_x, m_yInput);
    m_cumulative
        = addLine(cumulative.name, cumulative.colour, cumulative.style, m_x, m_yCumulative);
    m_bandEdge = addLine(tr("band"), QColor(0x77, 0x7d, 0x88), Qt::DotLine, m_x, m_y, false);

    QFont f = font();
    f.setPointSizeF(8.5);
    m_bandLabel = new QGraphicsSimpleTextItem(tr("band"), chart());
    QFont bf = m_bandLabel->font();
    bf.setPointSizeF(7.5);
    m_bandLabel->setFont(bf);
    m_bandLabel->setBrush(QColor(0x5a, 0x62, 0x70));
    m_bandLabel->setZValue(10);
    m_bandLabel->setVisible(false);
    m_problem = new QGraphicsTextItem(chart());
    m_problem->setFont(f);
    m_problem->setDefaultTextColor(QColor(0x5a, 0x62, 0x70));
    m_problem->setZValue(30);
    m_problem->setVisible(false);
    m_valuesBox = new QGraphicsRectItem(chart());
    m_valuesBox->setBrush(QColor(255, 255, 255, 225));
    m_valuesBox->setPen(QPen(QColor(0xc8, 0xcd, 0xd4), 1.0));
    m_valuesBox->setZValue(21);
    m_valuesBox->setVisible(false);
    m_valuesText = new QGraphicsSimpleTextItem(chart());
    QFont vf = m_valuesText->font();
    vf.setPointSizeF(8);
    m_valuesText->setFont(vf);
    m_valuesText->setZValue(22);
    m_valuesText->setVisible(false);
    m_figures = new QGraphicsSimpleTextItem(chart());
    QFont ff = m_figures->font();
    ff.setPointSizeF(7.5);
    m_figures->setFont(ff);
    m_figures->setBrush(QColor(0x3a, 0x40, 0x4a));
    m_figures->setZValue(12);
    m_figures->setVisible(false);
    // The figures line sits under the legend, in a margin of its own: never over the bands.
    QMargins margins = chart()->margins();
    margins.setBottom(margins.bottom() + int(std::ceil(QFontMetricsF(ff).height())) + 2);
    chart()->setMargins(margins);
    connect(chart(), &QChart::plotAreaChanged, this, [this] { placeOverlays(); });
    enableOverlays(m_x);
}

std::vector<PlotPanel::OverlayLine> NoisePanel::overlayLines(const Analysis &a) const
{
    if (!a.noise)
        return {};
    QList<QPointF> total, input;
    densityPoints(*a.noise, &total, &input);
    return {{PlotCurve::NoiseOutput, total, m_y, CursorFormat::None}};
}

void NoisePanel::setBandCount(std::size_t count)
{
    // Bands are kept between analyses and only their data, names and colours change:
    // adding or removing series relayouts the chart. Bands no longer needed leave the
    // chart but stay in the pool (their boundary curves are known to PlotPanel's thinning).
    while (m_bands.size() < count) {
        Band b;
        b.upper = new QLineSeries(this);
        b.lower = new QLineSeries(this);
        b.area = new QAreaSeries(this);
        b.area->setUpperSeries(b.upper);
        b.area->setLowerSeries(b.lower);
        m_bands.push_back(b);
    }
    m_shownBands = count;
    bool added = false;
    for (std::size_t k = 0; k < m_bands.size(); ++k) {
        Band &b = m_bands[k];
        const bool inChart = b.area->chart() != nullptr;
        if (k < count && !inChart) {
            chart()->addSeries(b.area);
            b.area->attachAxis(m_x);
            b.area->attachAxis(m_y);
            added = true;
        } else if (k >= count && inChart) {
            chart()->removeSeries(b.area);
            b.area->setParent(this);
            b.source = nullptr;
            replaceThinned(b.upper, {}, 0, 1);
            replaceThinned(b.lower, {}, 0, 1);
        }
    }
    if (!added)
        return;
    // Series paint in the order they were added: the curves go back on top of the bands.
    for (QLineSeries *line : {m_bandEdge, m_total, m_input, m_cumulative}) {
        QAbstractAxis *y = line == m_input ? m_yInput : line == m_cumulative ? m_yCumulative : m_y;
        chart()->removeSeries(line);
        line->setParent(this);
        chart()->addSeries(line);
        line->attachAxis(m_x);
        line->attachAxis(y);
    }
    hideFromLegend(m_bandEdge);
    // A new series hides the legend's marker group until the legend lays out, and a marker
    // hidden while its group is hidden shows again with the group: lay the legend out now
    // so the marker visibility set after this call sticks.
    chart()->legend()->layout()->activate();
}

void NoisePanel::showAnalysis(const Analysis &a)
{
    // While off screen (its tab behind another) the panel keeps what it would draw and
    // draws it when it comes on screen. The frequency axis follows at once, so the linked
    // cursor knows the panel's range.
    const double xLo = a.frequenciesHz.empty() ? 0.0 : std::log10(a.frequenciesHz.front());
    const double xHi = a.frequenciesHz.empty() ? 9.0 : std::log10(a.frequenciesHz.back());
    setDecadeRange(m_x, xLo, xHi, {});
    Pending in{noiseUnits(a), xLo, xHi, a.noise, toQString(a.noiseProblem)};
    if (!m_onScreen) {
        m_pending = std::move(in);
        return;
    }
    m_pending.reset();
    draw(std::move(in));
}

void NoisePanel::setOnScreen(bool onScreen)
{
    m_onScreen = onScreen;
    if (onScreen && m_pending) {
        Pending in = std::move(*m_pending);
        m_pending.reset();
        draw(std::move(in));
    }
}

void NoisePanel::draw(Pending in)
{
    m_units = in.units;
    const double xLo = in.xLo, xHi = in.xHi;

    const bool drawable = in.noise && !in.noise->frequenciesHz.empty()
        && in.noise->outputDensity.size() == in.noise->frequenciesHz.size()
        && std::any_of(in.noise->outputDensity.begin(), in.noise->outputDensity.end(),
                       [](double v) { return std::isfinite(v) && v > 0; });
    if (!drawable) {
        showNoNoise(in);
        return;
    }
    m_problem->setVisible(false);
    if (!m_y->isVisible()) {
        m_y->setVisible(true);
        m_yInput->setVisible(true);
        chart()->legend()->setVisible(true);
    }
    m_noise = std::move(in.noise);
    const NoiseAnalysis &n = *m_noise;
    const std::vector<double> &hz = n.frequenciesHz;

    QList<QPointF> total, input;
    densityPoints(n, &total, &input);
    const auto [bottom, top] = setDensityAxes(total, input);

    const std::vector<const NoiseContribution *> order = noiseSourcesByShare(n);
    drawBands(n, order, bottom, xLo, xHi);
    replaceThinned(m_total, total, xLo, xHi);
    replaceThinned(m_input, input, xLo, xHi);
    QList<QPointF> cumulative;
    for (std::size_t i = 0; i < n.cumulativeRms.size() && i < hz.size(); ++i)
        if (std::isfinite(n.cumulativeRms[i]) && n.cumulativeRms[i] > 0)
            cumulative.append(QPointF(std::log10(hz[i]), std::log10(n.cumulativeRms[i])));
    double cLo = 0, cHi = 0;
    m_yCumulative->setVisible(yRange({&cumulative}, &cLo, &cHi));
    if (m_yCumulative->isVisible()) {
        const double cTop = std::ceil(cHi + 0.05);
        setDecadeRange(m_yCumulative, cTop - (top - bottom), cTop, {});
    }
    replaceThinned(m_cumulative, cumulative, xLo, xHi);

    QList<QPointF> edge;
    if (n.bandHighHz > 0 && n.bandHighHz < hz.back() * (1 - 1e-9)) {
        const double x = std::log10(n.bandHighHz);
        edge = {QPointF(x, bottom), QPointF(x, top)};
    }
    m_bandEdge->replace(edge);
    m_bandEdgeAt = edge.isEmpty() ? std::nan("") : edge.front().x();

    showSummary(n, order);
    placeOverlays();
    showValuesAt(m_cursorAt);
}

void NoisePanel::showNoNoise(const Pending &in)
{
    m_noise.reset();
    setBandCount(0);
    replaceThinned(m_total, {}, in.xLo, in.xHi);
    replaceThinned(m_input, {}, in.xLo, in.xHi);
    replaceThinned(m_cumulative, {}, in.xLo, in.xHi);
    m_yCumulative->setVisible(false);
    m_figures->setVisible(false);
    m_bandEdge->replace(QList<QPointF>{});
    m_bandEdgeAt = std::nan("");
    QString why = !in.noise ? in.problem : tr("no noise source reaches the output");
    if (why.startsWith(QStringLiteral("noise: ")))
        why.remove(0, 7);
    m_problem->setPlainText(
        tr("No noise analysis: %1").arg(why.isEmpty() ? tr("not computed") : why));
    m_problem->setVisible(true);
    // Without curves the density axes and the legend would only show stale ranges.
    m_y->setVisible(false);
    m_yInput->setVisible(false);
    chart()->legend()->setVisible(false);
    setTitle(tr("noise not available"));
    placeOverlays();
    showValuesAt(std::nan(""));
}

void NoisePanel::densityPoints(const NoiseAnalysis &n, QList<QPointF> *total, QList<QPointF> *input)
{
    const std::vector<double> &hz = n.frequenciesHz;
    total->reserve(qsizetype(hz.size()));
    input->reserve(qsizetype(hz.size()));
    for (std::size_t i = 0; i < hz.size(); ++i) {
        const double x = std::log10(hz[i]);
        if (std::isfinite(n.outputDensity[i]) && n.outputDensity[i] > 0)
            total->append(QPointF(x, std::log10(n.outputDensity[i])));
        if (i < n.inputDensity.size() && std::isfinite(n.inputDensity[i]) && n.inputDensity[i] > 0)
            input->append(QPointF(x, std::log10(n.inputDensity[i])));
    }
}

std::pair<double, double> NoisePanel::setDensityAxes(const QList<QPointF> &total,
                                                     const QList<QPointF> &input)
{
    // Decades shown: from the total's peak to a decade under its minimum (so the stack
    // keeps some height everywhere), 2 to 7 decades; the input-referred axis spans as many
    // decades from its own minimum, so slopes compare.
    double lo = 0, hi = 0;
    yRange({&total}, &lo, &hi);
    const double top = std::ceil(hi + 0.05);
    const double span = std::clamp(top - std::floor(lo) + 1.0, 2.0, 7.0);
    const double bottom = top - span;
    setDecadeRange(m_y, bottom, top, {});
    double inLo = 0, inHi = 0;
    if (yRange({&input}, &inLo, &inHi)) {
        const double inBottom = std::floor(inLo - 0.05);
        setDecadeRange(m_yInput, inBottom, inBottom + span, {});
    }
    return {bottom, top};
}

std::vector<char> NoisePanel::drawnSources(const NoiseAnalysis &n,
                                           const std::vector<const NoiseContribution *> &order)
{
    // A band that never reaches 3 % of the power anywhere in the sweep is a few pixels at
    // most: it is not drawn (its share still lifts the bands above it) and leaves the
    // legend with it. The tooltip lists every source.
    const std::vector<double> &hz = n.frequenciesHz;
    std::vector<char> drawn(order.size());
    QStringList all;
    int quiet = 0;
    for (std::size_t k = 0; k < order.size(); ++k) {
        const NoiseContribution &c = *order[k];
        double most = 0;
        for (std::size_t i = 0; i < hz.size() && i < c.outputPsd.size(); ++i) {
            const double t = n.outputDensity[i] * n.outputDensity[i];
            if (t > 0)
                most = std::max(most, c.outputPsd[i] / t);
        }
        drawn[k] = most >= kDrawnShare;
        quiet += !drawn[k];
        const auto share = noiseSharePct(n, c);
        all << tr("%1: %2 of the power over the band, at most %3 % at one frequency")
                   .arg(noiseSourceName(c),
                        share ? QString::number(*share, 'g', 3) + QStringLiteral(" %")
                              : QStringLiteral("—"),
                        QString::number(100.0 * most, 'g', 3));
    }
    setToolTip(tr("Noise sources, largest first:\n") + all.join(QLatin1Char('\n'))
               + (quiet > 0 ? tr("\n(%n source(s) below 3 % everywhere not drawn)", nullptr, quiet)
                            : QString())
               + tr("\nBand heights: each source's share of the power at that frequency."));
    return drawn;
}

void NoisePanel::drawBands(const NoiseAnalysis &n,
                           const std::vector<const NoiseContribution *> &order, double bottom,
                           double xLo, double xHi)
{
    const std::vector<double> &hz = n.frequenciesHz;
    // Stack, in power: under the total density, the height from the plot's bottom up to the
    // total is split among the sources in proportion to their share of the power at that
    // frequency (on a log axis, cumulative densities would give the lowest band most of the
    // height whatever its share). The top of the stack is the total; the largest source
    // over the band sits at the bottom.
    setBandCount(order.size());

    const std::vector<char> drawn = drawnSources(n, order);
    std::vector<double> totalPsd(hz.size(), 0.0), cumulative(hz.size(), 0.0);
    for (const NoiseContribution *c : order) {
        for (std::size_t i = 0; i < hz.size() && i < c->outputPsd.size(); ++i) {
            if (std::isfinite(c->outputPsd[i]))
                totalPsd[i] += c->outputPsd[i];
        }
    }
    QList<QPointF> lower{QPointF(xLo, bottom), QPointF(xHi, bottom)};
    for (std::size_t k = 0; k < order.size(); ++k) {
        const NoiseContribution &c = *order[k];
        QList<QPointF> upper;
        upper.reserve(qsizetype(hz.size()));
        for (std::size_t i = 0; i < hz.size(); ++i) {
            if (i < c.outputPsd.size() && std::isfinite(c.outputPsd[i]))
                cumulative[i] += c.outputPsd[i];
            double y = bottom;
            if (totalPsd[i] > 0) {
                const double yTotal = 0.5 * std::log10(totalPsd[i]);
                // The last band ends on the total itself, not on a rounded sum.
                y = k + 1 == order.size()
                    ? yTotal
                    : bottom + (yTotal - bottom) * cumulative[i] / totalPsd[i];
            }
            upper.append(QPointF(std::log10(hz[i]), y));
        }
        Band &b = m_bands[k];
        b.source = &c;
        const QString name = noiseSourceName(c);
        if (b.area->name() != name)
            b.area->setName(name);
        const auto index = std::size_t(&c - n.contributions.data());
        const QColor colour = sourceColour(index);
        QColor fill = colour;
        fill.setAlpha(150);
        if (b.area->brush().color() != fill) {
            b.area->setBrush(fill);
            b.area->setPen(Qt::NoPen);
        }
        // Each boundary replaced rebuilds the band's path and hover outline (the area keeps
        // its own copy of each boundary's geometry, so both must be replaced). A band not
        // drawn keeps its data current without rebuilding; shown again, it rebuilds.
        if (b.area->isVisible() != bool(drawn[k]))
            b.area->setVisible(drawn[k]);
        {
            const QSignalBlocker lowerQuiet(drawn[k] ? nullptr : b.lower);
            const QSignalBlocker upperQuiet(drawn[k] ? nullptr : b.upper);
            replaceThinned(b.lower, lower, xLo, xHi);
            replaceThinned(b.upper, upper, xLo, xHi);
        }
        lower = std::move(upper);
    }
}

void NoisePanel::showSummary(const NoiseAnalysis &n,
                             const std::vector<const NoiseContribution *> &order)
{
    const QString out = n.outputRms
        ? toQString(formatEngineering(*n.outputRms, 3, toStdString(m_units.output)))
        : QStringLiteral("—");
    const QString inRms = n.inputRms
        ? toQString(formatEngineering(*n.inputRms, 3, toStdString(m_units.input)))
        : QStringLiteral("—");
    QString lead;
    if (!order.empty()) {
        if (const auto share = noiseSharePct(n, *order.front()))
            lead = tr("  ·  %1 %2 %")
                       .arg(noiseSourceName(*order.front()),
                            QString::number(*share, 'f', *share < 99.95 ? 1 : 2));
    }
    setTitle(tr("%1 rms out, %2 rms in  ·  %3 (%4)%5")
                 .arg(out, inRms, noiseBandText(n), noiseBandKindText(n), lead));
    m_figureLines = figureLines(n);
    m_figures->setVisible(!m_figureLines.isEmpty());
    setToolTip(tr("rms: the output density integrated over the band on the circuit model\n%1")
                   .arg(toQString(n.bandMethod)));
}

QStringList NoisePanel::figureLines(const NoiseAnalysis &n) const
{
    const auto text = [](const std::optional<double> &v, const QString &unit, int digits = 3) {
        return v && std::isfinite(*v) ? toQString(formatEngineering(*v, digits, toStdString(unit)))
                                      : QStringLiteral("—");
    };
    QStringList lines;
    lines << tr("spot at %1: %2 out, %3 in")
                 .arg(toQString(formatEngineering(n.spot.atHz, 3, "Hz")),
                      text(n.spot.outputDensity, m_units.output + QStringLiteral("/√Hz")),
                      text(n.spot.inputDensity, m_units.input + QStringLiteral("/√Hz")));
    if (n.snrDb)
        lines << tr("SNR %1 dB (full scale %2 peak)")
                     .arg(*n.snrDb, 0, 'f', 1)
                     .arg(text(n.signalLevel, m_units.input));
    if (n.outputPeak && n.slewRate)
        lines << tr("output peak %1, slew rate %2")
                     .arg(text(n.outputPeak, m_units.output),
                          text(n.slewRate, m_units.output + QStringLiteral("/s")));
    if (n.noiseFigureDb || n.spot.noiseFigureDb)
        lines << tr("NF %1 dB over the band, %2 dB at the spot")
                     .arg(n.noiseFigureDb ? QString::number(*n.noiseFigureDb, 'f', 2)
                                          : QStringLiteral("—"),
                          n.spot.noiseFigureDb ? QString::number(*n.spot.noiseFigureDb, 'f', 2)
                                               : QStringLiteral("—"));
    if (n.lowFrequency)
        lines << tr("0.1–10 Hz: %1 peak-to-peak out")
                     .arg(text(n.lowFrequency->outputPeakToPeak, m_units.output));
    return lines;
}

QString NoisePanel::figuresText() const
{
    return m_figures->isVisible() ? m_figureLines.join(QStringLiteral("  ·  ")) : QString();
}

QStringList NoisePanel::bandNames() const
{
    QStringList names;
    for (std::size_t k = 0; k < m_shownBands; ++k)
        names << m_bands[k].area->name();
    return names;
}

QAreaSeries *NoisePanel::band(const QString &name) const
{
    for (std::size_t k = 0; k < m_shownBands; ++k) {
        if (m_bands[k].area->name() == name)
            return m_bands[k].area;
    }
    return nullptr;
}

QString NoisePanel::problemText() const
{
    return m_problem->isVisible() ? m_problem->toPlainText() : QString();
}

QString NoisePanel::valuesText() const
{
    return m_valuesText->isVisible() ? m_valuesText->text() : QString();
}

void NoisePanel::showValuesAt(double log10Hz)
{
    m_cursorAt = log10Hz;
    const bool visible = std::isfinite(log10Hz) && m_noise && !m_noise->frequenciesHz.empty()
        && log10Hz >= m_x->min() && log10Hz <= m_x->max();
    m_valuesBox->setVisible(visible);
    m_valuesText->setVisible(visible);
    if (!visible)
        return;
    const NoiseAnalysis &n = *m_noise;
    const std::size_t i = nearestIndex(n.frequenciesHz, log10Hz);
    QStringList lines;
    lines << tr("%1: %2").arg(kTotal, density(n.outputDensity[i], m_units.output));
    if (i < n.inputDensity.size() && std::isfinite(n.inputDensity[i]))
        lines << tr("%1: %2").arg(kInput, density(n.inputDensity[i], m_units.input));
    // The sources that matter at this frequency, as shares of the total power there.
    const double totalPsd = n.outputDensity[i] * n.outputDensity[i];
    std::vector<std::pair<double, const NoiseContribution *>> here;
    for (const NoiseContribution &c : n.contributions) {
        if (i < c.outputPsd.size())
            here.emplace_back(c.outputPsd[i], &c);
    }
    std::stable_sort(here.begin(), here.end(),
                     [](const auto &l, const auto &r) { return l.first > r.first; });
    for (std::size_t k = 0; k < here.size() && k < 3 && totalPsd > 0; ++k) {
        const double pct = 100.0 * here[k].first / totalPsd;
        if (pct < 0.05)
            break;
        lines << tr("%1: %2 %")
                     .arg(noiseSourceName(*here[k].second),
                          QString::number(pct, 'f', pct >= 99.95 ? 2 : 1));
    }
    m_valuesLines = lines;
    placeOverlays();
}

void NoisePanel::placeOverlays()
{
    const QRectF plot = chart()->plotArea();
    // Axis titles with their quantity where the plot is tall enough, else the unit alone
    // (the right axis keeps the input-referred curve's colour either way).
    // Without an analysis there is no unit to state: the quantity alone.
    const bool analysed = unavailableText().isEmpty();
    const auto title = [&](QCategoryAxis *axis, const QString &quantity, const QString &unit) {
        const QString full = tr("%1 (%2/√Hz)").arg(quantity, unit);
        const QString text = !analysed || unit.isEmpty() ? quantity
            : QFontMetricsF(axis->titleFont()).horizontalAdvance(full) + 8 < plot.height()
            ? full
            : tr("%1/√Hz").arg(unit);
        if (axis->titleText() != text)
            axis->setTitleText(text);
    };
    title(m_y, tr("output"), m_units.output);
    title(m_yInput, tr("input"), m_units.input);
    const QString cumulativeTitle = tr("cumulative rms (%1)").arg(m_units.output);
    if (m_yCumulative->titleText() != cumulativeTitle)
        m_yCumulative->setTitleText(cumulativeTitle);
    if (m_figures->isVisible()) {
        // As many of the figures as fit the width, most important first, at the bottom.
        const QFontMetricsF metrics(m_figures->font());
        // left-aligned, clear of the "Overlay candidates" button at the bottom right
        const double room = chart()->size().width() - 150;
        QString text;
        for (const QString &line : m_figureLines) {
            const QString longer = text.isEmpty() ? line : text + QStringLiteral("  ·  ") + line;
            if (!text.isEmpty() && metrics.horizontalAdvance(longer) > room)
                break;
            text = longer;
        }
        if (m_figures->text() != text)
            m_figures->setText(text);
        m_figures->setToolTip(m_figureLines.join(QLatin1Char('\n')));
        m_figures->setPos(8.0, chart()->size().height() - metrics.height() - 3);
    }
    if (m_problem->isVisible()) {
        m_problem->setTextWidth(std::max(120.0, plot.width() - 40));
        QTextOption option = m_problem->document()->defaultTextOption();
        option.setAlignment(Qt::AlignHCenter);
        m_problem->document()->setDefaultTextOption(option);
        const QRectF r = m_problem->boundingRect();
        m_problem->setPos(plot.center().x() - r.width() / 2, plot.center().y() - r.height() / 2);
    }
    m_bandLabel->setVisible(std::isfinite(m_bandEdgeAt));
    if (m_bandLabel->isVisible()) {
        // "band" left of the dotted line that ends the integrated band, at the plot's top.
        const double x = chart()->mapToPosition(QPointF(m_bandEdgeAt, 0), m_total).x();
        m_bandLabel->setPos(x - m_bandLabel->boundingRect().width() - 3, plot.top() + 1);
    }
    if (!m_valuesText->isVisible() || !m_noise)
        return;
    // Under the linked cursor's frequency box (PlotPanel draws it at the plot's top, to the
    // right of the line unless it would leave the plot), on the same side where it fits.
    const double x = chart()->mapToPosition(QPointF(m_cursorAt, 0), m_total).x();
    const QFontMetricsF fm(m_valuesText->font());
    const QString fText
        = tr("f = %1").arg(toQString(formatEngineering(std::pow(10.0, m_cursorAt), 3, "Hz")));
    const double fWidth = fm.horizontalAdvance(fText);
    const bool fRight = x + 8 + fWidth + 8 <= plot.right();
    const double topY = plot.top() + 3 + fm.height() + 6 - 1;
    // As many lines as the plot has room for under the frequency box, most important first.
    const auto room
        = qsizetype(std::max(1.0, std::floor((plot.bottom() - topY - 6) / fm.lineSpacing())));
    const QString shown = m_valuesLines.mid(0, room).join(QLatin1Char('\n'));
    if (m_valuesText->text() != shown)
        m_valuesText->setText(shown);
    const QRectF text = m_valuesText->boundingRect();
    double left = fRight ? x + 8 : x - 8 - text.width();
    if (left + text.width() + 8 > plot.right())
        left = x - 8 - text.width();
    m_valuesText->setPos(left, topY + 3);
    m_valuesBox->setRect(QRectF(left - 4, topY, text.width() + 8, text.height() + 6));
}

} // namespace loopsketch::ui
