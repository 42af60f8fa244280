#include "support/plotstyle.h"

#include "support/qtadapter.h"

#include "loopsketch/base/lookup.h"
#include "loopsketch/report/noisenames.h"

#include <QStringList>
#include <algorithm>
#include <cmath>

#include <array>
#include <iterator>

namespace loopsketch::ui {

namespace {

using P = PlotCurve;
using U = CurveUnit;

// Own curves are solid, or dashed for the curves without feedback and for the
// input-referred noise (drawn against its own axis). Built on first use: names are read
// during the dynamic initialisation of other files (static members such as
// LoopGainPanel::kT).
const std::array<CurveStyle, 15> &curves()
{
    static const std::array<CurveStyle, 15> table{{
        {P::A, QStringLiteral("A"), QStringLiteral("A"), U::Gain, palette::kOrange, Qt::SolidLine},
        {P::LoopGain, QStringLiteral("T (return ratio)"), QStringLiteral("T"), U::Ratio,
         palette::kBlue, Qt::SolidLine},
        {P::GainTwoPort, QStringLiteral("gain, two-port"), QStringLiteral("gain, two-port"),
         U::Gain, palette::kPurple, Qt::SolidLine},
        {P::GainExact, QStringLiteral("gain, exact"), QStringLiteral("gain"), U::Gain,
         palette::kBlack, Qt::SolidLine},
        {P::ZIn, QStringLiteral("z_in"), QStringLiteral("z_in"), U::Ohm, palette::kBlue,
         Qt::SolidLine},
        {P::ZInNoFeedback, QStringLiteral("z_in, no feedback"), QStringLiteral("z_in, no feedback"),
         U::Ohm, palette::kSkyBlue, Qt::DashLine},
        {P::ZOut, QStringLiteral("z_out"), QStringLiteral("z_out"), U::Ohm, palette::kVermillion,
         Qt::SolidLine},
        {P::ZOutNoFeedback, QStringLiteral("z_out, no feedback"),
         QStringLiteral("z_out, no feedback"), U::Ohm, palette::kOrange, Qt::DashLine},
        {P::Desensitivity, QStringLiteral("|1 + T|"), QStringLiteral("|1 + T|"), U::Ratio,
         palette::kBlue, Qt::SolidLine},
        {P::Step, QStringLiteral("step response"), QStringLiteral("step"), U::Gain, palette::kBlue,
         Qt::SolidLine},
        {P::StepFinal, QStringLiteral("final value"), QStringLiteral("final value"), U::Gain,
         palette::kBlack, Qt::DotLine},
        {P::Poles, QStringLiteral("closed-loop poles"), QStringLiteral("poles"), U::RadPerSecond,
         palette::kVermillion, Qt::SolidLine},
        {P::NoiseOutput, QStringLiteral("total output noise"), QStringLiteral("output noise"),
         U::OutputDensity, palette::kBlack, Qt::SolidLine},
        {P::NoiseInput, QStringLiteral("input-referred noise"), QStringLiteral("input noise"),
         U::InputDensity, palette::kVermillion, Qt::DashLine},
        {P::NoiseCumulative, QStringLiteral("cumulative output rms"),
         QStringLiteral("cumulative rms"), U::OutputRms, palette::kBlue, Qt::DashDotLine},
    }};
    return table;
}

} // namespace

const CurveStyle &curveStyle(PlotCurve curve)
{
    const CurveStyle *style = findRow(curves(), &CurveStyle::curve, curve);
    return style ? *style : curves().front();
}

QString curveName(PlotCurve curve)
{
    return curveStyle(curve).name;
}

QString curveUnitText(PlotCurve curve, const Analysis &a)
{
    switch (curveStyle(curve).unit) {
    case CurveUnit::Ratio:
        return QStringLiteral("1");
    case CurveUnit::Gain:
        return toQString(a.gainUnit);
    case CurveUnit::Ohm:
        return QStringLiteral("Ω");
    case CurveUnit::OutputDensity:
        return toQString(noiseUnits(a.gainUnit).output) + QStringLiteral("/√Hz");
    case CurveUnit::InputDensity:
        return toQString(noiseUnits(a.gainUnit).input) + QStringLiteral("/√Hz");
    case CurveUnit::OutputRms:
        return toQString(noiseUnits(a.gainUnit).output) + QStringLiteral(" rms");
    case CurveUnit::RadPerSecond:
        return QStringLiteral("rad/s");
    }
    return {};
}

QString overlayName(const QString &candidate, PlotCurve curve)
{
    return candidate + QStringLiteral(": ") + curveStyle(curve).quantity;
}

QString overlayLegendText(const QString &candidate, const std::vector<PlotCurve> &curves)
{
    QStringList quantities;
    for (PlotCurve c : curves)
        quantities << curveStyle(c).quantity;
    return candidate + QStringLiteral(": ") + quantities.join(QStringLiteral(", "));
}

QColor overlayColour(int index)
{
    // Green first (no own curve is drawn in it), then colour-blind-safe tones that the own
    // curves do not use (wine, indigo, olive, teal and rose of Paul Tol's "muted" scheme,
    // hex values from memory).
    static const QColor colours[]
        = {palette::kGreen,          QColor(0x88, 0x22, 0x55), QColor(0x33, 0x22, 0x88),
           QColor(0x99, 0x99, 0x33), QColor(0x44, 0xAA, 0x99), QColor(0xCC, 0x66, 0x77)};
    return colours[std::size_t(index) % std::size(colours)];
}

Qt::PenStyle overlayStyle(int index)
{
    // The own curves are solid, or dashed for the curves without feedback.
    static const Qt::PenStyle styles[]
        = {Qt::DotLine, Qt::DashDotLine, Qt::DashDotDotLine, Qt::DashLine};
    return styles[std::size_t(index) % std::size(styles)];
}

QString undrawableCurveText(const std::vector<Complex> &curve)
{
    const auto drawable = [](Complex z) {
        return std::isfinite(std::abs(z)) && std::abs(z) > 0;
    };
    if (curve.empty() || std::any_of(curve.begin(), curve.end(), drawable))
        return {};
    if (std::all_of(curve.begin(), curve.end(), [](Complex z) { return std::abs(z) == 0.0; }))
        return QStringLiteral("zero at every frequency");
    if (std::all_of(curve.begin(), curve.end(), [](Complex z) { return std::isinf(std::abs(z)); }))
        return QStringLiteral("infinite at every frequency");
    return QStringLiteral("no finite value to draw");
}

} // namespace loopsketch::ui
