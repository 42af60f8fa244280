#pragma once

// The Readout: one strip of the numbers a designer decides on, every one formatted from
// core's Analysis in engineering notation with its unit.

#include "loopsketch/analysis/analysis.h"
#include "loopsketch/analysis/trialmetrics.h"

#include <QTimer>
#include <QWidget>

#include <vector>

class QLabel;

namespace loopsketch::ui {

class FlowLayout;

class Readout : public QWidget
{
    Q_OBJECT

public:
    explicit Readout(QWidget *parent = nullptr);

    /// `noiseFollows`: `analysis` has no noise yet (it follows in a moment): the noise cell
    /// keeps its reading, greyed, and says so.
    void showAnalysis(const Analysis &analysis, const Design &design, bool noiseFollows = false);
    /// The noise cell alone, from `analysis` (the same numbers otherwise: the noise that
    /// followed the result shown, DesignDocument::noiseChanged).
    void showNoise(const Analysis &analysis, const Design &design);
    /// The design cannot be analysed: every value reads "—", `reason` in the tooltips.
    void showUnavailable(const QString &reason);
    /// All cells as "title: value" lines, then the warnings line when shown (for tests and
    /// the clipboard).
    QString plainText() const;
    /// The value text of the cell with `title`, empty when there is none.
    QString cellText(const QString &title) const;
    /// The warnings line ("" when the analysis has no warnings).
    QString warningText() const;
    /// The instability banner's text; empty when the loop is stable.
    QString bannerText() const;

protected:
    void resizeEvent(QResizeEvent *event) override;
    bool eventFilter(QObject *watched, QEvent *event) override;

private:
    /// Gives the strip the height its readings need at the present width (one or more lines).
    void fitStripHeight();
    struct Cell
    {
        QLabel *title;
        QLabel *value;
    };
    Cell &cell(int index);
    void setCell(int index, const QString &title, const QString &value, const QString &tooltip = {},
                 int verdict = 0);
    // The steps of showAnalysis(): the banner, the spec verdicts' cell, the noise cell and
    // the warnings line.
    void showStability(const Analysis &a);
    void showSpecVerdicts(const Analysis &a);
    void showNoise(const Analysis &a, const Specs &specs, const SpecCheck &check);
    void showNoiseFollows();
    void showWarnings(const Analysis &a);

    QWidget *m_strip = nullptr; ///< the banner and the cells, in m_flow
    FlowLayout *m_flow = nullptr;
    QTimer *m_noiseFollows = nullptr; ///< greys the noise cell kept while its noise follows
    std::vector<Cell> m_cells;
    QLabel *m_warnings = nullptr; ///< below the cells, shown only when the analysis warns
    QLabel *m_banner = nullptr; ///< "UNSTABLE" and the poles that make it so
};

} // namespace loopsketch::ui
