#pragma once

// The one table of plotted curves: name, quantity, unit, colour and line style of every curve
// the panels (ui/panels/) and the review sheet (ui/sheet/) draw, so screen and paper name and
// draw a curve alike. Also the colours and dashes of the candidate overlays.

#include "loopsketch/analysis/analysis.h"

#include <QColor>
#include <QString>

#include <vector>

namespace loopsketch::ui {

/// Okabe-Ito colours, safe for the common colour-vision deficiencies.
namespace palette {
inline const QColor kOrange{0xE6, 0x9F, 0x00};
inline const QColor kSkyBlue{0x56, 0xB4, 0xE9};
inline const QColor kGreen{0x00, 0x9E, 0x73};
inline const QColor kYellow{0xF0, 0xE4, 0x42};
inline const QColor kBlue{0x00, 0x72, 0xB2};
inline const QColor kVermillion{0xD5, 0x5E, 0x00};
inline const QColor kPurple{0xCC, 0x79, 0xA7};
inline const QColor kBlack{0x22, 0x22, 0x22};
} // namespace palette

/// Every curve a panel or the sheet draws.
enum class PlotCurve {
    A, ///< the two-port estimate's A circuit gain
    LoopGain, ///< T from the return ratio
    GainTwoPort, ///< closed-loop gain, two-port estimate
    GainExact, ///< closed-loop gain, exact solution
    ZIn, ///< z_in with feedback (exact)
    ZInNoFeedback, ///< z_in with the gain block's gain at 0
    ZOut,
    ZOutNoFeedback,
    Desensitivity, ///< |1 + T|
    Step, ///< closed-loop unit-step response
    StepFinal, ///< the step's final value
    Poles, ///< closed-loop natural frequencies
    NoiseOutput, ///< total output noise density
    NoiseInput, ///< input-referred noise density
    NoiseCumulative, ///< output rms from the sweep start up to each frequency
};

/// The unit a curve's values are in; Gain and the noise units depend on the design.
enum class CurveUnit { Ratio, Gain, Ohm, OutputDensity, InputDensity, OutputRms, RadPerSecond };

struct CurveStyle
{
    PlotCurve curve;
    QString name; ///< legend text of the curve itself
    QString quantity; ///< short form, after a candidate's name in an overlay's legend entry
    CurveUnit unit;
    QColor colour;
    Qt::PenStyle style;
};

/// The table's row of `curve`.
const CurveStyle &curveStyle(PlotCurve curve);
/// Legend name of `curve` (curveStyle(curve).name).
QString curveName(PlotCurve curve);

/// What a curve of magnitudes with nothing to draw on a log scale is, in words: "zero at
/// every frequency" (an ideal output's impedance), "infinite at every frequency", "no finite
/// value to draw"; empty when some point can be drawn. Panel and sheet say it alike.
QString undrawableCurveText(const std::vector<Complex> &curve);
/// The unit of `curve`'s values for this analysis: "1" for a pure ratio, "V/A", "Ω",
/// "V/√Hz" ...
QString curveUnitText(PlotCurve curve, const Analysis &analysis);
/// An overlay's legend text: the candidate's name and the curve's quantity ("Fast: T").
QString overlayName(const QString &candidate, PlotCurve curve);
/// A candidate's one legend entry for all its overlay curves on a plot (they share its colour
/// and dash): the candidate's name and the curves' quantities, "Fast: T, gain".
QString overlayLegendText(const QString &candidate, const std::vector<PlotCurve> &curves);
/// The colour and dash of candidate `index`'s overlays (the Candidates panel uses the same in
/// its column headers, the sheet on paper).
QColor overlayColour(int index);
Qt::PenStyle overlayStyle(int index);

} // namespace loopsketch::ui
