#include "panels/panels.h"

#include "support/freespot.h"
#include "support/qtadapter.h"

#include "loopsketch/base/value.h"

#include <QCategoryAxis>
#include <QChart>
#include <QCursor>
#include <QGraphicsSimpleTextItem>
#include <QLineSeries>
#include <QScatterSeries>
#include <QToolTip>
#include <QValueAxis>

#include <algorithm>
#include <cmath>

namespace loopsketch::ui {

namespace {

double frequencyLo(const Analysis &a)
{
    return a.frequenciesHz.empty() ? 0.0 : std::log10(a.frequenciesHz.front());
}

double frequencyHi(const Analysis &a)
{
    return a.frequenciesHz.empty() ? 9.0 : std::log10(a.frequenciesHz.back());
}

} // namespace

LoopGainPanel::LoopGainPanel(QWidget *parent) : PlotPanel(tr("Loop gain"), parent)
{
    m_x = addLogAxis(tr("frequency (Hz)"), Qt::AlignBottom);
    m_mag = addValueAxis(tr("magnitude (dB)"), Qt::AlignLeft);
    m_phase = addValueAxis(tr("phase (°), dashed"), Qt::AlignRight, false);
    const PlotCurve curves[4]
        = {PlotCurve::A, PlotCurve::LoopGain, PlotCurve::GainTwoPort, PlotCurve::GainExact};
    for (int i = 0; i < 4; ++i) {
        const CurveStyle &c = curveStyle(curves[i]);
        m_magSeries[i] = addLine(c.name, c.colour, c.style, m_x, m_mag);
        m_phaseSeries[i] = addLine(kPhase + c.name, c.colour, Qt::DashLine, m_x, m_phase, false);
    }
    m_crossover = addMarker(QStringLiteral("crossover"), palette::kVermillion, m_x, m_mag);
    m_gainMargin = addMarker(QStringLiteral("gain margin"), palette::kGreen, m_x, m_mag);
    m_phaseMargin = addMarker(QStringLiteral("phase margin"), palette::kSkyBlue, m_x, m_phase);
    for (QXYSeries *s :
         {static_cast<QXYSeries *>(m_crossover), static_cast<QXYSeries *>(m_gainMargin),
          static_cast<QXYSeries *>(m_phaseMargin)})
        hideFromLegend(s);
    addClosureCurves();
    enableOverlays(m_x);
}

std::vector<PlotPanel::OverlayLine> LoopGainPanel::overlayLines(const Analysis &a) const
{
    return {{PlotCurve::LoopGain,
             curvePoints(a.frequenciesHz, a.curves.loopGain, CurvePart::MagnitudeDb), m_mag,
             CursorFormat::Decibels},
            {PlotCurve::GainExact,
             curvePoints(a.frequenciesHz, a.curves.gainExact, CurvePart::MagnitudeDb), m_mag,
             CursorFormat::Decibels}};
}

void LoopGainPanel::showAnalysis(const Analysis &a)
{
    const auto &f = a.frequenciesHz;
    const Curve *curves[4]
        = {&a.curves.a, &a.curves.loopGain, &a.curves.gainTwoPort, &a.curves.gainExact};
    QList<QPointF> mags[4], phases[4];
    for (int i = 0; i < 4; ++i) {
        mags[i] = curvePoints(f, *curves[i], CurvePart::MagnitudeDb);
        phases[i] = curvePoints(f, *curves[i], CurvePart::PhaseDeg);
    }
    QList<QPointF> closure[2];
    showClosure(a, frequencyLo(a), frequencyHi(a), closure);
    double lo = 0, hi = 0;
    // T and the gains set the range; the A circuit's gain a (in the gain's unit, which can
    // reach hundreds of dB) and the closure curves (1/β grows without bound where T falls far
    // below one) may widen it by at most 120 dB, so that they never push T out of sight.
    if (yRange({&mags[1], &mags[2], &mags[3]}, &lo, &hi)) {
        double wideLo = 0, wideHi = 0;
        if (yRange({&mags[0], &closure[0], &closure[1]}, &wideLo, &wideHi)) {
            lo = std::max(std::min(lo, wideLo), lo - 120.0);
            hi = std::min(std::max(hi, wideHi), hi + 120.0);
        }
        setRoundRange(m_mag, std::max(lo, hi - 300.0), std::max(hi, 0.0), 40);
    }
    if (yRange({&phases[0], &phases[1], &phases[2], &phases[3]}, &lo, &hi))
        setRoundRange(m_phase, lo, hi, 90);
    setDecadeRange(m_x, frequencyLo(a), frequencyHi(a), {});
    for (int i = 0; i < 4; ++i) {
        // The cursor lists the magnitudes and the loop gain's phase.
        replaceThinned(m_magSeries[i], mags[i], frequencyLo(a), frequencyHi(a),
                       CursorFormat::Decibels);
        replaceThinned(m_phaseSeries[i], phases[i], frequencyLo(a), frequencyHi(a),
                       i == 1 ? CursorFormat::Degrees : CursorFormat::None);
    }

    QList<QPointF> crossover, phaseMargin, gainMargin;
    if (a.margins.crossoverHz && *a.margins.crossoverHz > 0) {
        const double x = std::log10(*a.margins.crossoverHz);
        crossover.append(QPointF(x, 0.0));
        if (a.margins.crossoverPhaseDeg)
            phaseMargin.append(QPointF(x, *a.margins.crossoverPhaseDeg));
    }
    if (a.margins.phaseCrossoverHz && *a.margins.phaseCrossoverHz > 0 && a.margins.gainMarginDb)
        gainMargin.append(
            QPointF(std::log10(*a.margins.phaseCrossoverHz), -*a.margins.gainMarginDb));
    m_crossover->replace(crossover);
    m_phaseMargin->replace(phaseMargin);
    m_gainMargin->replace(gainMargin);
    const QString pm = degrees(a.margins.phaseMarginDeg);
    const QString gm = a.margins.gainMarginDb
        ? QString::number(*a.margins.gainMarginDb, 'f', 1) + QStringLiteral(" dB")
        : QStringLiteral("—");
    setTitle(tr("crossover %1  ·  phase margin %2  ·  gain margin %3")
                 .arg(engineering(a.margins.crossoverHz, "Hz"), pm, gm));
    // The axis carries the unitless loop gain too: plain dB (the gains' reference unit is in
    // the panel's tooltip).
    m_mag->setTitleText(tr("magnitude (dB)"));
    setToolTip(
        tr("T and A·β are pure ratios; the gains' dB are re 1 %1").arg(toQString(a.gainUnit)));
}

ImpedancePanel::ImpedancePanel(QWidget *parent) : PlotPanel(tr("Impedance"), parent)
{
    m_x = addLogAxis(tr("frequency (Hz)"), Qt::AlignBottom);
    m_y = addLogAxis(tr("|z| (Ω)"), Qt::AlignLeft);
    const PlotCurve curves[4]
        = {PlotCurve::ZIn, PlotCurve::ZInNoFeedback, PlotCurve::ZOut, PlotCurve::ZOutNoFeedback};
    for (int i = 0; i < 4; ++i) {
        const CurveStyle &c = curveStyle(curves[i]);
        m_lines[i] = addLine(c.name, c.colour, c.style, m_x, m_y);
    }
    enableOverlays(m_x);
}

std::vector<PlotPanel::OverlayLine> ImpedancePanel::overlayLines(const Analysis &a) const
{
    return {{PlotCurve::ZIn,
             curvePoints(a.frequenciesHz, a.curves.zInExact, CurvePart::Log10Magnitude), m_y,
             CursorFormat::Log10Ohms},
            {PlotCurve::ZOut,
             curvePoints(a.frequenciesHz, a.curves.zOutExact, CurvePart::Log10Magnitude), m_y,
             CursorFormat::Log10Ohms}};
}

void ImpedancePanel::showAnalysis(const Analysis &a)
{
    const Curve *curves[4]
        = {&a.curves.zInExact, &a.curves.zInOpenLoop, &a.curves.zOutExact, &a.curves.zOutOpenLoop};
    QList<QPointF> points[4];
    for (int i = 0; i < 4; ++i)
        points[i] = curvePoints(a.frequenciesHz, *curves[i], CurvePart::Log10Magnitude);
    double lo = 0, hi = 0;
    if (yRange({&points[0], &points[1], &points[2], &points[3]}, &lo, &hi))
        setDecadeRange(m_y, std::floor(lo), std::ceil(hi), "Ω");
    setDecadeRange(m_x, frequencyLo(a), frequencyHi(a), {});
    for (int i = 0; i < 4; ++i)
        replaceThinned(m_lines[i], points[i], frequencyLo(a), frequencyHi(a),
                       CursorFormat::Log10Ohms);
    // Each impedance at DC, or, where the log scale cannot draw it (an ideal input or output),
    // what it is in words, as on the sheet, so an empty plot does not read as a fault.
    const auto reading = [&](PlotCurve curve, const Curve &values, const OptionalNumber &dc) {
        const QString text = undrawableCurveText(values);
        return text.isEmpty() ? tr("%1 at DC %2").arg(curveName(curve), engineering(dc, "Ω"))
                              : tr("%1 %2").arg(curveName(curve), text);
    };
    setTitle(reading(PlotCurve::ZIn, a.curves.zInExact, a.exact.zIn) + QStringLiteral("  ·  ")
             + reading(PlotCurve::ZOut, a.curves.zOutExact, a.exact.zOut));
}

DesensitivityPanel::DesensitivityPanel(QWidget *parent) : PlotPanel(tr("Desensitivity"), parent)
{
    m_x = addLogAxis(tr("frequency (Hz)"), Qt::AlignBottom);
    m_y = addValueAxis(tr("|1 + T| (dB)"), Qt::AlignLeft);
    const CurveStyle &c = curveStyle(PlotCurve::Desensitivity);
    m_line = addLine(c.name, c.colour, c.style, m_x, m_y);
    enableOverlays(m_x);
}

std::vector<PlotPanel::OverlayLine> DesensitivityPanel::overlayLines(const Analysis &a) const
{
    return {{PlotCurve::Desensitivity,
             curvePoints(a.frequenciesHz, a.curves.desensitivity, CurvePart::MagnitudeDb), m_y,
             CursorFormat::Decibels}};
}

void DesensitivityPanel::showAnalysis(const Analysis &a)
{
    const QList<QPointF> points
        = curvePoints(a.frequenciesHz, a.curves.desensitivity, CurvePart::MagnitudeDb);
    double lo = 0, hi = 0;
    if (yRange({&points}, &lo, &hi))
        setRoundRange(m_y, std::min(lo, 0.0), hi, 20);
    setDecadeRange(m_x, frequencyLo(a), frequencyHi(a), {});
    replaceThinned(m_line, points, frequencyLo(a), frequencyHi(a), CursorFormat::Decibels);
    // Gain sensitivity (%/%) of the parts that move the DC gain most.
    std::vector<std::pair<std::string, double>> sens(a.sensitivity.begin(), a.sensitivity.end());
    std::sort(sens.begin(), sens.end(),
              [](const auto &l, const auto &r) { return std::abs(l.second) > std::abs(r.second); });
    QStringList top, all;
    for (std::size_t i = 0; i < sens.size(); ++i) {
        if (std::abs(sens[i].second) < 5e-4)
            continue;
        const QString item = toQString(sens[i].first) + QStringLiteral(" ")
            + QString::number(sens[i].second, 'f', 3);
        all << item;
        if (top.size() < 2)
            top << item;
    }
    setTitle(tr("|1 + T| at DC %1  ·  gain sensitivity %2 %/%")
                 .arg(a.desensitivityDb ? QString::number(*a.desensitivityDb, 'f', 1) + " dB"
                                        : QStringLiteral("—"),
                      top.isEmpty() ? QStringLiteral("—") : top.join(QStringLiteral(", "))));
    setToolTip(tr("Gain sensitivity, % change of the DC gain per % change of the part:\n")
               + all.join(QLatin1Char('\n')));
}

StepPanel::StepPanel(QWidget *parent) : PlotPanel(tr("Step"), parent)
{
    m_x = addValueAxis(tr("time (s)"), Qt::AlignBottom);
    m_y = addValueAxis(tr("output per unit step"), Qt::AlignLeft);
    const CurveStyle &step = curveStyle(PlotCurve::Step);
    const CurveStyle &final = curveStyle(PlotCurve::StepFinal);
    m_line = addLine(step.name, step.colour, step.style, m_x, m_y);
    m_final = addLine(final.name, final.colour, final.style, m_x, m_y);
    m_settling = addLine(tr("settled (1 %)"), palette::kSkyBlue, Qt::DashLine, m_x, m_y);
    m_peak = addMarker(tr("peak"), palette::kVermillion, m_x, m_y);
    hideFromLegend(m_peak);
    enableOverlays(m_x);
}

std::vector<PlotPanel::OverlayLine> StepPanel::overlayLines(const Analysis &a) const
{
    // In the current design's time and output scale; an unstable candidate has no response.
    if (!a.stable)
        return {};
    return {{PlotCurve::Step,
             realPoints(a.step.timeS, a.step.response, m_timeFactor, m_valueFactor), m_y,
             CursorFormat::None}};
}

void StepPanel::showAnalysis(const Analysis &a)
{
    const StepResult &s = a.step;
    double tMax = 0, yMax = 0;
    for (double t : s.timeS) {
        if (std::isfinite(t))
            tMax = std::max(tMax, std::abs(t));
    }
    for (double y : s.response) {
        if (std::isfinite(y))
            yMax = std::max(yMax, std::abs(y));
    }
    const ScalePrefix tp = scalePrefixFor(tMax);
    const ScalePrefix yp = scalePrefixFor(yMax);
    const QList<QPointF> points = realPoints(s.timeS, s.response, tp.factor, yp.factor);
    double lo = 0, hi = 0;
    if (!yRange({&points}, &lo, &hi))
        lo = hi = 0;
    lo = std::min(lo, 0.0);
    hi = std::max(hi, 0.0);
    const double pad = 0.05 * (hi - lo);
    setNiceRange(m_y, lo - pad, hi + pad, 5);
    setNiceRange(m_x, 0, tMax * tp.factor, 5);
    m_x->setTitleText(tr("time (%1s)").arg(tp.prefix));
    m_y->setTitleText(tr("output (%1%2)").arg(yp.prefix, toQString(a.gainUnit)));
    replaceThinned(m_line, points, 0.0, tMax * tp.factor);
    if (tp.factor != m_timeFactor || yp.factor != m_valueFactor) {
        m_timeFactor = tp.factor;
        m_valueFactor = yp.factor;
        refreshOverlays();
    }

    QList<QPointF> finalLine;
    if (std::isfinite(s.finalValue))
        finalLine = {QPointF(0, s.finalValue * yp.factor),
                     QPointF(tMax * tp.factor, s.finalValue * yp.factor)};
    m_final->replace(finalLine);

    QList<QPointF> settling;
    if (s.settlingTimeS)
        settling = {QPointF(*s.settlingTimeS * tp.factor, lo - pad),
                    QPointF(*s.settlingTimeS * tp.factor, hi + pad)};
    m_settling->replace(settling);
    // The overshoot marker sits on the sample farthest beyond the final value.
    QList<QPointF> peak;
    if (s.overshootPct && *s.overshootPct >= 0.05 && !points.isEmpty()) {
        const double sign = s.finalValue >= 0 ? 1.0 : -1.0;
        QPointF best = points.front();
        for (const QPointF &p : points) {
            if (sign * p.y() > sign * best.y())
                best = p;
        }
        peak.append(best);
    }
    m_peak->replace(peak);
    const QString band = QString::number(s.settlingBand * 100, 'g', 3) + QStringLiteral(" %");
    rename(m_settling, tr("settled (%1)").arg(band));
    if (!a.stable) {
        setTitle(a.stabilityKnown
                     ? tr("UNSTABLE: no step response (the output grows without bound)")
                     : tr("STABILITY UNKNOWN: no step response (closed-loop poles not located)"));
        return;
    }
    setTitle(tr("overshoot %1  ·  settling (%2) %3  ·  rise %4")
                 .arg(s.overshootPct
                          ? QString::number(*s.overshootPct, 'f', 1) + QStringLiteral(" %")
                          : QStringLiteral("—"),
                      band, engineering(s.settlingTimeS, "s"), engineering(s.riseTimeS, "s")));
}

PolesPanel::PolesPanel(QWidget *parent) : PlotPanel(tr("Poles"), parent)
{
    m_x = addValueAxis(tr("Re s"), Qt::AlignBottom, false);
    m_y = addValueAxis(tr("Im s"), Qt::AlignLeft, false);
    // The radial scale is logarithmic: linear ticks would mislead and the circles carry the
    // values, so the axes only place the points and their room goes to the plot; the real
    // and jω axes are drawn as lines and named at their ends.
    m_x->setVisible(false);
    m_y->setVisible(false);
    for (const QString &name : {tr("Re s"), tr("jω")}) {
        auto *label = new QGraphicsSimpleTextItem(name, chart());
        QFont f = label->font();
        f.setPointSizeF(7.5);
        f.setItalic(true);
        label->setFont(f);
        label->setBrush(QColor(0x6b, 0x72, 0x7d));
        m_axisNames.push_back(label);
    }
    m_axis = addLine(tr("jω axis"), QColor(0x99, 0x99, 0x99), Qt::DotLine, m_x, m_y, false);
    m_realAxis = addLine(tr("real axis"), QColor(0xbb, 0xbb, 0xbb), Qt::DotLine, m_x, m_y, false);
    const CurveStyle &poles = curveStyle(PlotCurve::Poles);
    m_poles = addMarker(poles.name, poles.colour, m_x, m_y, 9);
    m_poles->setMarkerShape(QScatterSeries::MarkerShapeRectangle);
    setEqualAspect(true);
    enableOverlays(m_x);
    setToolTip(tr("Log-magnitude radial scale: each pole keeps its angle (damping ζ is the "
                  "cosine of the angle from the negative real axis) and its distance from the "
                  "centre grows by one circle per decade of |s|."));
    connect(m_poles, &QScatterSeries::hovered, this, [this](const QPointF &point, bool state) {
        if (!state) {
            QToolTip::hideText();
            return;
        }
        // The pole under the mouse: core's numbers for it.
        const ClosedLoopPole *nearest = nullptr;
        double best = 0;
        for (qsizetype i = 0; i < m_points.size(); ++i) {
            const double d = std::hypot(m_points[i].x() - point.x(), m_points[i].y() - point.y());
            if (!nearest || d < best) {
                nearest = &m_shown[std::size_t(i)];
                best = d;
            }
        }
        if (!nearest)
            return;
        QToolTip::showText(
            QCursor::pos(),
            tr("s = %1 %2 j%3 rad/s\nf₀ %4, ζ %5, Q %6")
                .arg(toQString(formatEngineering(nearest->s.real(), 3)),
                     nearest->s.imag() < 0 ? QStringLiteral("−") : QStringLiteral("+"),
                     toQString(formatEngineering(std::abs(nearest->s.imag()), 3)),
                     engineering(nearest->naturalHz, "Hz"))
                .arg(nearest->damping, 0, 'f', 3)
                .arg(nearest->q, 0, 'f', 3),
            this);
    });
}

std::vector<PlotPanel::OverlayLine> PolesPanel::overlayLines(const Analysis &a) const
{
    // Hollow markers on the current design's radial scale, one set per candidate.
    QList<QPointF> points;
    for (const ClosedLoopPole &p : a.poles) {
        if (std::isfinite(p.s.real()) && std::isfinite(p.s.imag()))
            points.append(plotted(p.s));
    }
    return {{PlotCurve::Poles, points, m_y, CursorFormat::None, true}};
}

QPointF PolesPanel::plotted(std::complex<double> s) const
{
    PoleScale scale;
    scale.r0 = m_r0;
    return scale.map(s);
}

namespace { } // namespace

void PolesPanel::showAnalysis(const Analysis &a)
{
    m_shown.clear();
    for (const ClosedLoopPole &p : a.poles) {
        if (std::isfinite(p.s.real()) && std::isfinite(p.s.imag()))
            m_shown.push_back(p);
    }
    // The scale the review sheet draws too (support/polescale.h).
    const PoleScale scale = PoleScale::fit(m_shown);
    m_r0 = scale.r0;
    m_points.clear();
    for (const ClosedLoopPole &p : m_shown)
        m_points.append(plotted(p.s));
    m_rightMost = scale.rightMost;
    m_ringCount = scale.rings;
    m_outer = scale.outer;
    // One circle a decade, 1 (r0) to the outermost pole's.
    constexpr int kSegments = 144;
    while (int(m_rings.size()) < m_ringCount) {
        QLineSeries *ring = addLine(QStringLiteral("ring %1").arg(m_rings.size()),
                                    QColor(0xc8, 0xcd, 0xd4), Qt::SolidLine, m_x, m_y, false);
        QPen pen(QColor(0xd4, 0xd8, 0xde), 1.0);
        pen.setCosmetic(true);
        ring->setPen(pen);
        m_rings.push_back(ring);
        auto *label = new QGraphicsSimpleTextItem(chart());
        QFont f = label->font();
        f.setPointSizeF(7.5);
        label->setFont(f);
        label->setBrush(QColor(0x6b, 0x72, 0x7d));
        label->setZValue(5);
        m_ringLabels.push_back(label);
    }
    for (std::size_t k = 0; k < m_rings.size(); ++k) {
        // A ring of the same radius keeps its drawing (most edits leave the scale alone).
        const double radius = int(k) < m_ringCount ? PoleScale::ringRadius(int(k)) : 0.0;
        // (A cleared plot, showUnavailable(), has emptied it.)
        if (k < m_ringRadii.size() && m_ringRadii[k] == radius
            && m_rings[k]->count() == (int(k) < m_ringCount ? kSegments + 1 : 0)) {
            if (int(k) < m_ringCount)
                m_ringLabels[k]->setText(
                    toQString(formatEngineering(scale.ringValue(int(k)), 3, "rad/s")));
            continue;
        }
        m_ringRadii.resize(m_rings.size(), -1.0);
        m_ringRadii[k] = radius;
        QList<QPointF> circle;
        if (int(k) < m_ringCount) {
            for (int i = 0; i <= kSegments; ++i) {
                const double angle = 2.0 * M_PI * i / kSegments;
                circle.append(QPointF(radius * std::cos(angle), radius * std::sin(angle)));
            }
            m_ringLabels[k]->setText(
                toQString(formatEngineering(scale.ringValue(int(k)), 3, "rad/s")));
        }
        m_rings[k]->replace(circle);
    }
    const double reach = m_outer + 0.4;
    const auto replaceChanged = [](QXYSeries *s, const QList<QPointF> &points) {
        if (!samePoints(s->points(), points))
            s->replace(points);
    };
    replaceChanged(m_axis, {QPointF(0, -reach), QPointF(0, reach)});
    replaceChanged(m_realAxis,
                   {QPointF(-reach, 0), QPointF(std::max(0.3 * reach, m_rightMost + 0.3), 0)});
    replaceChanged(m_poles, m_points);

    // One text per pole or conjugate pair (upper half-plane and real axis); coincident
    // poles say how many they are, so the legend's count is always found on the plot.
    m_labelEntries.clear();
    for (const PoleValueLabel &l : poleValueLabels(m_shown))
        m_labelEntries.push_back({m_points[qsizetype(l.index)], l.text, l.size});

    rename(m_poles, tr("closed-loop poles (%1)").arg(m_points.size()));
    fitHome();
    placeLabels();
    refreshOverlays(); // the radial scale follows the current design
    // The dominant pole (lowest natural frequency) is what a designer reads first.
    const ClosedLoopPole *dominant = nullptr;
    for (const ClosedLoopPole &p : a.poles) {
        if (!dominant || p.naturalHz < dominant->naturalHz)
            dominant = &p;
    }
    if (!a.stable && !a.stabilityKnown)
        setTitle(tr("STABILITY UNKNOWN  ·  %1").arg(toQString(a.closedLoopReason)));
    else if (!a.stable)
        setTitle(tr("UNSTABLE  ·  %1 in the right half-plane: %2")
                     .arg(a.rhpPoles)
                     .arg(unstablePolesText(a, 2)));
    else
        setTitle(dominant ? tr("lowest: f₀ %1, ζ %2")
                                .arg(engineering(dominant->naturalHz, "Hz"))
                                .arg(dominant->damping, 0, 'f', 2)
                          : tr("no finite poles"));
}

QStringList PolesPanel::poleLabels() const
{
    QStringList texts;
    for (const QGraphicsSimpleTextItem *label : m_poleLabels) {
        if (label->isVisible())
            texts << label->text();
    }
    return texts;
}

void PolesPanel::fitHome()
{
    // Room for every circle and pole, the right half-plane at least a third of the radius
    // wide; one unit as long across as up, so circles stay round and angles true. Tick marks
    // are not labelled (the scale is not linear): one per radius unit.
    const double reach = m_outer + 0.4;
    fitEqualScales(m_x, m_y, -reach, std::max(0.35 * reach, m_rightMost + 0.4), reach, 1.0);
}

void PolesPanel::plotGeometryChanged()
{
    fitHome();
    placeLabels();
}

void PolesPanel::placeLabels()
{
    const QRectF plot = chart()->plotArea();
    const bool any = m_poles->count() > 0;
    for (QGraphicsSimpleTextItem *name : m_axisNames)
        name->setVisible(any);
    if (!any) {
        // Not analysed (or nothing to show): no values stand without their poles.
        for (QGraphicsSimpleTextItem *label : m_ringLabels)
            label->hide();
        for (QGraphicsSimpleTextItem *label : m_poleLabels)
            label->hide();
        return;
    }
    // What is placed first wins a spot: the markers themselves, the pole values (dominant
    // poles first), the axis names, then the circles' values. A label that finds no free
    // spot inside the plot is left out.
    std::vector<QRectF> taken;
    for (const QPointF &p : m_points) {
        const QPointF at = chart()->mapToPosition(p, m_poles);
        taken.emplace_back(at.x() - 5, at.y() - 5, 10, 10);
    }
    auto place = [&](QGraphicsSimpleTextItem *label, std::initializer_list<QPointF> corners) {
        const auto spot = firstFreeSpot(corners, label->boundingRect().size(), plot, taken);
        if (spot) {
            label->setPos(spot->topLeft());
            taken.push_back(spot->adjusted(-2, -1, 2, 1));
        }
        label->setVisible(spot.has_value());
    };

    // Pole values beside their marker; poles drawn within a marker's width of each other
    // share one label, so none hides another.
    struct Group
    {
        QPointF at; ///< the first member's marker
        QRectF box; ///< around every member's marker
        QStringList texts;
    };
    std::vector<Group> groups;
    for (const LabelEntry &entry : m_labelEntries) {
        const QPointF at = chart()->mapToPosition(entry.at, m_poles);
        if (!plot.contains(at))
            continue;
        auto near = std::find_if(groups.begin(), groups.end(), [&](const Group &g) {
            return std::hypot(g.at.x() - at.x(), g.at.y() - at.y()) < 12.0;
        });
        const QRectF marker(at.x() - 5, at.y() - 5, 10, 10);
        if (near == groups.end()) {
            groups.push_back({at, marker, {entry.text}});
        } else {
            near->box |= marker;
            near->texts << entry.text;
        }
    }
    while (m_poleLabels.size() < groups.size()) {
        auto *label = new QGraphicsSimpleTextItem(chart());
        QFont f = label->font();
        f.setPointSizeF(7.5);
        label->setFont(f);
        label->setBrush(palette::kVermillion.darker(140));
        label->setZValue(6);
        m_poleLabels.push_back(label);
    }
    for (std::size_t k = 0; k < m_poleLabels.size(); ++k) {
        QGraphicsSimpleTextItem *label = m_poleLabels[k];
        if (k >= groups.size()) {
            label->hide();
            continue;
        }
        label->setText(groups[k].texts.join(QStringLiteral(", ")));
        const QRectF b = groups[k].box;
        const QSizeF size = label->boundingRect().size();
        const double w = size.width(), h = size.height();
        place(label,
              {QPointF(b.right() + 2, b.top() - h + 2), QPointF(b.left() - 2 - w, b.top() - h + 2),
               QPointF(b.center().x() - w / 2, b.top() - h - 1),
               QPointF(b.right() + 2, b.bottom() - 2), QPointF(b.left() - 2 - w, b.bottom() - 2),
               QPointF(b.center().x() - w / 2, b.bottom() + 1)});
    }

    // "Re s" at the right end of the real axis, "jω" at the top of the jω axis.
    const QPointF realEnd = chart()->mapToPosition(m_realAxis->points().value(1), m_poles);
    const QPointF jwTop = chart()->mapToPosition(m_axis->points().value(1), m_poles);
    const QSizeF re = m_axisNames[0]->boundingRect().size();
    place(m_axisNames[0],
          {QPointF(realEnd.x() - re.width(), realEnd.y() + 2),
           QPointF(realEnd.x() - re.width(), realEnd.y() - re.height() - 2)});
    place(m_axisNames[1],
          {QPointF(jwTop.x() + 4, jwTop.y()),
           QPointF(jwTop.x() - 4 - m_axisNames[1]->boundingRect().width(), jwTop.y())});

    // Circle values on the lower half of the jω axis, just right of it (or left).
    for (std::size_t k = 0; k < m_ringLabels.size(); ++k) {
        QGraphicsSimpleTextItem *label = m_ringLabels[k];
        if (int(k) >= m_ringCount) {
            label->hide();
            continue;
        }
        const QPointF at = chart()->mapToPosition(QPointF(0, -(kInnerRadius + double(k))), m_poles);
        const QSizeF size = label->boundingRect().size();
        place(label,
              {QPointF(at.x() + 3, at.y() - size.height()),
               QPointF(at.x() - 3 - size.width(), at.y() - size.height())});
    }
}

} // namespace loopsketch::ui
