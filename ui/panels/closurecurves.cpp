// The Loop gain panel's closure view: the gain block's own |A_ol| and the closure curve 1/β
// (A_ol / T, core's LoopCurves::openLoopGain and invBeta), their meeting point at the
// crossover marked and labelled with core's rate of closure. Part of LoopGainPanel, kept
// apart from panels.cpp.

#include "panels/panels.h"

#include "support/qtadapter.h"

#include <QCategoryAxis>
#include <QLineSeries>
#include <QScatterSeries>
#include <QValueAxis>

#include <cmath>

namespace loopsketch::ui {

void LoopGainPanel::addClosureCurves()
{
    const CurveStyle &aol = curveStyle(PlotCurve::OpenLoopGain);
    const CurveStyle &invBeta = curveStyle(PlotCurve::InvBeta);
    m_openLoop = addLine(aol.name, aol.colour, aol.style, m_x, m_mag);
    m_invBeta = addLine(invBeta.name, invBeta.colour, invBeta.style, m_x, m_mag);
    m_closure = addMarker(QStringLiteral("closure"), invBeta.colour, m_x, m_mag, 11.0);
    m_closure->setMarkerShape(QScatterSeries::MarkerShapeRectangle);
    m_closure->setPointLabelsVisible(true);
    m_closure->setPointLabelsClipping(false);
    m_closure->setPointLabelsColor(palette::kBlack);
    hideFromLegend(m_closure);
}

void LoopGainPanel::showClosure(const Analysis &a, double xLo, double xHi, QList<QPointF> *mags)
{
    mags[0] = curvePoints(a.frequenciesHz, a.curves.openLoopGain, CurvePart::MagnitudeDb);
    mags[1] = curvePoints(a.frequenciesHz, a.curves.invBeta, CurvePart::MagnitudeDb);
    replaceThinned(m_openLoop, mags[0], xLo, xHi, CursorFormat::Decibels);
    replaceThinned(m_invBeta, mags[1], xLo, xHi, CursorFormat::Decibels);
    QList<QPointF> mark;
    const Margins &m = a.margins;
    if (m.crossoverHz && *m.crossoverHz > 0 && m.closureLevelDb) {
        mark.append(QPointF(std::log10(*m.crossoverHz), *m.closureLevelDb));
        // Qt 6.4 formats point labels from the series' one format; "@" tags would be
        // replaced, plain text stays as written.
        const QString rate = m.rateOfClosureDbPerDecade
            ? tr("closure %1 dB/decade").arg(*m.rateOfClosureDbPerDecade, 0, 'f', 0)
            : tr("closure");
        m_closure->setPointLabelsFormat(m.steepClosure ? rate + tr(" — caution: steep") : rate);
        m_closure->setPointLabelsColor(m.steepClosure ? palette::kVermillion : palette::kBlack);
    }
    m_closure->replace(mark);
}

} // namespace loopsketch::ui
