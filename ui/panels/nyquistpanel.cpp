#include "panels/nyquistpanel.h"

#include "support/columnthinning.h"
#include "support/qtadapter.h"

#include "loopsketch/base/value.h"

#include <QChart>
#include <QLineSeries>
#include <QScatterSeries>
#include <QValueAxis>

#include <algorithm>
#include <cmath>
#include <numbers>

namespace loopsketch::ui {

namespace {

constexpr double kPi = std::numbers::pi;
constexpr int kMostLabels = 6;
/// Radius per decade of |T| beyond the unit circle: half the unit circle's, so a loop gain of
/// 1e5 sits at 3.5 and the unit circle keeps more than a quarter of the plot.
constexpr double kRingStep = 0.5;
/// The plot's reach moves in these steps, so a small change of |T| leaves the axes alone:
/// every range change lays every series of the chart out again (milliseconds: the rings).
constexpr double kReachStep = kRingStep / 2;
/// How far (in pixels) the curve drawn may lie from the line through every sweep point.
constexpr double kCurveTolerancePixels = 0.25;

/// A circle of radius r as chart points (closed).
QList<QPointF> circle(double r, int points = 180)
{
    QList<QPointF> out;
    for (int i = 0; i <= points; ++i) {
        const double t = 2 * kPi * i / points;
        out.append(QPointF(r * std::cos(t), r * std::sin(t)));
    }
    return out;
}

} // namespace

double NyquistPanel::radius(double magnitude)
{
    return magnitude <= 1.0 ? magnitude : 1.0 + kRingStep * std::log10(magnitude);
}

QPointF NyquistPanel::plotted(std::complex<double> t)
{
    const double r = radius(std::abs(t)), angle = std::arg(t);
    return {r * std::cos(angle), r * std::sin(angle)};
}

NyquistPanel::NyquistPanel(QWidget *parent) : PlotPanel(tr("Nyquist"), parent)
{
    m_x = addValueAxis(tr("Re T (compressed)"), Qt::AlignBottom, false);
    m_y = addValueAxis(tr("Im T (compressed)"), Qt::AlignLeft, false);
    // The scale is not linear: the rings carry the magnitudes, the axes only their names.
    m_x->setLabelsVisible(false);
    m_y->setLabelsVisible(false);
    m_rings
        = addLine(tr("|T| = 10, 100, …"), QColor(0xcc, 0xcc, 0xcc), Qt::DotLine, m_x, m_y, false);
    m_unitCircle = addLine(tr("unit circle"), QColor(0x88, 0x88, 0x88), Qt::DashLine, m_x, m_y);
    const CurveStyle &t = curveStyle(PlotCurve::Nyquist);
    m_curve = addLine(t.name + tr(", ω > 0"), t.colour, t.style, m_x, m_y);
    m_mirror = addLine(t.name + tr(", ω < 0"), palette::kSkyBlue, Qt::DashLine, m_x, m_y);
    m_minusOne = addMarker(QStringLiteral("−1"), palette::kVermillion, m_x, m_y, 11.0);
    m_minusOne->setMarkerShape(QScatterSeries::MarkerShapeRectangle);
    m_phaseMargin = addMarker(tr("phase margin"), palette::kGreen, m_x, m_y, 9.0);
    m_gainMargin = addMarker(tr("gain margin"), palette::kOrange, m_x, m_y, 9.0);
    for (int i = 0; i < kMostLabels; ++i) {
        QScatterSeries *label = addMarker(QStringLiteral("f%1").arg(i), t.colour, m_x, m_y, 5.0);
        label->setPointLabelsVisible(true);
        label->setPointLabelsClipping(false);
        hideFromLegend(label);
        m_labels.push_back(label);
    }
    m_minusOne->replace({QPointF(-1.0, 0.0)});
    m_unitCircle->replace(circle(1.0));
    setEqualAspect(true);
    setToolTip(tr("Compressed radial scale: |T| as it is up to 1, 1 + ½ log10 |T| beyond (one "
                  "dotted ring per decade), angles true. The unit circle and −1 keep their "
                  "places; each clockwise turn of T around −1 is one encirclement."));
}

void NyquistPanel::showAnalysis(const Analysis &a)
{
    QList<QPointF> curve, mirror;
    double reach = 1.2;
    for (const std::complex<double> &t : a.curves.loopGain) {
        if (!std::isfinite(t.real()) || !std::isfinite(t.imag()))
            continue;
        const QPointF p = plotted(t);
        curve.append(p);
        mirror.append(QPointF(p.x(), -p.y()));
        reach = std::max(reach, std::hypot(p.x(), p.y()));
    }
    m_reach = std::ceil(reach / kReachStep - 1e-9) * kReachStep;
    m_fullCurve = std::move(curve);
    m_fullMirror = std::move(mirror);
    QList<QPointF> rings;
    // One line through all rings: each joins the next along the positive real axis.
    for (double r = 1 + kRingStep; r <= reach + 1e-9; r += kRingStep)
        rings.append(circle(r));
    // The rings change only when |T|'s reach crosses a ring; a dotted line of a thousand
    // points costs milliseconds to lay out again.
    if (!samePoints(m_rings->points(), rings))
        m_rings->replace(rings);

    // A label at every decade of the sweep (every second or third when there are many).
    std::vector<std::size_t> decades;
    const auto &f = a.frequenciesHz;
    for (std::size_t i = 0; i < f.size(); ++i) {
        const double l = std::log10(f[i]);
        if (std::abs(l - std::round(l)) < 1e-9 && std::isfinite(a.curves.loopGain[i].real()))
            decades.push_back(i);
    }
    const std::size_t step
        = std::max<std::size_t>(1, (decades.size() + kMostLabels - 1) / kMostLabels);
    std::size_t used = 0;
    for (std::size_t k = 0; k < decades.size() && used < m_labels.size(); k += step, ++used) {
        const std::size_t i = decades[k];
        m_labels[used]->replace({plotted(a.curves.loopGain[i])});
        m_labels[used]->setPointLabelsFormat(toQString(formatEngineering(f[i], 3, "Hz")));
    }
    for (; used < m_labels.size(); ++used)
        m_labels[used]->replace(QList<QPointF>{});

    // Margins from core: at the crossover |T| = 1 at the crossover's phase; at the phase
    // crossing T is real and negative, -10^(-GM/20).
    QList<QPointF> pm, gm;
    if (a.margins.crossoverPhaseDeg)
        pm.append(plotted(std::polar(1.0, *a.margins.crossoverPhaseDeg * kPi / 180.0)));
    if (a.margins.gainMarginDb)
        gm.append(
            plotted(std::complex<double>(-std::pow(10.0, -*a.margins.gainMarginDb / 20.0), 0)));
    m_phaseMargin->replace(pm);
    m_gainMargin->replace(gm);

    const NyquistCount &n = a.nyquist;
    if (n.encirclements) {
        const int z = *n.encirclements + n.openLoopRhpPoles;
        m_encirclementText = tr("−1 encircled %1 time(s) clockwise (N = %1, P = %2: Z = N + P = %3 "
                                "closed-loop poles in the right half-plane)")
                                 .arg(*n.encirclements)
                                 .arg(n.openLoopRhpPoles)
                                 .arg(z);
    } else {
        m_encirclementText = tr("encirclements %1").arg(toQString(n.reason));
    }
    setTitle(m_encirclementText);
    fitHome();
    drawCurves();
}

void NyquistPanel::drawCurves()
{
    const QRectF plot = chart()->plotArea();
    const auto [xLo, xHi] = axisRange(m_x);
    const auto [yLo, yHi] = axisRange(m_y);
    for (auto [series, full] : {std::pair{m_curve, &m_fullCurve}, {m_mirror, &m_fullMirror}}) {
        // Not laid out yet (a scale not positive): dropStraightRuns() keeps every point.
        const QList<QPointF> drawn = dropStraightRuns(
            *full, (xHi - xLo) / plot.width(), (yHi - yLo) / plot.height(), kCurveTolerancePixels);
        if (!samePoints(series->points(), drawn))
            series->replace(drawn);
    }
}

QStringList NyquistPanel::frequencyLabels() const
{
    QStringList out;
    for (QScatterSeries *s : m_labels)
        if (s->count() > 0)
            out.append(s->pointLabelsFormat());
    return out;
}

void NyquistPanel::fitHome()
{
    const double reach = m_reach + 0.3;
    fitEqualScales(m_x, m_y, -reach, reach, reach, 1.0);
}

void NyquistPanel::plotGeometryChanged()
{
    fitHome();
    drawCurves();
}

} // namespace loopsketch::ui
