#pragma once

// The Noise panel: total output noise density, the input-referred density and every
// source's share stacked in power, so the top of the stack is the total. All numbers are
// core's NoiseAnalysis; the panel only sums the per-source powers to stack them.

#include "panels/plotpanel.h"

#include <QString>
#include <QStringList>

#include <vector>

class QAreaSeries;
class QGraphicsRectItem;
class QGraphicsSimpleTextItem;
class QGraphicsTextItem;

namespace loopsketch::ui {

/// Units of the noise densities: the output's and the signal source's ("V/A" gives V and A).
struct NoiseUnitText
{
    QString output;
    QString input;
};
NoiseUnitText noiseUnits(const Analysis &analysis);

/// A source's name for legends and tables: "RF thermal", "PD1 r_parallel thermal",
/// "U1 e_n", "U1 i_n at in_n".
QString noiseSourceName(const NoiseContribution &contribution);

/// The integrated band, "1 Hz–145 kHz".
QString noiseBandText(const NoiseAnalysis &noise);

/// How the band was set, in a few words: "noise_band", "to convergence", "to the sweep stop,
/// not converged".
QString noiseBandKindText(const NoiseAnalysis &noise);

/// The contributions, largest output RMS over the band first (ties: core's order).
std::vector<const NoiseContribution *> noiseSourcesByShare(const NoiseAnalysis &noise);

/// Share of the total output noise power over the band, in % (rms_k^2 / rms_total^2);
/// absent when there is no total.
std::optional<double> noiseSharePct(const NoiseAnalysis &noise, const NoiseContribution &c);

class NoisePanel : public PlotPanel
{
    Q_OBJECT

public:
    explicit NoisePanel(QWidget *parent = nullptr);
    void showAnalysis(const Analysis &analysis) override;

    // Legend names, from the one curve table (support/plotstyle.h).
    static inline const QString kTotal = curveName(PlotCurve::NoiseOutput);
    static inline const QString kInput = curveName(PlotCurve::NoiseInput);
    static inline const QString kCumulative = curveName(PlotCurve::NoiseCumulative);

    /// Source names of the stacked bands, bottom of the stack first.
    QStringList bandNames() const;
    /// The band of the source named `name`, nullptr when there is none.
    QAreaSeries *band(const QString &name) const;
    /// Why there is no noise plot (Analysis::noiseProblem); empty while the plot is shown.
    QString problemText() const;
    /// The values at the linked cursor (empty when hidden).
    QString valuesText() const;
    /// The summary line above the plot.
    QString summaryText() const { return summary(); }
    /// The figures line under the legend: spot noise, SNR, output peak and slew rate, noise
    /// figure, 0.1-10 Hz peak-to-peak (all of them, joined; the line shows as many as fit;
    /// empty while there is no noise plot).
    QString figuresText() const;
    /// The cumulative output rms curve (right-hand axis).
    QLineSeries *cumulativeSeries() const { return m_cumulative; }

protected:
    std::vector<OverlayLine> overlayLines(const Analysis &analysis) const override;

public slots:
    /// Off screen (a tab behind another; QDockWidget::visibilityChanged), analyses are kept
    /// and only the latest is drawn when the panel comes back on screen.
    void setOnScreen(bool onScreen);
    /// Lists the densities at the sweep point nearest log10(f / Hz) under the cursor's
    /// frequency box; NaN hides them.
    void showValuesAt(double log10Hz);

private:
    /// What showAnalysis() takes from an Analysis.
    struct Pending
    {
        NoiseUnitText units;
        double xLo = 0, xHi = 0; ///< log10(f / Hz) of the sweep
        std::optional<NoiseAnalysis> noise;
        QString problem;
    };
    void draw(Pending in);
    void showNoNoise(const Pending &in);
    /// log10 of the output and input-referred densities over log10(f / Hz); non-finite and
    /// zero densities left out.
    static void densityPoints(const NoiseAnalysis &n, QList<QPointF> *total, QList<QPointF> *input);
    /// Sets the density axes; returns the output axis' bottom and top (log10 units).
    std::pair<double, double> setDensityAxes(const QList<QPointF> &total,
                                             const QList<QPointF> &input);
    /// Per source in `order`: drawn (it reaches 3 % of the power somewhere); sets the tooltip.
    std::vector<char> drawnSources(const NoiseAnalysis &n,
                                   const std::vector<const NoiseContribution *> &order);
    /// The sources' shares stacked in power under the total.
    void drawBands(const NoiseAnalysis &n, const std::vector<const NoiseContribution *> &order,
                   double bottom, double xLo, double xHi);
    void showSummary(const NoiseAnalysis &n, const std::vector<const NoiseContribution *> &order);
    void setBandCount(std::size_t count);
    void placeOverlays();

    /// The figures box's lines for `n`.
    QStringList figureLines(const NoiseAnalysis &n) const;

    QCategoryAxis *m_x, *m_y, *m_yInput, *m_yCumulative;
    QLineSeries *m_total, *m_input, *m_bandEdge, *m_cumulative;
    QGraphicsSimpleTextItem *m_figures = nullptr;
    QStringList m_figureLines; ///< what figuresText() says, most important first
    struct Band
    {
        QAreaSeries *area = nullptr;
        QLineSeries *upper = nullptr, *lower = nullptr;
        const NoiseContribution *source = nullptr; ///< into m_noise
    };
    std::vector<Band> m_bands; ///< bottom of the stack first; the pool beyond m_shownBands
    std::size_t m_shownBands = 0; ///< bands in the chart
    std::optional<NoiseAnalysis> m_noise; ///< what is drawn, for the cursor values
    std::optional<Pending> m_pending; ///< the latest analysis while off screen
    bool m_onScreen = true;
    NoiseUnitText m_units;
    double m_cursorAt = std::nan("");
    double m_bandEdgeAt = std::nan(""); ///< log10(f / Hz) of the band's upper end as drawn
    QGraphicsSimpleTextItem *m_bandLabel = nullptr;
    QGraphicsTextItem *m_problem = nullptr;
    QGraphicsRectItem *m_valuesBox = nullptr;
    QGraphicsSimpleTextItem *m_valuesText = nullptr;
    QStringList m_valuesLines; ///< the cursor's values, most important first
};

} // namespace loopsketch::ui
