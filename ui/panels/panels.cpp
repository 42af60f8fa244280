#include "panels/panels.h"

#include "support/qtadapter.h"

#include "loopsketch/base/value.h"

#include <QCategoryAxis>
#include <QChart>
#include <QCursor>
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
    double lo = 0, hi = 0;
    if (yRange({&mags[0], &mags[1], &mags[2], &mags[3]}, &lo, &hi))
        setRoundRange(m_mag, std::max(lo, hi - 300.0), std::max(hi, 0.0), 40);
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
        if (a.margins.phaseMarginDeg)
            phaseMargin.append(QPointF(x, *a.margins.phaseMarginDeg - 180.0));
    }
    if (a.margins.phaseCrossoverHz && *a.margins.phaseCrossoverHz > 0 && a.margins.gainMarginDb)
        gainMargin.append(
            QPointF(std::log10(*a.margins.phaseCrossoverHz), -*a.margins.gainMarginDb));
    m_crossover->replace(crossover);
    m_phaseMargin->replace(phaseMargin);
    m_gainMargin->replace(gainMargin);
    const QString pm = a.margins.phaseMarginDeg
        ? toQString(formatEngineering(*a.margins.phaseMarginDeg, 3)) + QStringLiteral("°")
        : QStringLiteral("—");
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
    setTitle(tr("at DC: z_in %1  ·  z_out %2")
                 .arg(engineering(a.exact.zIn, "Ω"), engineering(a.exact.zOut, "Ω")));
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
        setTitle(tr("UNSTABLE: no step response (the output grows without bound)"));
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
    m_x = addValueAxis(tr("Re s (rad/s)"), Qt::AlignBottom);
    m_y = addValueAxis(tr("Im s (rad/s)"), Qt::AlignLeft);
    m_axis = addLine(tr("jω axis"), QColor(0x99, 0x99, 0x99), Qt::DotLine, m_x, m_y, false);
    const CurveStyle &poles = curveStyle(PlotCurve::Poles);
    m_poles = addMarker(poles.name, poles.colour, m_x, m_y, 10);
    m_poles->setMarkerShape(QScatterSeries::MarkerShapeRectangle);
    enableOverlays(m_x);
    connect(m_poles, &QScatterSeries::hovered, this, [this](const QPointF &point, bool state) {
        if (!state) {
            QToolTip::hideText();
            return;
        }
        // The pole under the mouse: core's numbers for it.
        const ClosedLoopPole *nearest = nullptr;
        double best = 0;
        for (const ClosedLoopPole &p : m_shown) {
            const double d
                = std::hypot(p.s.real() * m_scale - point.x(), p.s.imag() * m_scale - point.y());
            if (!nearest || d < best) {
                nearest = &p;
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
    // Hollow markers in the current design's scale, one set per candidate.
    QList<QPointF> points;
    for (const ClosedLoopPole &p : a.poles) {
        if (std::isfinite(p.s.real()) && std::isfinite(p.s.imag()))
            points.append(QPointF(p.s.real() * m_scale, p.s.imag() * m_scale));
    }
    return {{PlotCurve::Poles, points, m_y, CursorFormat::None, true}};
}

void PolesPanel::showAnalysis(const Analysis &a)
{
    double reMax = 0, imMax = 0, rightMost = 0;
    for (const ClosedLoopPole &p : a.poles) {
        if (std::isfinite(p.s.real()) && std::isfinite(p.s.imag())) {
            reMax = std::max(reMax, std::abs(p.s.real()));
            imMax = std::max(imMax, std::abs(p.s.imag()));
            rightMost = std::max(rightMost, p.s.real());
        }
    }
    const double span = std::max(reMax, imMax);
    const ScalePrefix sp = scalePrefixFor(span);
    QList<QPointF> points;
    for (const ClosedLoopPole &p : a.poles) {
        if (std::isfinite(p.s.real()) && std::isfinite(p.s.imag()))
            points.append(QPointF(p.s.real() * sp.factor, p.s.imag() * sp.factor));
    }
    const double r = span > 0 ? span * sp.factor * 1.1 : 1.0;
    // Right half-plane poles stay on the plot: they are what the designer must move.
    setNiceRange(m_x, -r, std::max(r * 0.2, rightMost * sp.factor * 1.1), 4);
    setNiceRange(m_y, -r, r, 4);
    m_axis->replace({QPointF(0, -r), QPointF(0, r)});
    m_poles->replace(points);
    m_shown = a.poles;
    if (sp.factor != m_scale) {
        m_scale = sp.factor;
        refreshOverlays();
    }
    m_x->setTitleText(tr("Re s (%1rad/s)").arg(sp.prefix));
    m_y->setTitleText(tr("Im s (%1rad/s)").arg(sp.prefix));
    rename(m_poles, tr("closed-loop poles (%1)").arg(points.size()));
    // The dominant pole (lowest natural frequency) is what a designer reads first.
    const ClosedLoopPole *dominant = nullptr;
    for (const ClosedLoopPole &p : a.poles) {
        if (!dominant || p.naturalHz < dominant->naturalHz)
            dominant = &p;
    }
    if (!a.stable)
        setTitle(tr("UNSTABLE  ·  %1 in the right half-plane: %2")
                     .arg(a.rhpPoles)
                     .arg(unstablePolesText(a, 2)));
    else
        setTitle(dominant ? tr("lowest: f₀ %1, ζ %2")
                                .arg(engineering(dominant->naturalHz, "Hz"))
                                .arg(dominant->damping, 0, 'f', 2)
                          : tr("no finite poles"));
}

} // namespace loopsketch::ui
