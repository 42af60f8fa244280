#pragma once

// The linked plot panels. Each draws core's curves as they are; nothing is computed here
// beyond turning complex values into dB and degrees for display.

#include "panels/plotpanel.h"
#include "support/polescale.h"

#include <complex>

class QGraphicsSimpleTextItem;

namespace loopsketch::ui {

/// Magnitude and phase of A, T (return ratio), the closed loop by the two-port estimate
/// and exact; crossover, phase margin and gain margin marked.
class LoopGainPanel : public PlotPanel
{
    Q_OBJECT

public:
    explicit LoopGainPanel(QWidget *parent = nullptr);
    void showAnalysis(const Analysis &analysis) override;

    // Legend names, from the one curve table (support/plotstyle.h).
    static inline const QString kA = curveName(PlotCurve::A);
    static inline const QString kT = curveName(PlotCurve::LoopGain);
    static inline const QString kTwoPort = curveName(PlotCurve::GainTwoPort);
    static inline const QString kExact = curveName(PlotCurve::GainExact);
    static inline const QString kPhase = QStringLiteral("phase ");

protected:
    std::vector<OverlayLine> overlayLines(const Analysis &analysis) const override;

private:
    QCategoryAxis *m_x;
    QValueAxis *m_mag, *m_phase;
    QLineSeries *m_magSeries[4], *m_phaseSeries[4];
    QScatterSeries *m_crossover, *m_phaseMargin, *m_gainMargin;
    // |A_ol| and 1/β meeting at the crossover, the rate of closure beside the mark
    // (closurecurves.cpp).
    QLineSeries *m_openLoop, *m_invBeta;
    QScatterSeries *m_closure;
    void addClosureCurves();
    void showClosure(const Analysis &analysis, double xLo, double xHi, QList<QPointF> *mags);
};

/// z_in and z_out with feedback (exact) and without (gain block's gain at 0).
class ImpedancePanel : public PlotPanel
{
    Q_OBJECT

public:
    explicit ImpedancePanel(QWidget *parent = nullptr);
    void showAnalysis(const Analysis &analysis) override;

protected:
    std::vector<OverlayLine> overlayLines(const Analysis &analysis) const override;

private:
    QCategoryAxis *m_x, *m_y;
    QLineSeries *m_lines[4];
};

/// |1 + T| in dB.
class DesensitivityPanel : public PlotPanel
{
    Q_OBJECT

public:
    explicit DesensitivityPanel(QWidget *parent = nullptr);
    void showAnalysis(const Analysis &analysis) override;

protected:
    std::vector<OverlayLine> overlayLines(const Analysis &analysis) const override;

private:
    QCategoryAxis *m_x;
    QValueAxis *m_y;
    QLineSeries *m_line;
};

/// Closed-loop unit-step response with overshoot and settling marked.
class StepPanel : public PlotPanel
{
    Q_OBJECT

public:
    explicit StepPanel(QWidget *parent = nullptr);
    void showAnalysis(const Analysis &analysis) override;

protected:
    std::vector<OverlayLine> overlayLines(const Analysis &analysis) const override;

private:
    QValueAxis *m_x, *m_y;
    double m_timeFactor = 1.0, m_valueFactor = 1.0; ///< axis units per s and per gain unit
    QLineSeries *m_line, *m_final, *m_settling;
    QScatterSeries *m_peak;
};

/// Closed-loop natural frequencies on the s-plane, on a log-magnitude radial scale: each pole
/// keeps its angle (so the left half-plane, the jω axis and the damping ζ = cos of the angle
/// from the negative real axis read as usual) and sits at radius 2 + log10(|s| / r0), r0 the
/// decade below the smallest |s|; circles mark every decade of |s|. Poles a thousand times
/// apart are thus both readable; a pole at s = 0 sits at the centre.
class PolesPanel : public PlotPanel
{
    Q_OBJECT

public:
    explicit PolesPanel(QWidget *parent = nullptr);
    void showAnalysis(const Analysis &analysis) override;

    /// Where a pole s (rad/s) is drawn, in the plot's units.
    QPointF plotted(std::complex<double> s) const;
    /// The pole values shown beside their markers, upper half-plane and real axis
    /// ("−856k ± j174k"); poles drawn close together share one label.
    QStringList poleLabels() const;

protected:
    void plotGeometryChanged() override;
    std::vector<OverlayLine> overlayLines(const Analysis &analysis) const override;

private:
    /// The panel's own ranges: every pole and ring inside, one unit as long on both axes.
    void fitHome();
    void placeLabels();

    QValueAxis *m_x, *m_y;
    QScatterSeries *m_poles;
    QLineSeries *m_axis, *m_realAxis;
    std::vector<QLineSeries *> m_rings;
    std::vector<QGraphicsSimpleTextItem *> m_ringLabels;
    std::vector<double> m_ringRadii; ///< each ring's radius as drawn (0: hidden)
    std::vector<QGraphicsSimpleTextItem *> m_axisNames; ///< "Re s", "jω"
    std::vector<QGraphicsSimpleTextItem *> m_poleLabels;
    struct LabelEntry
    {
        QPointF at; ///< in the plot's units
        QString text;
        double size = 0; ///< |s|, rad/s
    };
    std::vector<LabelEntry> m_labelEntries;
    std::vector<ClosedLoopPole> m_shown; ///< finite poles, in the order of m_points
    QList<QPointF> m_points;
    /// Radius of the circle at r0: the empty disc inside it keeps the smallest poles clear
    /// of the centre and of their conjugates.
    static constexpr double kInnerRadius = PoleScale::kInnerRadius;
    double m_r0 = 1.0; ///< rad/s at radius kInnerRadius
    double m_outer = kInnerRadius; ///< radius of the outermost pole
    int m_ringCount = 0;
    double m_rightMost = 0; ///< largest x drawn
};

} // namespace loopsketch::ui
