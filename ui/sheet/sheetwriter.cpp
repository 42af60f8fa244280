#include "sheet/sheetwriter.h"

namespace loopsketch::ui::sheet {

QFont sheetFont(double pt, bool bold)
{
    QFont f(kFontFamily);
    f.setPointSizeF(pt);
    f.setBold(bold);
    f.setStyleHint(QFont::SansSerif);
    // no ligatures: the extracted text (search, copy) must read "fi", not one glyph
    f.setStyleStrategy(QFont::PreferNoShaping);
    return f;
}

QString q(const std::string &s)
{
    return QString::fromStdString(s);
}

QString eng(const OptionalNumber &v, std::string_view unit, int digits)
{
    if (!v || std::isnan(*v))
        return QStringLiteral("—");
    if (std::isinf(*v)) // an open input: infinite, not missing
        return (*v > 0 ? QStringLiteral("∞") : QStringLiteral("−∞"))
            + (unit.empty() ? QString() : QStringLiteral(" ") + q(std::string(unit)));
    return q(formatEngineering(*v, digits, unit));
}

QString decibels(const OptionalNumber &v)
{
    if (!v)
        return QStringLiteral("—");
    return q(formatEngineering(*v, 3)) + QStringLiteral(" dB");
}

QString percent(const OptionalNumber &v)
{
    if (!v || !std::isfinite(*v)) // "—" where it does not exist, "∞" where infinite
        return QString::fromStdString(v ? nonFiniteText(*v) : std::string("—"));
    if (std::abs(*v) < 0.001)
        return QStringLiteral("< 0.001 %");
    return QString::number(*v, 'g', 3) + QStringLiteral(" %");
}

} // namespace loopsketch::ui::sheet
