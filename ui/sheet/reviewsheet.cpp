#include "sheet/reviewsheet.h"

#include "panels/noisepanel.h"
#include "sketch/sketchlayout.h"
#include "sketch/sketchscene.h"
#include "support/outputfile.h"
#include "support/qtadapter.h"

#include "loopsketch/analysis/metrics.h"
#include "loopsketch/analysis/trialmetrics.h"
#include "loopsketch/base/value.h"
#include "loopsketch/design/candidate.h"
#include "loopsketch/design/designfile.h"

#include <QBuffer>
#include <QDate>
#include <QDir>
#include <QFileInfo>
#include <QFontMetricsF>
#include <QImage>
#include <QPainter>
#include <QPdfWriter>
#include <QPolygonF>
#include <QRegularExpression>
#include <QSvgGenerator>
#include <QSvgRenderer>

#include <algorithm>
#include <cmath>
#include <functional>
#include <numbers>
#include <vector>

namespace loopsketch::ui {

namespace {

const QString kFontFamily = QStringLiteral("DejaVu Sans");
constexpr double kBodyPt = 8.5;
constexpr double kRowMm = 4.6;
const QColor kInk(20, 20, 20);
const QColor kRule(150, 150, 150);
const QColor kGrid(215, 215, 215);
const QColor kPass(20, 110, 40);
const QColor kFail(170, 20, 20);

// The text of README.md's "What the model does not cover".
const char *const kCautions
    = "Loopsketch computes a small-signal linear model. It does not model supply limits, slew "
      "rate, output saturation, common-mode limits, thermal effects, breakdown, or any "
      "large-signal behaviour, and its gain block is a generic linear amplifier, not a model of "
      "any real device. Check a design on the bench. Designs connected to mains, high voltage, "
      "medical equipment or safety functions must follow the applicable standards, local codes "
      "and licensed engineering practice; Loopsketch is not a substitute for them.";

QFont sheetFont(double pt, bool bold = false)
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

QString eng(const OptionalNumber &v, std::string_view unit, int digits = 4)
{
    if (!v || std::isnan(*v))
        return QStringLiteral("—");
    if (std::isinf(*v)) // an open input: infinite, not missing
        return (*v > 0 ? QStringLiteral("∞") : QStringLiteral("−∞"))
            + (unit.empty() ? QString() : QStringLiteral(" ") + q(std::string(unit)));
    return q(formatEngineering(*v, digits, unit));
}

QString degrees(const OptionalNumber &v)
{
    if (!v)
        return QStringLiteral("—");
    return q(formatEngineering(*v, 3)) + QStringLiteral("°");
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

// ---------------------------------------------------------------------------------------
// Page layout: a cursor running down the page in millimetres. With m_painter null it only
// measures, so the page count is known before the first page is drawn.

class SheetWriter
{
public:
    SheetWriter(QPainter *painter, QPaintDevice *device, QPdfWriter *pdf, QSizeF pageMm,
                double unitsPerMm, int totalPages)
        : m_p(painter), m_device(device), m_pdf(pdf), m_pageMm(pageMm), m_k(unitsPerMm),
          m_total(totalPages)
    { }

    double width() const { return m_pageMm.width(); }
    double bottom() const { return m_pageMm.height() - 9.0; } // footer below
    double y() const { return m_y; }
    void advance(double mm) { m_y += mm; }
    int page() const { return m_page; }
    QPainter *painter() const { return m_p; }
    double k() const { return m_k; }

    QRectF toDevice(const QRectF &mm) const
    {
        return {mm.x() * m_k, mm.y() * m_k, mm.width() * m_k, mm.height() * m_k};
    }

    void ensure(double mm)
    {
        if (m_y + mm > bottom())
            newPage();
    }

    void newPage()
    {
        footer();
        if (m_p && m_pdf)
            m_pdf->newPage();
        ++m_page;
        m_y = 0;
    }

    void finish() { footer(); }

    double textHeight(const QString &text, const QFont &font, double widthMm) const
    {
        const QFontMetricsF fm(font, m_device);
        const QRectF r = fm.boundingRect(QRectF(0, 0, widthMm * m_k, 1e9),
                                         Qt::TextWordWrap | Qt::AlignLeft, text);
        return r.height() / m_k;
    }

    /// A wrapped paragraph at the cursor.
    void paragraph(const QString &text, const QFont &font, double indentMm = 0,
                   const QColor &colour = kInk)
    {
        const double w = width() - indentMm;
        const double h = textHeight(text, font, w);
        ensure(h);
        if (m_p) {
            m_p->setFont(font);
            m_p->setPen(colour);
            m_p->drawText(toDevice(QRectF(indentMm, m_y, w, h + 1)),
                          Qt::TextWordWrap | Qt::AlignLeft | Qt::AlignTop, text);
        }
        m_y += h;
    }

    /// A section heading; `keepWithMm` of what follows must fit on the same page too.
    void heading(const QString &text, double keepWithMm = 12)
    {
        ensure(14 + keepWithMm);
        m_y += 3;
        paragraph(text, sheetFont(11, true));
        rule(0.3);
        m_y += 1.5;
    }

    void rule(double widthMm, double fromMm = 0, double toMm = -1)
    {
        if (toMm < 0)
            toMm = width();
        if (m_p) {
            m_p->setPen(QPen(kRule, widthMm * m_k));
            m_p->drawLine(QPointF(fromMm * m_k, m_y * m_k), QPointF(toMm * m_k, m_y * m_k));
        }
    }

    void cell(const QRectF &mm, const QString &text, const QFont &font, Qt::Alignment align,
              const QColor &colour = kInk)
    {
        if (!m_p)
            return;
        m_p->setFont(font);
        m_p->setPen(colour);
        const QRectF inner = toDevice(QRectF(mm.x() + 1.0, mm.y(), mm.width() - 2.0, mm.height()));
        // a value too long for its column ends in "…" rather than running into the next
        const QString shown
            = QFontMetricsF(font, m_device).elidedText(text, Qt::ElideRight, inner.width());
        m_p->drawText(inner, static_cast<int>(align | Qt::AlignVCenter), shown);
    }

    struct Column
    {
        QString title;
        double widthMm;
        Qt::Alignment align = Qt::AlignLeft;
    };
    struct Row
    {
        QStringList cells;
        std::vector<QColor> colours = {}; // optional per cell
    };

    /// A table with a bold header row; rows that do not fit go to the next page, which
    /// repeats the header.
    void table(const std::vector<Column> &columns, const std::vector<Row> &rows)
    {
        const QFont head = sheetFont(kBodyPt, true), body = sheetFont(kBodyPt);
        ensure(kRowMm * 2);
        header(columns, head);
        for (std::size_t r = 0; r < rows.size(); ++r) {
            if (m_y + kRowMm > bottom()) {
                newPage();
                header(columns, head);
            }
            if (m_p && r % 2 == 1) {
                m_p->fillRect(toDevice(QRectF(0, m_y, totalWidth(columns), kRowMm)),
                              QColor(244, 244, 244));
            }
            double x = 0;
            for (std::size_t c = 0; c < columns.size(); ++c) {
                const QColor colour = c < rows[r].colours.size() ? rows[r].colours[c] : kInk;
                cell(QRectF(x, m_y, columns[c].widthMm, kRowMm),
                     c < static_cast<std::size_t>(rows[r].cells.size())
                         ? rows[r].cells[static_cast<qsizetype>(c)]
                         : QString(),
                     body, columns[c].align, colour);
                x += columns[c].widthMm;
            }
            m_y += kRowMm;
        }
        rule(0.2, 0, totalWidth(columns));
        m_y += 2;
    }

private:
    static double totalWidth(const std::vector<Column> &columns)
    {
        double w = 0;
        for (const auto &c : columns)
            w += c.widthMm;
        return w;
    }

    void header(const std::vector<Column> &columns, const QFont &font)
    {
        double x = 0;
        for (const auto &c : columns) {
            cell(QRectF(x, m_y, c.widthMm, kRowMm), c.title, font, c.align);
            x += c.widthMm;
        }
        m_y += kRowMm;
        rule(0.25, 0, totalWidth(columns));
        m_y += 0.4;
    }

    void footer()
    {
        if (!m_p)
            return;
        const QString text = QStringLiteral("page %1 of %2").arg(m_page).arg(m_total);
        cell(QRectF(0, m_pageMm.height() - 5, width(), 5), text, sheetFont(7.5), Qt::AlignRight,
             kRule);
        cell(QRectF(0, m_pageMm.height() - 5, width(), 5),
             QStringLiteral("Loopsketch review sheet"), sheetFont(7.5), Qt::AlignLeft, kRule);
    }

    QPainter *m_p;
    QPaintDevice *m_device;
    QPdfWriter *m_pdf;
    QSizeF m_pageMm;
    double m_k;
    int m_total;
    int m_page = 1;
    double m_y = 0;
};

// ---------------------------------------------------------------------------------------
// Plots

struct Series
{
    QString name;
    std::vector<double> x, y; // x in Hz (log axes) or s; NaN breaks the line
    QColor colour;
    Qt::PenStyle style = Qt::SolidLine;
};

double niceStep(double span, int maxTicks, std::initializer_list<double> steps)
{
    for (double s : steps)
        if (span / s <= maxTicks)
            return s;
    return *(steps.end() - 1) * std::ceil(span / (maxTicks * *(steps.end() - 1)));
}

struct Axis
{
    double lo = 0, hi = 1;
    bool log = false;
    double step = 1; // linear axes
};

double mapAxis(const Axis &a, double v, double from, double to)
{
    const double t = a.log ? (std::log10(v) - a.lo) / (a.hi - a.lo) : (v - a.lo) / (a.hi - a.lo);
    return from + t * (to - from);
}

void finiteRange(const std::vector<Series> &series, bool useX, double &lo, double &hi)
{
    lo = INFINITY;
    hi = -INFINITY;
    for (const auto &s : series)
        for (double v : useX ? s.x : s.y)
            if (std::isfinite(v)) {
                lo = std::min(lo, v);
                hi = std::max(hi, v);
            }
}

/// One panel: frame, grid, tick labels, curves. `yFormat` gives a tick label.
void drawPanel(QPainter &p, const QRectF &area, double k, const Axis &xa, const Axis &ya,
               const std::vector<Series> &series, const QString &yTitle, bool xLabels,
               const QString &xTitle, bool yLogOhm)
{
    const QFont tick = sheetFont(6.5);
    p.setFont(tick);
    const QFontMetricsF fm(tick, p.device());
    const double pad = 1.2 * k;

    p.setPen(QPen(kGrid, 0.15 * k));
    // x grid and labels
    std::vector<std::pair<double, QString>> xt;
    if (xa.log) {
        for (int d = static_cast<int>(std::ceil(xa.lo - 1e-9));
             d <= static_cast<int>(std::floor(xa.hi + 1e-9)); ++d)
            xt.emplace_back(std::pow(10.0, d),
                            QString::fromStdString(formatEngineering(std::pow(10.0, d), 3)));
        for (int d = static_cast<int>(std::floor(xa.lo)); d < static_cast<int>(std::ceil(xa.hi));
             ++d)
            for (int m = 2; m <= 9; ++m) {
                const double v = m * std::pow(10.0, d);
                if (std::log10(v) <= xa.lo || std::log10(v) >= xa.hi)
                    continue;
                const double x = mapAxis(xa, v, area.left(), area.right());
                p.setPen(QPen(QColor(235, 235, 235), 0.1 * k));
                p.drawLine(QPointF(x, area.top()), QPointF(x, area.bottom()));
            }
    } else {
        for (double v = std::ceil(xa.lo / xa.step) * xa.step; v <= xa.hi + 1e-12 * std::abs(xa.hi);
             v += xa.step)
            xt.emplace_back(v, QString::fromStdString(formatEngineering(v, 3, "s")));
    }
    for (const auto &[v, label] : xt) {
        const double x = mapAxis(xa, v, area.left(), area.right());
        p.setPen(QPen(kGrid, 0.15 * k));
        p.drawLine(QPointF(x, area.top()), QPointF(x, area.bottom()));
        if (xLabels) {
            p.setPen(kInk);
            const double w = fm.horizontalAdvance(label);
            p.drawText(QPointF(x - w / 2, area.bottom() + pad + fm.ascent()), label);
        }
    }
    if (xLabels && !xTitle.isEmpty()) {
        p.setPen(kInk);
        const double w = fm.horizontalAdvance(xTitle);
        p.drawText(QPointF(area.right() - w, area.bottom() + pad + fm.ascent() + fm.height()),
                   xTitle);
    }
    // y grid and labels
    double maxLabel = 0;
    for (double v = std::ceil(ya.lo / ya.step - 1e-9) * ya.step; v <= ya.hi + 1e-9 * ya.step;
         v += ya.step) {
        const double y = mapAxis(ya, v, area.bottom(), area.top());
        p.setPen(QPen(kGrid, 0.15 * k));
        p.drawLine(QPointF(area.left(), y), QPointF(area.right(), y));
        const QString label = yLogOhm
            ? QString::fromStdString(formatEngineering(std::pow(10.0, v), 3))
            : QString::fromStdString(formatEngineering(std::abs(v) < 1e-9 * ya.step ? 0.0 : v, 3));
        const double w = fm.horizontalAdvance(label);
        maxLabel = std::max(maxLabel, w);
        p.setPen(kInk);
        p.drawText(QPointF(area.left() - pad - w, y + fm.ascent() / 2 - fm.descent() / 2), label);
    }
    if (!yTitle.isEmpty()) {
        p.save();
        p.translate(area.left() - pad * 2 - maxLabel - fm.descent(), area.center().y());
        p.rotate(-90);
        p.setPen(kInk);
        p.drawText(QPointF(-fm.horizontalAdvance(yTitle) / 2, 0), yTitle);
        p.restore();
    }
    // curves
    p.save();
    p.setClipRect(area);
    p.setRenderHint(QPainter::Antialiasing);
    for (const auto &s : series) {
        QPen pen(s.colour, 0.35 * k, s.style);
        pen.setJoinStyle(Qt::RoundJoin);
        p.setPen(pen);
        QPolygonF line;
        const auto flush = [&] {
            if (line.size() > 1)
                p.drawPolyline(line);
            line.clear();
        };
        for (std::size_t i = 0; i < s.x.size() && i < s.y.size(); ++i) {
            if (!std::isfinite(s.x[i]) || !std::isfinite(s.y[i]) || (xa.log && s.x[i] <= 0)) {
                flush();
                continue;
            }
            const double yv
                = std::clamp(s.y[i], ya.lo - 10 * (ya.hi - ya.lo), ya.hi + 10 * (ya.hi - ya.lo));
            line << QPointF(mapAxis(xa, s.x[i], area.left(), area.right()),
                            mapAxis(ya, yv, area.bottom(), area.top()));
        }
        flush();
    }
    p.restore();
    p.setPen(QPen(kRule, 0.25 * k));
    p.setBrush(Qt::NoBrush);
    p.drawRect(area);
}

Axis linearAxis(const std::vector<Series> &series, std::initializer_list<double> steps,
                double minSpan, int maxTicks = 6)
{
    Axis a;
    double lo, hi;
    finiteRange(series, false, lo, hi);
    if (!std::isfinite(lo)) {
        lo = 0;
        hi = 1;
    }
    if (hi - lo < minSpan) {
        const double mid = (hi + lo) / 2;
        lo = mid - minSpan / 2;
        hi = mid + minSpan / 2;
    }
    a.step = niceStep(hi - lo, maxTicks, steps);
    a.lo = std::floor(lo / a.step) * a.step;
    a.hi = std::ceil(hi / a.step) * a.step;
    if (a.hi <= a.lo)
        a.hi = a.lo + a.step;
    return a;
}

Axis frequencyAxis(const Analysis &a)
{
    Axis x;
    x.log = true;
    if (a.frequenciesHz.empty() || !(a.frequenciesHz.front() > 0)) {
        x.lo = 0;
        x.hi = 9;
        return x;
    }
    x.lo = std::log10(a.frequenciesHz.front());
    x.hi = std::log10(a.frequenciesHz.back());
    if (x.hi <= x.lo)
        x.hi = x.lo + 1;
    return x;
}

Series dbSeries(const QString &name, const Analysis &a, const Curve &c, QColor colour,
                Qt::PenStyle style = Qt::SolidLine)
{
    Series s{name, a.frequenciesHz, {}, colour, style};
    s.y.reserve(c.size());
    for (const auto &v : c)
        s.y.push_back(std::isfinite(std::abs(v)) ? toDecibels(std::abs(v)) : NAN);
    s.x.resize(s.y.size());
    return s;
}

Series logOhmSeries(const QString &name, const Analysis &a, const Curve &c, QColor colour,
                    Qt::PenStyle style = Qt::SolidLine)
{
    Series s{name, a.frequenciesHz, {}, colour, style};
    for (const auto &v : c)
        s.y.push_back(std::abs(v) > 0 && std::isfinite(std::abs(v)) ? std::log10(std::abs(v))
                                                                    : NAN);
    s.x.resize(s.y.size());
    return s;
}

Series phaseSeries(const QString &name, const Analysis &a, const Curve &c, QColor colour)
{
    Series s{name, a.frequenciesHz, {}, colour, Qt::SolidLine};
    if (c.empty())
        return s;
    const std::vector<double> ph = unwrapPhase(c, std::arg(c.front()));
    for (std::size_t i = 0; i < ph.size(); ++i)
        s.y.push_back(std::isfinite(std::abs(c[i])) ? ph[i] * 180.0 / std::numbers::pi : NAN);
    s.x.resize(s.y.size());
    return s;
}

bool hasFinite(const Curve &c)
{
    return std::any_of(c.begin(), c.end(),
                       [](const auto &v) { return std::isfinite(std::abs(v)); });
}

void drawLegend(QPainter &p, const QRectF &area, double k, const std::vector<Series> &series)
{
    const QFont f = sheetFont(6.5);
    p.setFont(f);
    const QFontMetricsF fm(f, p.device());
    double x = area.left();
    const double y = area.center().y();
    for (const auto &s : series) {
        p.setPen(QPen(s.colour, 0.5 * k, s.style));
        p.drawLine(QPointF(x, y), QPointF(x + 6 * k, y));
        x += 7 * k;
        p.setPen(kInk);
        p.drawText(QPointF(x, y + fm.ascent() / 2 - fm.descent() / 2), s.name);
        x += fm.horizontalAdvance(s.name) + 4 * k;
    }
}

const QColor kBlue(25, 80, 160), kOrange(205, 110, 20), kGreen(40, 130, 70), kPurple(120, 60, 150);

/// log10 of a density per sweep frequency; NaN where there is none (breaks the line).
Series logDensitySeries(const QString &name, const std::vector<double> &hz,
                        const std::vector<double> &density, QColor colour,
                        Qt::PenStyle style = Qt::SolidLine)
{
    Series s{name, hz, {}, colour, style};
    s.y.reserve(hz.size());
    for (std::size_t i = 0; i < hz.size(); ++i) {
        const double v = i < density.size() ? density[i] : NAN;
        s.y.push_back(std::isfinite(v) && v > 0 ? std::log10(v) : NAN);
    }
    return s;
}

/// Decades from the first series' peak down to at most `decades` below it.
Axis decadeAxis(const std::vector<Series> &series, int decades)
{
    Axis a;
    double lo = INFINITY, hi = -INFINITY;
    finiteRange(series, false, lo, hi);
    double peak = -INFINITY;
    for (double v : series.front().y)
        if (std::isfinite(v))
            peak = std::max(peak, v);
    if (!std::isfinite(peak)) {
        a.lo = -9;
        a.hi = -6;
        return a;
    }
    a.hi = std::ceil(std::max(peak, hi) + 0.05);
    a.lo = std::max(std::floor(lo), a.hi - decades);
    if (a.hi - a.lo < 2)
        a.lo = a.hi - 2;
    a.step = a.hi - a.lo > 5 ? 2 : 1;
    return a;
}

/// The sweep index the sheet quotes source densities at: 1 kHz when the band holds it
/// (a common reference point of noise data, common practice), else the band's centre on
/// a log scale.
std::size_t noiseReferenceIndex(const NoiseAnalysis &n)
{
    const double want
        = n.bandLowHz <= 1e3 && n.bandHighHz >= 1e3 ? 1e3 : std::sqrt(n.bandLowHz * n.bandHighHz);
    std::size_t best = 0;
    for (std::size_t i = 0; i < n.frequenciesHz.size(); ++i) {
        if (std::abs(std::log(n.frequenciesHz[i] / want))
            < std::abs(std::log(n.frequenciesHz[best] / want)))
            best = i;
    }
    return best;
}

} // namespace

QString sheetPlotFileStem(SheetPlot plot)
{
    switch (plot) {
    case SheetPlot::LoopGain:
        return QStringLiteral("loop-gain");
    case SheetPlot::Impedance:
        return QStringLiteral("impedance");
    case SheetPlot::Desensitivity:
        return QStringLiteral("desensitivity");
    case SheetPlot::Step:
        return QStringLiteral("step");
    case SheetPlot::Noise:
        return QStringLiteral("noise");
    }
    return {};
}

void drawSheetPlot(QPainter &p, const QRectF &rect, double k, SheetPlot plot, const Analysis &a)
{
    p.save();
    const QFont titleFont = sheetFont(8.5, true);
    p.setFont(titleFont);
    const QFontMetricsF tfm(titleFont, p.device());
    const double left = rect.left() + 17 * k, right = rect.right() - 2 * k;
    const double top = rect.top() + tfm.height() + 6 * k, bottom = rect.bottom() - 9 * k;
    const QRectF legendRect(left, rect.top() + tfm.height() + 0.5 * k, right - left, 4 * k);
    const Axis fx = frequencyAxis(a);
    const QString unit = q(a.gainUnit);
    QString title;
    std::vector<Series> legend;
    switch (plot) {
    case SheetPlot::LoopGain: {
        title = QStringLiteral("Loop gain and closed-loop gain");
        std::vector<Series> mag;
        mag.push_back(dbSeries(QStringLiteral("|T| (return ratio)"), a, a.curves.loopGain, kBlue));
        mag.push_back(dbSeries(QStringLiteral("closed loop, exact (dB %1)").arg(unit), a,
                               a.curves.gainExact, kOrange));
        if (hasFinite(a.curves.gainTwoPort))
            mag.push_back(dbSeries(QStringLiteral("closed loop, two-port"), a, a.curves.gainTwoPort,
                                   kGreen, Qt::DashLine));
        std::vector<Series> ph{
            phaseSeries(QStringLiteral("phase of T"), a, a.curves.loopGain, kBlue)};
        legend = mag;
        const double mid = top + (bottom - top) * 0.58;
        Axis ym = linearAxis(mag, {10, 20, 40, 50, 100}, 20, 6);
        Axis yp = linearAxis(ph, {45, 90, 180, 360}, 90, 5);
        drawPanel(p, QRectF(QPointF(left, top), QPointF(right, mid - 3 * k)), k, fx, ym, mag,
                  QStringLiteral("dB"), false, {}, false);
        drawPanel(p, QRectF(QPointF(left, mid + 3 * k), QPointF(right, bottom)), k, fx, yp, ph,
                  QStringLiteral("phase of T (°)"), true, QStringLiteral("Hz"), false);
        break;
    }
    case SheetPlot::Impedance: {
        title = QStringLiteral("Impedance (exact)");
        std::vector<Series> z{
            logOhmSeries(QStringLiteral("|z_in|"), a, a.curves.zInExact, kBlue),
            logOhmSeries(QStringLiteral("|z_out|"), a, a.curves.zOutExact, kOrange)};
        legend = z;
        Axis y = linearAxis(z, {1, 2, 3, 4, 5}, 1, 6);
        drawPanel(p, QRectF(QPointF(left, top), QPointF(right, bottom)), k, fx, y, z,
                  QStringLiteral("Ω"), true, QStringLiteral("Hz"), true);
        break;
    }
    case SheetPlot::Desensitivity: {
        title = QStringLiteral("Desensitivity |1 + T|");
        std::vector<Series> d{
            dbSeries(QStringLiteral("|1 + T|"), a, a.curves.desensitivity, kPurple)};
        legend = d;
        Axis y = linearAxis(d, {10, 20, 40, 50, 100}, 20, 6);
        drawPanel(p, QRectF(QPointF(left, top), QPointF(right, bottom)), k, fx, y, d,
                  QStringLiteral("dB"), true, QStringLiteral("Hz"), false);
        break;
    }
    case SheetPlot::Step: {
        title = a.stable ? QStringLiteral("Step response (per unit source step, %1)").arg(unit)
                         : QStringLiteral("Step response: none, the loop is unstable");
        Series s{QStringLiteral("output"), a.step.timeS, a.step.response, kBlue, Qt::SolidLine};
        std::vector<Series> st{s};
        legend = st;
        Axis x;
        double lo, hi;
        finiteRange(st, true, lo, hi);
        if (!std::isfinite(lo) || hi <= lo) {
            lo = 0;
            hi = 1;
        }
        x.lo = lo;
        x.hi = hi;
        const double mag = std::pow(10.0, std::floor(std::log10(hi - lo)));
        x.step = mag * niceStep((hi - lo) / mag, 6, {0.5, 1, 2, 2.5, 5, 10});
        finiteRange(st, false, lo, hi);
        if (!std::isfinite(lo)) {
            lo = 0;
            hi = 1;
        }
        lo = std::min(lo, 0.0);
        hi = std::max(hi, 0.0);
        if (hi - lo <= 0)
            hi = lo + 1;
        Axis y;
        const double ymag = std::pow(10.0, std::floor(std::log10(hi - lo)));
        y.step = ymag * niceStep((hi - lo) / ymag, 6, {0.2, 0.25, 0.5, 1, 2, 2.5, 5, 10});
        y.lo = std::floor(lo / y.step) * y.step;
        y.hi = std::ceil(hi / y.step) * y.step;
        drawPanel(p, QRectF(QPointF(left, top), QPointF(right, bottom)), k, x, y, st, unit, true,
                  QStringLiteral("time"), false);
        break;
    }
    case SheetPlot::Noise: {
        const NoiseUnitText u = noiseUnits(a);
        title = QStringLiteral("Noise density, output and input-referred");
        if (!a.noise || a.noise->frequenciesHz.empty()) {
            p.setFont(sheetFont(kBodyPt));
            p.setPen(kInk);
            p.drawText(QRectF(QPointF(left, top), QPointF(right, bottom)),
                       Qt::AlignCenter | Qt::TextWordWrap,
                       QStringLiteral("No noise analysis: %1")
                           .arg(a.noiseProblem.empty() ? QStringLiteral("not computed")
                                                       : q(a.noiseProblem)));
            break;
        }
        const NoiseAnalysis &n = *a.noise;
        // The total and the three largest sources' own densities at the output.
        std::vector<Series> out{logDensitySeries(QStringLiteral("total output"), n.frequenciesHz,
                                                 n.outputDensity, kBlue)};
        const QColor colours[] = {kOrange, kGreen, kPurple};
        const auto order = noiseSourcesByShare(n);
        for (std::size_t i = 0; i < order.size() && i < 3; ++i) {
            std::vector<double> own(order[i]->outputPsd.size());
            for (std::size_t j = 0; j < own.size(); ++j)
                own[j] = std::sqrt(order[i]->outputPsd[j]);
            out.push_back(logDensitySeries(noiseSourceName(*order[i]), n.frequenciesHz, own,
                                           colours[i], Qt::DashLine));
        }
        std::vector<Series> in{logDensitySeries(QStringLiteral("input-referred"), n.frequenciesHz,
                                                n.inputDensity, kBlue)};
        legend = out;
        const double mid = top + (bottom - top) * 0.58;
        drawPanel(p, QRectF(QPointF(left, top), QPointF(right, mid - 3 * k)), k, fx,
                  decadeAxis(out, 6), out, QStringLiteral("output (%1/√Hz)").arg(u.output), false,
                  {}, true);
        drawPanel(p, QRectF(QPointF(left, mid + 3 * k), QPointF(right, bottom)), k, fx,
                  decadeAxis(in, 4), in, QStringLiteral("input (%1/√Hz)").arg(u.input), true,
                  QStringLiteral("Hz"), true);
        break;
    }
    }
    p.setFont(titleFont);
    p.setPen(kInk);
    p.drawText(QPointF(rect.left(), rect.top() + tfm.ascent()), title);
    drawLegend(p, legendRect, k, legend);
    p.restore();
}

QString revisionText(const Design &design)
{
    return q(design.revision);
}

QString designContentHash(const Design &design)
{
    const std::string text = serializeDesign(design);
    std::uint32_t h = 2166136261u; // FNV-1a offset basis and prime (32 bit)
    for (unsigned char c : text) {
        h ^= c;
        h *= 16777619u;
    }
    return QStringLiteral("%1").arg(h, 8, 16, QLatin1Char('0'));
}

namespace {

void titleBlock(SheetWriter &w, const Design &d, const Analysis &a, const QString &fileName,
                const SheetSpread *spread)
{
    w.paragraph(d.title.empty() ? QStringLiteral("Untitled design") : q(d.title),
                sheetFont(15, true));
    if (!a.stable) {
        // First thing on the sheet: the loop does not work, and why.
        w.advance(1);
        w.paragraph(QStringLiteral("UNSTABLE"), sheetFont(14, true), 0, kFail);
        w.paragraph(QStringLiteral("%1 closed-loop pole%2 in the right half-plane: %3. "
                                   "Bandwidth, peaking, step response and noise rms do not "
                                   "exist; every spec fails. The loop gain and impedance "
                                   "plots below show what to change.")
                        .arg(a.rhpPoles)
                        .arg(a.rhpPoles == 1 ? QString() : QStringLiteral("s"))
                        .arg(unstablePolesText(a, 4)),
                    sheetFont(kBodyPt, true), 0, kFail);
        w.advance(1);
    }
    w.advance(1.5);
    // The revision as the design file writes it; no column when the file gives none.
    const QString rev = revisionText(d);
    std::vector<SheetWriter::Column> cols{{QStringLiteral("File"), 70},
                                          {QStringLiteral("Date"), 28},
                                          {QStringLiteral("Design hash"), 30}};
    QStringList cells{fileName.isEmpty() ? QStringLiteral("(not saved)") : fileName,
                      QDate::currentDate().toString(Qt::ISODate), designContentHash(d)};
    if (!rev.isEmpty()) {
        cols.push_back({QStringLiteral("Revision"), 52});
        cells << rev;
    }
    w.table(cols, {{cells}});
    // Provenance: what produced these numbers, so a reviewer can reproduce them.
    const double kelvin = d.temperatureK();
    QString band = QStringLiteral("not computed");
    if (a.noise)
        band = eng(a.noise->bandLowHz, "Hz") + QStringLiteral(" – ")
            + eng(a.noise->bandHighHz, "Hz")
            + (a.noise->bandKind == NoiseBandKind::Given ? QStringLiteral(" (noise_band)")
                                                         : QStringLiteral(" (until converged)"));
    QString monteCarlo = QStringLiteral("none (no toleranced parts, or 0 trials)");
    if (spread)
        monteCarlo = QStringLiteral("%1 trials (%2 completed), seed %3")
                         .arg(spread->monteCarlo.trials)
                         .arg(spread->monteCarlo.completed)
                         .arg(spread->monteCarlo.seed);
    w.paragraph(
        QStringLiteral("Loopsketch %1 · design hash FNV-1a (32 bit) of the saved design text · "
                       "sweep %2 – %3, %4 points per decade · temperature %5 K (%6 °C%7) · "
                       "noise band %8 · Monte Carlo %9")
            .arg(QStringLiteral(LOOPSKETCH_VERSION), eng(d.sweep.start.si, "Hz"),
                 eng(d.sweep.stop.si, "Hz"))
            .arg(d.sweep.pointsPerDecade)
            .arg(QString::number(kelvin, 'g', 6), QString::number(kelvin - 273.15, 'g', 5),
                 d.temperature ? QString() : QStringLiteral(", the default"), band, monteCarlo),
        sheetFont(7.5), 0, QColor(70, 70, 70));
    w.advance(1);
    if (!d.notes.empty())
        w.paragraph(q(d.notes), sheetFont(kBodyPt), 0, QColor(60, 60, 60));
}

void sketchSection(SheetWriter &w, const Design &d)
{
    w.heading(QStringLiteral("Sketch"));
    const double h = 62;
    w.ensure(h);
    if (QPainter *p = w.painter()) {
        SketchScene scene;
        scene.rebuild(&d, d.sketch ? *d.sketch : automaticLayout(d));
        const QRectF source = scene.itemsBoundingRect().adjusted(-10, -10, 10, 10);
        // Through an SVG in memory: the scene's point-size fonts would otherwise be sized for
        // the PDF's 1200 dpi while its geometry is scaled to the target.
        QBuffer buffer;
        buffer.open(QIODevice::ReadWrite);
        {
            QSvgGenerator svg;
            svg.setOutputDevice(&buffer);
            const QSize size = source.size().toSize();
            svg.setSize(size);
            svg.setViewBox(QRect(QPoint(0, 0), size));
            QPainter sp(&svg);
            scene.render(&sp, QRectF(QPointF(0, 0), QSizeF(size)), source, Qt::KeepAspectRatio);
        }
        QSvgRenderer renderer(buffer.data());
        renderer.setAspectRatioMode(Qt::KeepAspectRatio);
        renderer.render(p, w.toDevice(QRectF(0, w.y(), w.width(), h)));
    }
    w.advance(h + 2);
}

void partsSection(SheetWriter &w, const Design &d)
{
    w.heading(QStringLiteral("Parts"), 3 * kRowMm);
    // Every field that enters the analysis, from core's one table (partFieldTexts()), the
    // same rows as `loopsketch analyze`.
    std::vector<SheetWriter::Row> rows;
    const QColor grey(100, 100, 100);
    for (const Part &part : d.parts) {
        const std::vector<PartFieldText> fields = partFieldTexts(part);
        for (std::size_t i = 0; i < fields.size(); ++i) {
            const PartFieldText &f = fields[i];
            const QString who = i == 0 ? q(part.id)
                : i == 1               ? q(std::string(partSpec(part.type).typeName))
                                       : QString();
            rows.push_back({{who, q(f.field), q(f.label), q(f.value), q(f.rkm), q(f.note)},
                            {i == 0 ? kInk : grey, kInk, kInk, kInk, kInk, grey}});
        }
    }
    w.table({{QStringLiteral("Part"), 19},
             {QStringLiteral("Field"), 22},
             {QStringLiteral("Quantity"), 46},
             {QStringLiteral("Value"), 41, Qt::AlignRight},
             {QStringLiteral("RKM"), 11, Qt::AlignRight},
             {QStringLiteral("Note"), 41}},
            rows);
}

void topologySection(SheetWriter &w, const Analysis &a)
{
    w.heading(QStringLiteral("Topology"));
    const QFont f = sheetFont(kBodyPt);
    if (a.topology) {
        const Topology &t = *a.topology;
        QString parts;
        for (const auto &id : t.networkParts)
            parts += (parts.isEmpty() ? QString() : QStringLiteral(", ")) + q(id);
        w.paragraph(
            QStringLiteral("%1 feedback, %2 parameters, %3 gain (%4). Feedback network: %5.")
                .arg(q(t.name()), q(toString(t.parameters())), q(t.gainType()), q(t.gainUnit()),
                     parts.isEmpty() ? QStringLiteral("—") : parts),
            f);
        if (!a.twoPortProblem.empty())
            w.paragraph(QStringLiteral("No two-port estimate: %1").arg(q(a.twoPortProblem)), f);
    } else {
        w.paragraph(QStringLiteral("Not a two-port feedback form: %1").arg(q(a.topologyReason)), f);
    }
    w.advance(1);
}

void methodSection(SheetWriter &w, const Analysis &a)
{
    w.heading(QStringLiteral("Methods side by side (DC)"));
    const std::string gu = a.gainUnit;
    const auto &tp = a.twoPort;
    const auto &rr = a.returnRatio;
    const auto tpv = [&](OptionalNumber TwoPortSummary::*m) {
        return tp ? (*tp).*m : OptionalNumber{};
    };
    std::vector<SheetWriter::Row> rows{
        {{QStringLiteral("gain"), eng(tpv(&TwoPortSummary::gain), gu), eng(a.exact.gain, gu),
          eng(rr.gain, gu), percent(tpv(&TwoPortSummary::gainErrorPct))}},
        {{QStringLiteral("loop gain (ratio)"), eng(tpv(&TwoPortSummary::loopGain), ""),
          QStringLiteral("—"), eng(rr.loopGain, ""), QStringLiteral("—")}},
        {{QStringLiteral("feedback factor β"),
          a.topology ? eng(tpv(&TwoPortSummary::beta), a.topology->feedbackUnit())
                     : QStringLiteral("—"),
          QStringLiteral("—"), QStringLiteral("—"), QStringLiteral("—")}},
        {{QStringLiteral("z_in"), eng(tpv(&TwoPortSummary::zIn), "Ω"), eng(a.exact.zIn, "Ω"),
          eng(rr.zIn, "Ω"), percent(tpv(&TwoPortSummary::zInErrorPct))}},
        {{QStringLiteral("z_out"), eng(tpv(&TwoPortSummary::zOut), "Ω"), eng(a.exact.zOut, "Ω"),
          eng(rr.zOut, "Ω"), percent(tpv(&TwoPortSummary::zOutErrorPct))}},
    };
    w.table({{QStringLiteral("Quantity"), 30},
             {QStringLiteral("Two-port estimate"), 40, Qt::AlignRight},
             {QStringLiteral("Exact solution"), 40, Qt::AlignRight},
             {QStringLiteral("Return ratio"), 40, Qt::AlignRight},
             {QStringLiteral("Estimate error"), 30, Qt::AlignRight}},
            rows);
    w.paragraph(QStringLiteral("Error = (two-port estimate − exact) / exact."), sheetFont(7.5), 0,
                QColor(90, 90, 90));
}

void metricsSection(SheetWriter &w, const Design &d, const Analysis &a)
{
    w.heading(QStringLiteral("Key metrics against the specs"));
    const std::string gu = a.gainUnit;
    std::vector<SheetWriter::Row> rows;
    const auto verdict = [&a](std::optional<bool> ok) -> std::pair<QString, QColor> {
        if (!ok)
            return {QStringLiteral("no spec"), QColor(110, 110, 110)};
        if (!a.stable)
            return {QStringLiteral("fail: unstable"), kFail};
        return *ok ? std::pair{QStringLiteral("pass"), kPass}
                   : std::pair{QStringLiteral("fail"), kFail};
    };
    const QString none = QStringLiteral("— (unstable)");
    const auto add = [&](const QString &name, const QString &value, const QString &spec,
                         std::optional<bool> ok) {
        const auto [text, colour] = verdict(ok);
        rows.push_back({{name, value, spec, text}, {kInk, kInk, kInk, colour}});
    };
    // Core's spec check, the one the Candidates panel and the spread yield use.
    const SpecCheck check = checkSpecs(d.specs, d.sweep, trialMetricsOf(a));
    {
        const Specs &s = d.specs;
        std::optional<bool> ok;
        QString spec = QStringLiteral("—");
        if (s.gainMin || s.gainMax) {
            spec = QStringLiteral("%1 … %2").arg(
                s.gainMin ? eng(s.gainMin->si, gu) : QStringLiteral("−∞"),
                s.gainMax ? eng(s.gainMax->si, gu) : QStringLiteral("+∞"));
            ok = check.gain;
        }
        add(QStringLiteral("DC gain (exact)"), eng(a.exact.gain, gu), spec, ok);
    }
    {
        std::optional<bool> ok;
        QString spec = QStringLiteral("—");
        if (d.specs.bandwidthMin) {
            spec = QStringLiteral("≥ %1").arg(eng(d.specs.bandwidthMin->si, "Hz"));
            ok = check.bandwidth;
        }
        // No -3 dB point inside the sweep: the closed loop is flat beyond its end.
        const QString value = !a.stable ? none
            : a.bandwidthHz             ? eng(a.bandwidthHz, "Hz")
                                        : QStringLiteral("> %1").arg(eng(d.sweep.stop.si, "Hz"));
        add(QStringLiteral("bandwidth (−3 dB)"), value, spec, ok);
    }
    {
        std::optional<bool> ok;
        QString spec = QStringLiteral("—");
        if (d.specs.phaseMarginMinDeg) {
            spec = QStringLiteral("≥ %1").arg(degrees(*d.specs.phaseMarginMinDeg));
            ok = check.phaseMargin;
        }
        add(QStringLiteral("phase margin"), degrees(a.margins.phaseMarginDeg), spec, ok);
    }
    add(QStringLiteral("crossover |T| = 1"), eng(a.margins.crossoverHz, "Hz"), QStringLiteral("—"),
        {});
    add(QStringLiteral("gain margin"), decibels(a.margins.gainMarginDb), QStringLiteral("—"), {});
    if (a.margins.gainMargins.size() > 1) {
        QStringList all;
        for (const GainMargin &g : a.margins.gainMargins)
            all << QStringLiteral("%1 at %2").arg(decibels(g.db), eng(g.frequencyHz, "Hz", 3));
        add(QStringLiteral("every phase crossing"), all.join(QStringLiteral(", ")),
            QStringLiteral("—"), {});
    }
    add(QStringLiteral("peaking"), a.stable ? decibels(a.peakingDb) : none, QStringLiteral("—"),
        {});
    if (a.feedthroughDb)
        add(QStringLiteral("feedthrough rise"), decibels(a.feedthroughDb), QStringLiteral("—"), {});
    add(QStringLiteral("desensitivity at DC"), decibels(a.desensitivityDb), QStringLiteral("—"),
        {});
    add(QStringLiteral("rise time 10–90 %"), a.stable ? eng(a.step.riseTimeS, "s") : none,
        QStringLiteral("—"), {});
    add(QStringLiteral("overshoot"), a.stable ? percent(a.step.overshootPct) : none,
        QStringLiteral("—"), {});
    add(QStringLiteral("settling to ±%1 %").arg(a.step.settlingBand * 100, 0, 'g', 3),
        a.stable ? eng(a.step.settlingTimeS, "s") : none, QStringLiteral("—"), {});
    w.table({{QStringLiteral("Metric"), 55},
             {QStringLiteral("Value"), 40, Qt::AlignRight},
             {QStringLiteral("Spec"), 55, Qt::AlignRight},
             {QStringLiteral("Verdict"), 30, Qt::AlignRight}},
            rows);
    // Name what fails and why (core's specVerdicts(), the verdicts of checkSpecs()).
    QStringList failing;
    for (const SpecVerdict &v : a.specs)
        if (!v.pass)
            failing << q(v.label) + (v.reason.empty() ? QString() : " (" + q(v.reason) + ")");
    if (!failing.isEmpty())
        w.paragraph(QStringLiteral("Fails: %1.").arg(failing.join(QStringLiteral("; "))),
                    sheetFont(kBodyPt, true), 0, kFail);
}

void noiseSection(SheetWriter &w, const Analysis &a)
{
    w.heading(QStringLiteral("Noise"));
    const QFont f = sheetFont(kBodyPt);
    if (!a.noise) {
        w.paragraph(
            QStringLiteral("No noise analysis: %1")
                .arg(a.noiseProblem.empty() ? QStringLiteral("not computed") : q(a.noiseProblem)),
            f);
        w.advance(1);
        return;
    }
    const NoiseAnalysis &n = *a.noise;
    const NoiseUnitText u = noiseUnits(a);
    const std::string out = u.output.toStdString(), in = u.input.toStdString();
    if (!a.stable) {
        w.paragraph(QStringLiteral("No noise rms: the loop is unstable."), f, 0, kFail);
        w.advance(1);
        return;
    }
    w.paragraph(QStringLiteral("Output noise %1 rms, input-referred %2 rms, over %3–%4 at %5 K "
                               "(%6 °C).")
                    .arg(eng(n.outputRms, out), eng(n.inputRms, in), eng(n.bandLowHz, "Hz"),
                         eng(n.bandHighHz, "Hz"), QString::number(n.temperatureK, 'f', 2),
                         QString::number(n.temperatureK - 273.15, 'g', 5)),
                f);
    QString method = QStringLiteral("Band (%1): %2.").arg(noiseBandKindText(n), q(n.bandMethod));
    if (n.brickWall && n.brickWall->outputRms)
        method += QStringLiteral(" Brick-wall equivalent for comparison: %1 rms (input-referred "
                                 "density to π/2 · f₋₃dB = %2, times the gain at the sweep start).")
                      .arg(eng(n.brickWall->outputRms, out), eng(n.brickWall->highHz, "Hz"));
    w.paragraph(method, sheetFont(7.5), 0, QColor(90, 90, 90));
    w.advance(1.5);
    if (n.contributions.empty() || n.frequenciesHz.empty())
        return;
    const std::size_t ref = noiseReferenceIndex(n);
    const auto order = noiseSourcesByShare(n);
    const auto share = [&](double rms) -> QString {
        if (!n.outputRms || !(*n.outputRms > 0))
            return QStringLiteral("—");
        const double pct = 100.0 * rms * rms / (*n.outputRms * *n.outputRms);
        return pct < 0.01 ? QStringLiteral("< 0.01 %") : QString::number(pct, 'f', 2) + " %";
    };
    const auto kind = [](NoiseSourceKind k) {
        switch (k) {
        case NoiseSourceKind::Resistor:
            return QStringLiteral("thermal (4kTR)");
        case NoiseSourceKind::VoltageNoise:
            return QStringLiteral("input voltage noise");
        case NoiseSourceKind::CurrentNoise:
            return QStringLiteral("input current noise");
        case NoiseSourceKind::Shot:
            return QStringLiteral("shot (2qI)");
        }
        return QString();
    };
    constexpr std::size_t kRows = 5;
    std::vector<SheetWriter::Row> rows;
    double restPower = 0, restPsd = 0;
    for (std::size_t i = 0; i < order.size(); ++i) {
        const NoiseContribution &c = *order[i];
        const double psd = ref < c.outputPsd.size() ? c.outputPsd[ref] : NAN;
        // Five rows, or six when the sixth is the last source: an "others" row of one
        // source would only hide its name.
        if (i >= kRows && order.size() > kRows + 1) {
            restPower += c.rms ? *c.rms * *c.rms : 0.0;
            restPsd += psd;
            continue;
        }
        rows.push_back({{noiseSourceName(c), kind(c.kind), eng(std::sqrt(psd), out + "/√Hz"),
                         eng(c.rms.value_or(NAN), out), share(c.rms.value_or(NAN))}});
    }
    if (order.size() > kRows + 1)
        rows.push_back({{QStringLiteral("%1 other sources").arg(order.size() - kRows),
                         QStringLiteral("—"), eng(std::sqrt(restPsd), out + "/√Hz"),
                         eng(std::sqrt(restPower), out), share(std::sqrt(restPower))}});
    w.table({{QStringLiteral("Source"), 46},
             {QStringLiteral("Kind"), 30},
             {QStringLiteral("Output density, %1").arg(eng(n.frequenciesHz[ref], "Hz", 3)), 42,
              Qt::AlignRight},
             {QStringLiteral("RMS at the output"), 34, Qt::AlignRight},
             {QStringLiteral("Share of power"), 28, Qt::AlignRight}},
            rows);
    w.paragraph(QStringLiteral("Share = the source's output power over the band / the total; "
                               "uncorrelated sources add in power."),
                sheetFont(7.5), 0, QColor(90, 90, 90));
}

/// One column of the candidates comparison: the current design or a candidate.
struct CandidateColumn
{
    QString name;
    Design design;
    std::optional<Analysis> analysis;
    QString problem; ///< why there is no analysis
};

std::vector<CandidateColumn> candidateColumns(const Design &d, const Analysis &current)
{
    std::vector<CandidateColumn> columns{{QStringLiteral("current design"), d, current, {}}};
    AnalysisOptions lean; // the comparison shows no sensitivity or noise figures
    lean.sensitivity = false;
    lean.noise = false;
    for (const Candidate &c : d.candidates) {
        CandidateColumn col{q(c.name), d, std::nullopt, {}};
        auto applied = applyCandidate(d, c);
        if (applied) {
            col.design = *applied;
            auto analysis = analyze(col.design, {}, lean);
            if (analysis)
                col.analysis = std::move(analysis).value();
            else
                col.problem = q(analysis.errorText());
        } else {
            col.problem = q(applied.errorText());
        }
        columns.push_back(std::move(col));
    }
    return columns;
}

QString specVerdict(const Design &d, const std::optional<Analysis> &a)
{
    if (!a || !hasSpecs(d.specs))
        return QStringLiteral("—");
    const SpecCheck check = checkSpecs(d.specs, d.sweep, trialMetricsOf(*a));
    if (!check.stable)
        return QStringLiteral("fail: unstable");
    QStringList failed;
    if (!check.gain)
        failed << QStringLiteral("gain");
    if (!check.bandwidth)
        failed << QStringLiteral("bandwidth");
    if (!check.phaseMargin)
        failed << QStringLiteral("margin");
    return failed.isEmpty() ? QStringLiteral("pass") : QStringLiteral("fail: ") + failed.join(", ");
}

/// A part's primary value as the parts table writes it ("1 MΩ"), or "—".
QString primaryValueText(const Design &d, const std::string &partId)
{
    const Part *part = d.findPart(partId);
    if (!part)
        return QStringLiteral("—");
    const auto it = part->fields.find(std::string(part->primaryField()));
    if (it == part->fields.end())
        return QStringLiteral("—");
    const FieldSpec *spec = findFieldSpec(part->type, part->primaryField());
    return q(formatValue(it->second.si, spec ? spec->kind : ValueKind::Plain, 3));
}

/// The current design and every candidate side by side, four columns to a table.
void candidatesSection(SheetWriter &w, const Design &d, const Analysis &current)
{
    if (d.candidates.empty())
        return;
    w.heading(QStringLiteral("Candidates"));
    const std::vector<CandidateColumn> columns = candidateColumns(d, current);
    const std::string &gu = current.gainUnit;

    // Rows for the parts some candidate changes, in the design's part order.
    std::vector<const Part *> changed;
    for (const Part &p : d.parts) {
        if (std::any_of(d.candidates.begin(), d.candidates.end(),
                        [&](const Candidate &c) { return c.values.count(p.id) > 0; }))
            changed.push_back(&p);
    }
    using Metric = std::function<QString(const CandidateColumn &)>;
    const auto analysed = [](auto f) -> Metric {
        return [f](const CandidateColumn &c) {
            return c.analysis ? f(*c.analysis) : QStringLiteral("—");
        };
    };
    std::vector<std::pair<QString, Metric>> rows;
    for (const Part *p : changed) {
        rows.push_back({q(p->id), [p](const CandidateColumn &c) {
                            return primaryValueText(c.design, p->id);
                        }});
    }
    rows.push_back({QStringLiteral("DC gain (exact)"),
                    analysed([&](const Analysis &a) { return eng(a.exact.gain, gu); })});
    rows.push_back({QStringLiteral("bandwidth (−3 dB)"),
                    analysed([](const Analysis &a) { return eng(a.bandwidthHz, "Hz"); })});
    rows.push_back({QStringLiteral("phase margin"),
                    analysed([](const Analysis &a) { return degrees(a.margins.phaseMarginDeg); })});
    rows.push_back({QStringLiteral("peaking"),
                    analysed([](const Analysis &a) { return decibels(a.peakingDb); })});
    rows.push_back({QStringLiteral("desensitivity at DC"),
                    analysed([](const Analysis &a) { return decibels(a.desensitivityDb); })});
    rows.push_back({QStringLiteral("z_in"),
                    analysed([](const Analysis &a) { return eng(a.exact.zIn, "Ω"); })});
    rows.push_back({QStringLiteral("z_out"),
                    analysed([](const Analysis &a) { return eng(a.exact.zOut, "Ω"); })});
    rows.push_back({QStringLiteral("specs"), [](const CandidateColumn &c) {
                        return specVerdict(c.design, c.analysis);
                    }});

    constexpr std::size_t kPerTable = 4;
    for (std::size_t first = 0; first < columns.size(); first += kPerTable) {
        const std::size_t last = std::min(columns.size(), first + kPerTable);
        std::vector<SheetWriter::Column> header{{QStringLiteral(""), 40}};
        for (std::size_t c = first; c < last; ++c)
            header.push_back({columns[c].name, 35, Qt::AlignRight});
        std::vector<SheetWriter::Row> tableRows;
        for (const auto &[label, metric] : rows) {
            SheetWriter::Row row{{label}};
            for (std::size_t c = first; c < last; ++c)
                row.cells << metric(columns[c]);
            tableRows.push_back(std::move(row));
        }
        w.table(header, tableRows);
        w.advance(2);
    }
    for (const CandidateColumn &c : columns) {
        if (!c.problem.isEmpty())
            w.paragraph(c.name + QStringLiteral(": ") + c.problem, sheetFont(kBodyPt));
    }
}

QString spreadNumber(const OptionalNumber &v, int metric, const std::string &gainUnit)
{
    if (!v || !std::isfinite(*v))
        return QStringLiteral("—");
    if (metric == 2)
        return QString::number(*v, *v != 0 && std::abs(*v) < 0.01 ? 'g' : 'f', 2)
            + QStringLiteral("°");
    return eng(v, metric == 0 ? std::string_view(gainUnit) : std::string_view("Hz"));
}

/// The gain histogram of a Monte Carlo run, with the spec window and the nominal gain.
void drawGainHistogram(QPainter &p, const QRectF &rect, double k, const MetricStats &s,
                       const Specs &specs, const OptionalNumber &nominal, const std::string &unit)
{
    p.save();
    const QFont tick = sheetFont(6.5), titleFont = sheetFont(8.5, true);
    const QFontMetricsF fm(tick, p.device()), tfm(titleFont, p.device());
    double lo = s.histogramLow, hi = s.histogramHigh;
    if (!(hi > lo)) {
        const double pad = std::max(std::abs(lo) * 1e-3, 1e-12);
        lo -= pad;
        hi += pad;
    }
    const double span = hi - lo;
    std::vector<double> limits;
    for (const auto &v : {specs.gainMin, specs.gainMax})
        if (v && v->si >= lo - 3 * span && v->si <= hi + 3 * span)
            limits.push_back(v->si);
    double plotLo = lo, plotHi = hi;
    for (double v : limits) {
        plotLo = std::min(plotLo, v);
        plotHi = std::max(plotHi, v);
    }
    const double pad = (plotHi - plotLo) * 0.04;
    plotLo -= pad;
    plotHi += pad;
    // tick labels with one prefix for the whole axis (e.g. MV/A)
    const double mag = std::max(std::abs(plotLo), std::abs(plotHi));
    static const std::pair<double, const char *> prefixes[]
        = {{1e12, "T"}, {1e9, "G"},  {1e6, "M"},  {1e3, "k"},  {1, ""},
           {1e-3, "m"}, {1e-6, "µ"}, {1e-9, "n"}, {1e-12, "p"}};
    double factor = 1;
    QString prefix;
    for (const auto &[f, name] : prefixes) {
        if (mag >= f) {
            factor = 1 / f;
            prefix = QString::fromUtf8(name);
            break;
        }
    }
    const double rawStep = (plotHi - plotLo) * factor / 6;
    const double decade = std::pow(10.0, std::floor(std::log10(rawStep)));
    double step = decade;
    for (double m : {1.0, 2.0, 2.5, 5.0, 10.0}) {
        step = m * decade;
        if (step >= rawStep)
            break;
    }
    const double xLo = std::floor(plotLo * factor / step) * step;
    const double xHi = std::ceil(plotHi * factor / step) * step;
    std::size_t top = 1;
    for (std::size_t c : s.histogram)
        top = std::max(top, c);
    const double yStep = niceStep(
        double(top) * 1.1, 4, {1,   2,    5,    10,   20,   25,    50,    100,   200,   250,
                               500, 1000, 2000, 2500, 5000, 10000, 20000, 25000, 50000, 100000});
    const double yHi = std::ceil(double(top) * 1.1 / yStep) * yStep;

    const QRectF area(rect.left() + 17 * k, rect.top() + tfm.height() + 3 * k,
                      rect.width() - 19 * k, rect.height() - tfm.height() - 12 * k);
    const auto X = [&](double v) {
        return area.left() + (v * factor - xLo) / (xHi - xLo) * area.width();
    };
    const auto Y = [&](double c) {
        return area.bottom() - c / yHi * area.height();
    };
    p.setFont(tick);
    const int decimals = std::max(0, -static_cast<int>(std::floor(std::log10(step) + 1e-9)));
    for (double v = xLo; v <= xHi + step * 1e-6; v += step) {
        const double x = area.left() + (v - xLo) / (xHi - xLo) * area.width();
        p.setPen(QPen(kGrid, 0.15 * k));
        p.drawLine(QPointF(x, area.top()), QPointF(x, area.bottom()));
        const QString label = QString::number(std::abs(v) < step * 1e-6 ? 0.0 : v, 'f', decimals);
        p.setPen(kInk);
        p.drawText(
            QPointF(x - fm.horizontalAdvance(label) / 2, area.bottom() + 1.2 * k + fm.ascent()),
            label);
    }
    double maxLabel = 0;
    for (double c = 0; c <= yHi + yStep * 1e-6; c += yStep) {
        const double y = Y(c);
        p.setPen(QPen(kGrid, 0.15 * k));
        p.drawLine(QPointF(area.left(), y), QPointF(area.right(), y));
        const QString label = QString::number(c, 'f', 0);
        maxLabel = std::max(maxLabel, fm.horizontalAdvance(label));
        p.setPen(kInk);
        p.drawText(QPointF(area.left() - 1.2 * k - fm.horizontalAdvance(label),
                           y + fm.ascent() / 2 - fm.descent() / 2),
                   label);
    }
    const QString xTitle = QStringLiteral("closed-loop gain (%1%2)").arg(prefix, q(unit));
    p.drawText(QPointF(area.right() - fm.horizontalAdvance(xTitle),
                       area.bottom() + 1.2 * k + fm.ascent() + fm.height()),
               xTitle);
    p.save();
    p.translate(area.left() - 2.4 * k - maxLabel - fm.descent(), area.center().y());
    p.rotate(-90);
    const QString yTitle = QStringLiteral("trials");
    p.drawText(QPointF(-fm.horizontalAdvance(yTitle) / 2, 0), yTitle);
    p.restore();

    p.save();
    p.setClipRect(area);
    QPolygonF outline;
    const std::size_t bins = s.histogram.size();
    const double width = bins ? (s.histogramHigh - s.histogramLow) / double(bins) : 0;
    const double base = width > 0 ? s.histogramLow : lo;
    const double binWidth = width > 0 ? width : (hi - lo) / double(std::max<std::size_t>(bins, 1));
    outline << QPointF(X(base), Y(0));
    for (std::size_t b = 0; b < bins; ++b) {
        const double c = double(s.histogram[b]);
        outline << QPointF(X(base + double(b) * binWidth), Y(c))
                << QPointF(X(base + double(b + 1) * binWidth), Y(c));
    }
    outline << QPointF(X(base + double(bins) * binWidth), Y(0));
    p.setPen(QPen(kBlue, 0.3 * k));
    p.setBrush(QColor(kBlue.red(), kBlue.green(), kBlue.blue(), 60));
    p.drawPolygon(outline);
    p.setBrush(Qt::NoBrush);
    p.setPen(QPen(kFail, 0.35 * k, Qt::DashLine));
    for (double v : limits)
        p.drawLine(QPointF(X(v), area.top()), QPointF(X(v), area.bottom()));
    if (nominal && std::isfinite(*nominal)) {
        p.setPen(QPen(kInk, 0.3 * k, Qt::DotLine));
        p.drawLine(QPointF(X(*nominal), area.top()), QPointF(X(*nominal), area.bottom()));
    }
    p.restore();
    p.setPen(QPen(kRule, 0.25 * k));
    p.drawRect(area);

    p.setFont(titleFont);
    p.setPen(kInk);
    p.drawText(QPointF(rect.left(), rect.top() + tfm.ascent()),
               QStringLiteral("Monte Carlo: closed-loop gain"));
    // legend beside the title
    p.setFont(tick);
    double x = rect.left() + tfm.horizontalAdvance(QStringLiteral("Monte Carlo: closed-loop gain"))
        + 6 * k;
    const double y = rect.top() + tfm.ascent() - fm.ascent() / 2 + fm.descent() / 2;
    const auto legend = [&](const QPen &pen, const QString &text) {
        p.setPen(pen);
        p.drawLine(QPointF(x, y), QPointF(x + 6 * k, y));
        x += 7 * k;
        p.setPen(kInk);
        p.drawText(QPointF(x, y + fm.ascent() / 2 - fm.descent() / 2), text);
        x += fm.horizontalAdvance(text) + 4 * k;
    };
    legend(QPen(kBlue, 0.5 * k), QStringLiteral("trials per bin"));
    if (!limits.empty())
        legend(QPen(kFail, 0.35 * k, Qt::DashLine), QStringLiteral("spec window"));
    legend(QPen(kInk, 0.3 * k, Qt::DotLine), QStringLiteral("nominal"));
    p.restore();
}

void spreadSection(SheetWriter &w, const Design &d, const Analysis &a, const SheetSpread *spread)
{
    if (!spread)
        return;
    const WorstCaseResult &wc = spread->worstCase;
    const MonteCarloResult &mc = spread->monteCarlo;
    const std::string gu = a.gainUnit;
    w.heading(QStringLiteral("Spread over tolerances"));
    QStringList quantities;
    for (const SpreadQuantity &sq : mc.quantities)
        quantities << QStringLiteral("%1 %2 ±%3 %")
                          .arg(q(sq.part), q(sq.field),
                               QString::number(sq.tolerance * 100, 'g', 3));
    const QFont f = sheetFont(kBodyPt);
    w.paragraph(
        QStringLiteral("Toleranced quantities: %1. Worst case: %2. Monte Carlo: %3 trials "
                       "(%4 completed), %5 distribution%6, seed %7.")
            .arg(quantities.join(QStringLiteral(", ")),
                 wc.exhaustive
                     ? (wc.corners == 2
                            ? QStringLiteral("both corners of the tolerance box")
                            : QStringLiteral("all %1 corners of the tolerance box").arg(wc.corners))
                     : QStringLiteral("%1 sensitivity corners, an approximation beyond %2 "
                                      "quantities")
                           .arg(wc.corners)
                           .arg(kMaxVertexQuantities))
            .arg(mc.trials)
            .arg(mc.completed)
            .arg(q(toString(mc.distribution)),
                 mc.distribution == SpreadDistribution::Normal ? QStringLiteral(" (tolerance = 3σ)")
                                                               : QString())
            .arg(mc.seed),
        f);
    w.advance(1.5);
    std::vector<SheetWriter::Row> rows;
    const MetricRange *ranges[] = {&wc.gain, &wc.bandwidthHz, &wc.phaseMarginDeg};
    const MetricStats *stats[] = {&mc.gain, &mc.bandwidthHz, &mc.phaseMarginDeg};
    const OptionalNumber nominal[]
        = {mc.nominal.gain, mc.nominal.bandwidthHz, mc.nominal.phaseMarginDeg};
    const QString names[] = {QStringLiteral("DC gain"), QStringLiteral("bandwidth (−3 dB)"),
                             QStringLiteral("phase margin")};
    for (int m = 0; m < 3; ++m) {
        const MetricStats &s = *stats[m];
        const auto stat = [&](double v) {
            return s.count ? spreadNumber(v, m, gu) : QStringLiteral("—");
        };
        rows.push_back({{names[m], spreadNumber(nominal[m], m, gu),
                         spreadNumber(ranges[m]->min, m, gu), spreadNumber(ranges[m]->max, m, gu),
                         stat(s.min), stat(s.mean), stat(s.max), stat(s.std)}});
    }
    const double cw = (w.width() - 33) / 7;
    w.table({{QStringLiteral("Metric"), 33},
             {QStringLiteral("Nominal"), cw, Qt::AlignRight},
             {QStringLiteral("Worst min"), cw, Qt::AlignRight},
             {QStringLiteral("Worst max"), cw, Qt::AlignRight},
             {QStringLiteral("MC min"), cw, Qt::AlignRight},
             {QStringLiteral("MC mean"), cw, Qt::AlignRight},
             {QStringLiteral("MC max"), cw, Qt::AlignRight},
             {QStringLiteral("Std dev"), cw, Qt::AlignRight}},
            rows);
    QString yield = mc.hasSpecs
        ? QStringLiteral("Yield against the specs: %1 % (%2 of %3 trials meet every spec).")
              .arg(mc.yield * 100.0, 0, 'f', 2)
              .arg(mc.passed)
              .arg(mc.completed)
        : QStringLiteral("Yield: the design has no specs.");
    if (mc.failed)
        yield += QStringLiteral(" %1 trials had no circuit solution.").arg(mc.failed);
    if (mc.bandwidthHz.missing)
        yield += QStringLiteral(" %1 trials have no −3 dB point inside the sweep.")
                     .arg(mc.bandwidthHz.missing);
    w.paragraph(yield, sheetFont(kBodyPt, true));
    w.paragraph(QStringLiteral("Worst min/max: extremes over the corners; MC: Monte Carlo "
                               "statistics (std dev with n − 1)."),
                sheetFont(7.5), 0, QColor(90, 90, 90));
    if (mc.gain.count == 0 || mc.gain.histogram.empty())
        return;
    const double h = 58;
    w.advance(2);
    w.ensure(h);
    if (QPainter *p = w.painter())
        drawGainHistogram(*p, w.toDevice(QRectF(0, w.y(), w.width(), h)), w.k(), mc.gain, d.specs,
                          mc.nominal.gain, gu);
    w.advance(h + 2);
}

void plotsSection(SheetWriter &w, const Analysis &a)
{
    constexpr double kTallMm = 120, kOtherMm = 95, gap = 5;
    const auto height = [&](SheetPlot plot) {
        return plot == SheetPlot::LoopGain || plot == SheetPlot::Noise ? kTallMm : kOtherMm;
    };
    w.heading(QStringLiteral("Plots"), height(kSheetPlots[0]));
    for (SheetPlot plot : kSheetPlots) {
        const double ph = height(plot);
        w.ensure(ph);
        if (QPainter *p = w.painter())
            drawSheetPlot(*p, w.toDevice(QRectF(0, w.y(), w.width(), ph)), w.k(), plot, a);
        w.advance(ph + gap);
    }
}

/// Numbers the solver could not assure, or values no real part has: said before any number.
void warningsSection(SheetWriter &w, const Analysis &a)
{
    if (a.warnings.empty())
        return;
    w.heading(QStringLiteral("Warnings"));
    const QFont f = sheetFont(kBodyPt);
    for (const Diagnostic &d : a.warnings)
        w.paragraph(q(d.toString()), f);
    w.advance(1);
}

void cautionsSection(SheetWriter &w)
{
    w.heading(QStringLiteral("What the model does not cover"));
    w.paragraph(QString::fromUtf8(kCautions), sheetFont(kBodyPt));
}

int paintSheet(QPainter *p, QPaintDevice *device, QPdfWriter *pdf, QSizeF pageMm, double k,
               int totalPages, const Design &d, const Analysis &a, const QString &fileName,
               const SheetSpread *spread)
{
    SheetWriter w(p, device, pdf, pageMm, k, totalPages);
    titleBlock(w, d, a, fileName, spread);
    warningsSection(w, a);
    sketchSection(w, d);
    partsSection(w, d);
    topologySection(w, a);
    methodSection(w, a);
    metricsSection(w, d, a);
    noiseSection(w, a);
    candidatesSection(w, d, a);
    spreadSection(w, d, a, spread);
    plotsSection(w, a);
    cautionsSection(w);
    w.finish();
    return w.page();
}

void setUpWriter(QPdfWriter &pdf, SheetPageSize size, const QString &title)
{
    pdf.setPageSize(QPageSize(size == SheetPageSize::A4 ? QPageSize::A4 : QPageSize::Letter));
    pdf.setPageMargins(QMarginsF(15, 14, 15, 12), QPageLayout::Millimeter);
    pdf.setTitle(title);
    pdf.setCreator(QStringLiteral("Loopsketch"));
}

QSizeF paintSizeMm(const QPdfWriter &pdf)
{
    return pdf.pageLayout().paintRect(QPageLayout::Millimeter).size();
}

} // namespace

bool computeSheetSpread(const Design &design, int trials, std::uint64_t seed,
                        const std::string &file, std::optional<SheetSpread> *out, QString *error)
{
    out->reset();
    if (trials <= 0)
        return true;
    SpreadOptions options;
    options.trials = trials;
    options.seed = seed;
    if (!spreadQuantities(design, options, file))
        return true;
    auto worst = worstCase(design, options, file);
    if (!worst) {
        if (error)
            *error = q(worst.errorText());
        return false;
    }
    auto mc = monteCarlo(design, options, file);
    if (!mc) {
        if (error)
            *error = q(mc.errorText());
        return false;
    }
    *out = SheetSpread{std::move(worst).value(), std::move(mc).value()};
    return true;
}

int reviewSheetPageCount(const Design &design, const Analysis &analysis, SheetPageSize pageSize,
                         const SheetSpread *spread)
{
    QPdfWriter pdf(QString{});
    setUpWriter(pdf, pageSize, {});
    return paintSheet(nullptr, &pdf, nullptr, paintSizeMm(pdf), pdf.resolution() / 25.4, 0, design,
                      analysis, {}, spread);
}

bool renderReviewSheet(const Design &design, const Analysis &analysis, const QString &path,
                       SheetPageSize pageSize, const QString &fileName, QString *error,
                       const SheetSpread *spread)
{
    const int pages = reviewSheetPageCount(design, analysis, pageSize, spread);
    // Rendered whole into memory first: QPdfWriter reports no write errors, so the bytes go to
    // disk through the checked writer, and only a finished document (trailer written) does.
    QBuffer buffer;
    buffer.open(QIODevice::WriteOnly);
    {
        QPdfWriter pdf(&buffer);
        setUpWriter(pdf, pageSize, q(design.title));
        QPainter painter;
        if (!painter.begin(&pdf)) {
            if (error)
                *error = QStringLiteral("%1: cannot write the review sheet: cannot start the PDF")
                             .arg(path);
            return false;
        }
        paintSheet(&painter, &pdf, &pdf, paintSizeMm(pdf), pdf.resolution() / 25.4, pages, design,
                   analysis, fileName, spread);
        if (!painter.end()) {
            if (error)
                *error = QStringLiteral("%1: cannot write the review sheet: the PDF could not be "
                                        "finished")
                             .arg(path);
            return false;
        }
    }
    const QByteArray &bytes = buffer.data();
    if (!bytes.startsWith("%PDF-") || !bytes.trimmed().endsWith("%%EOF")) {
        if (error)
            *error = QStringLiteral("%1: cannot write the review sheet: the PDF came out "
                                    "incomplete (%2 bytes)")
                         .arg(path)
                         .arg(bytes.size());
        return false;
    }
    return writeOutputFile(path, bytes, QStringLiteral("review sheet"), error);
}

QString plotFileSuffix(PlotFormat format)
{
    return format == PlotFormat::Svg ? QStringLiteral(".svg") : QStringLiteral(".png");
}

bool writeSheetPlots(const Analysis &analysis, const QString &dir, PlotFormat format,
                     QString *error)
{
    if (!QDir().mkpath(dir)) {
        if (error)
            *error = QStringLiteral("%1: cannot create the directory").arg(dir);
        return false;
    }
    // SVG at 90 dpi keeps the drawing's nominal size in viewers; PNG at 150 dpi is sharp
    // enough for slides and documents without being huge.
    const int resolution = format == PlotFormat::Svg ? 90 : 150;
    const double k = resolution / 25.4;
    const QSizeF sizeMm(170, 110);
    const QSize px(static_cast<int>(std::lround(sizeMm.width() * k)),
                   static_cast<int>(std::lround(sizeMm.height() * k)));
    const QRectF plotRect(3 * k, 3 * k, (sizeMm.width() - 6) * k, (sizeMm.height() - 6) * k);
    for (SheetPlot plot : kSheetPlots) {
        const QString path = QDir(dir).filePath(sheetPlotFileStem(plot) + plotFileSuffix(format));
        // Rendered into memory, checked, then handed to the one checked writer.
        QBuffer buffer;
        buffer.open(QIODevice::WriteOnly);
        bool rendered = false;
        if (format == PlotFormat::Svg) {
            QSvgGenerator svg;
            svg.setOutputDevice(&buffer);
            svg.setResolution(resolution);
            svg.setSize(px);
            svg.setViewBox(QRect(QPoint(0, 0), px));
            svg.setTitle(q(analysis.title) + QStringLiteral(" — ") + sheetPlotFileStem(plot));
            QPainter painter;
            if (painter.begin(&svg)) {
                painter.fillRect(QRectF(QPointF(0, 0), QSizeF(px)), Qt::white);
                drawSheetPlot(painter, plotRect, k, plot, analysis);
                rendered = painter.end() && buffer.data().trimmed().endsWith("</svg>");
            }
        } else {
            QImage image(px, QImage::Format_RGB32);
            const int dotsPerMetre = static_cast<int>(std::lround(resolution / 0.0254));
            image.setDotsPerMeterX(dotsPerMetre); // point-sized fonts scale with the image
            image.setDotsPerMeterY(dotsPerMetre);
            image.fill(Qt::white);
            QPainter painter;
            if (painter.begin(&image)) {
                painter.setRenderHint(QPainter::Antialiasing);
                painter.setRenderHint(QPainter::TextAntialiasing);
                drawSheetPlot(painter, plotRect, k, plot, analysis);
                if (painter.end()) {
                    image.setText(QStringLiteral("Title"),
                                  q(analysis.title) + QStringLiteral(" — ")
                                      + sheetPlotFileStem(plot));
                    rendered = image.save(&buffer, "PNG") && !buffer.data().isEmpty();
                }
            }
        }
        if (!rendered) {
            if (error)
                *error = QStringLiteral("%1: cannot write the plot: rendering it failed").arg(path);
            return false;
        }
        if (!writeOutputFile(path, buffer.data(), QStringLiteral("plot"), error))
            return false;
    }
    return true;
}

} // namespace loopsketch::ui
