#pragma once

// The Nyquist panel: the return ratio T(jω) on a compressed plane, with the point -1, the
// unit circle, the margins and core's count of encirclements (Analysis::nyquist).

#include "panels/plotpanel.h"

#include <complex>
#include <vector>

class QScatterSeries;
class QLineSeries;
class QValueAxis;

namespace loopsketch::ui {

class NyquistPanel : public PlotPanel
{
    Q_OBJECT

public:
    explicit NyquistPanel(QWidget *parent = nullptr);
    void showAnalysis(const Analysis &analysis) override;

    /// The compressed radius of a magnitude: |T| itself up to 1, 1 + log10 |T| / 2 beyond, so
    /// the unit circle and -1 stay where they are and a loop gain of 1e5 sits at radius 3.5.
    static double radius(double magnitude);
    /// Where T is drawn.
    static QPointF plotted(std::complex<double> t);
    /// The frequency labels along the curve ("1 kHz" ...), in order.
    QStringList frequencyLabels() const;
    /// The sentence stating the encirclements.
    QString encirclementText() const { return m_encirclementText; }

protected:
    void plotGeometryChanged() override;

private:
    void fitHome();
    /// Draws the curve and its mirror without the points a quarter pixel off the line through
    /// their neighbours at the plot's present scale; a series whose drawn points are the same
    /// keeps its drawing.
    void drawCurves();

    QValueAxis *m_x, *m_y;
    QLineSeries *m_curve, *m_mirror, *m_unitCircle, *m_rings;
    QScatterSeries *m_minusOne, *m_phaseMargin, *m_gainMargin;
    std::vector<QScatterSeries *> m_labels;
    double m_reach = 2;
    QList<QPointF> m_fullCurve, m_fullMirror; ///< every finite sweep point, as plotted
    QString m_encirclementText;
};

} // namespace loopsketch::ui
