#pragma once

// The linked plot panels. Each draws core's curves as they are; nothing is computed here
// beyond turning complex values into dB and degrees for display.

#include "panels/plotpanel.h"

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

/// Closed-loop natural frequencies on the s-plane.
class PolesPanel : public PlotPanel
{
    Q_OBJECT

public:
    explicit PolesPanel(QWidget *parent = nullptr);
    void showAnalysis(const Analysis &analysis) override;

protected:
    std::vector<OverlayLine> overlayLines(const Analysis &analysis) const override;

private:
    QValueAxis *m_x, *m_y;
    QScatterSeries *m_poles;
    QLineSeries *m_axis;
    std::vector<ClosedLoopPole> m_shown; ///< for the hover text
    double m_scale = 1.0; ///< chart units per rad/s
};

} // namespace loopsketch::ui
