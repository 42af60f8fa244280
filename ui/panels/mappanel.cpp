#include "panels/mappanel.h"

#include "support/cellgrid.h"
#include "support/plotstyle.h"
#include "support/qtadapter.h"
#include "window/designdocument.h"

#include "loopsketch/base/value.h"

#include <QComboBox>
#include <QLabel>
#include <QMouseEvent>
#include <QPainter>

#include <cmath>
#include <limits>

namespace loopsketch::ui {

namespace {

constexpr int kMargin = 46; // room for the axis names and end values
constexpr int kKeySample = 14; // a key entry's sample, px

/// The hover line while no cell is under the pointer.
QString hoverHint()
{
    return QObject::tr("Point at a cell to read it; click it to give both parts its values.");
}

} // namespace

HeatMap::HeatMap(QWidget *parent) : QWidget(parent)
{
    setMouseTracking(true);
    setMinimumSize(260, 180);
}

void HeatMap::setScan(std::shared_ptr<const ScanResult> scan, int metric, double currentA,
                      double currentB)
{
    m_scan = std::move(scan);
    m_metric = metric;
    m_currentA = currentA;
    m_currentB = currentB;
    m_lo = std::numeric_limits<double>::infinity();
    m_hi = -m_lo;
    if (m_scan)
        for (const ScanRow &r : m_scan->rows)
            if (const OptionalNumber v = r.metrics.*scanMetricInfos()[std::size_t(m_metric)].member;
                r.done && v && std::isfinite(*v)) {
                m_lo = std::min(m_lo, *v);
                m_hi = std::max(m_hi, *v);
            }
    if (!(m_lo <= m_hi)) {
        m_lo = 0;
        m_hi = 1;
    }
    update();
}

QRect HeatMap::gridRect() const
{
    return rect().adjusted(kMargin + 10, 8, -70, -kMargin - keyHeight());
}

std::vector<HeatMap::KeyEntry> HeatMap::keyEntries() const
{
    // The marks' names, each after a sample drawn as the map draws it; rows wrap at the
    // widget's width, so a narrow dock cuts none of them.
    const QStringList labels{tr("meets every spec"), tr("unstable"), tr("the design now")};
    const QFontMetrics fm = fontMetrics();
    const int line = std::max(fm.height(), kKeySample) + 4;
    const int left = 8, right = width() - 8;
    int x = left, y = 0;
    std::vector<KeyEntry> entries;
    for (const QString &label : labels) {
        const int w = kKeySample + 5 + fm.horizontalAdvance(label);
        if (x > left && x + w > right) {
            x = left;
            y += line;
        }
        KeyEntry e;
        e.sample = QRect(x, y + (line - kKeySample) / 2, kKeySample, kKeySample);
        e.text = QRect(x + kKeySample + 5, y, w - kKeySample - 5, line);
        e.label = label;
        entries.push_back(e);
        x += w + 16;
    }
    return entries;
}

int HeatMap::keyHeight() const
{
    const std::vector<KeyEntry> entries = keyEntries();
    return entries.empty() ? 0 : entries.back().text.bottom() + 4;
}

void HeatMap::drawKey(QPainter &p) const
{
    const int top = height() - keyHeight();
    for (KeyEntry e : keyEntries()) {
        e.sample.translate(0, top);
        e.text.translate(0, top);
        p.setBrush(Qt::NoBrush);
        if (e.label == tr("meets every spec")) {
            p.fillRect(e.sample, sequentialColour(0.6));
            p.setPen(QPen(palette::kBlack, 2.5));
            p.drawRect(e.sample.adjusted(1, 1, -1, -1));
        } else if (e.label == tr("unstable")) {
            p.fillRect(e.sample, sequentialColour(0.1));
            p.setPen(QPen(Qt::white, 1.2));
            drawCellCross(p, e.sample.adjusted(2, 2, -2, -2));
        } else {
            p.setPen(QPen(palette::kOrange, 3));
            p.drawEllipse(QRectF(e.sample).center(), 5, 5);
        }
        p.setPen(palette::kBlack);
        p.drawText(e.text, Qt::AlignLeft | Qt::AlignVCenter, e.label);
    }
}

const ScanRow *HeatMap::row(int i, int j) const
{
    if (!m_scan || m_scan->axes.size() != 2)
        return nullptr;
    const int n1 = int(m_scan->axes[0].values.size()), n2 = int(m_scan->axes[1].values.size());
    if (i < 0 || j < 0 || i >= n1 || j >= n2)
        return nullptr;
    return &m_scan->rows[std::size_t(i * n2 + j)];
}

std::pair<int, int> HeatMap::cellAt(QPoint position) const
{
    if (!m_scan || m_scan->axes.size() != 2)
        return {-1, -1};
    const QRect g = gridRect();
    if (!g.contains(position))
        return {-1, -1};
    const int n1 = int(m_scan->axes[0].values.size()), n2 = int(m_scan->axes[1].values.size());
    const int i = std::min(n1 - 1, int((position.x() - g.left()) * n1 / double(g.width())));
    const int j = std::min(n2 - 1, int((g.bottom() - position.y()) * n2 / double(g.height())));
    return {i, j};
}

QPoint HeatMap::cellCentre(int i, int j) const
{
    const QRect g = gridRect();
    const int n1 = int(m_scan->axes[0].values.size()), n2 = int(m_scan->axes[1].values.size());
    return QPoint(g.left() + int((i + 0.5) * g.width() / n1),
                  g.bottom() - int((j + 0.5) * g.height() / n2));
}

QColor HeatMap::cellColour(int i, int j) const
{
    const ScanRow *r = row(i, j);
    if (!r || !r->done)
        return QColor(0xee, 0xee, 0xee);
    const OptionalNumber v = r->metrics.*scanMetricInfos()[std::size_t(m_metric)].member;
    if (!v || !std::isfinite(*v))
        return QColor(0xbb, 0xbb, 0xbb);
    return sequentialColour(m_hi > m_lo ? (*v - m_lo) / (m_hi - m_lo) : 0.5);
}

void HeatMap::paintEvent(QPaintEvent *)
{
    QPainter p(this);
    p.fillRect(rect(), palette().window());
    if (!m_scan || m_scan->axes.size() != 2)
        return;
    const QRect g = gridRect();
    const ScanAxis &a = m_scan->axes[0], &b = m_scan->axes[1];
    const int n1 = int(a.values.size()), n2 = int(b.values.size());
    const auto cell = [&](int i, int j) {
        const int x0 = g.left() + i * g.width() / n1, x1 = g.left() + (i + 1) * g.width() / n1;
        const int y0 = g.bottom() - (j + 1) * g.height() / n2,
                  y1 = g.bottom() - j * g.height() / n2;
        return QRect(QPoint(x0, y0), QPoint(x1, y1));
    };
    const auto passes = [&](int i, int j) {
        const ScanRow *r = row(i, j);
        return r && r->done && r->metrics.specsPass.value_or(false);
    };
    for (int i = 0; i < n1; ++i)
        for (int j = 0; j < n2; ++j) {
            const QRect c = cell(i, j);
            p.fillRect(c, cellColour(i, j));
            const ScanRow *r = row(i, j);
            if (r && r->done && r->metrics.stable && !*r->metrics.stable) {
                p.setPen(QPen(Qt::white, 1.2));
                drawCellCross(p, c);
            }
        }
    // The feasible region's outline: an edge wherever a passing cell meets one that is not.
    p.setPen(QPen(palette::kBlack, 2.5));
    drawRegionOutline(p, n1, n2, passes, cell);
    // The current design: a ring where its values fall on the log scales.
    const auto at = [](const ScanAxis &axis, double v, int n, int length) {
        const double lo = std::log10(std::abs(axis.values.front())),
                     hi = std::log10(std::abs(axis.values.back()));
        const double t = hi > lo ? (std::log10(std::abs(v)) - lo) / (hi - lo) : 0.5;
        return (0.5 + t * (n - 1)) * length / n;
    };
    if (std::isfinite(std::log10(std::abs(m_currentA)))
        && std::isfinite(std::log10(std::abs(m_currentB)))) {
        const QPointF c(g.left() + at(a, m_currentA, n1, g.width()),
                        g.bottom() - at(b, m_currentB, n2, g.height()));
        p.setPen(QPen(palette::kOrange, 3));
        p.setBrush(Qt::NoBrush);
        p.drawEllipse(c, 7, 7);
        p.setPen(QPen(Qt::white, 1));
        p.drawEllipse(c, 9, 9);
    }
    // Axis names and end values, and the colour scale.
    p.setPen(palette::kBlack);
    const auto val = [](const ScanAxis &axis, double v) {
        return toQString(formatEngineering(v, 3, axis.unit));
    };
    p.drawText(QRect(g.left(), g.bottom() + 4, g.width(), 18), Qt::AlignLeft,
               val(a, a.values.front()));
    p.drawText(QRect(g.left(), g.bottom() + 4, g.width(), 18), Qt::AlignRight,
               val(a, a.values.back()));
    p.drawText(QRect(g.left(), g.bottom() + 22, g.width(), 18), Qt::AlignHCenter,
               toQString(a.name()) + QStringLiteral(" →"));
    p.save();
    p.translate(12, g.bottom());
    p.rotate(-90);
    p.drawText(QRect(0, 0, g.height(), 18), Qt::AlignLeft, val(b, b.values.front()));
    p.drawText(QRect(0, 0, g.height(), 18), Qt::AlignRight, val(b, b.values.back()));
    p.drawText(QRect(0, 18, g.height(), 18), Qt::AlignHCenter,
               toQString(b.name()) + QStringLiteral(" →"));
    p.restore();
    const QRect scale(g.right() + 12, g.top(), 12, g.height());
    for (int y = 0; y < scale.height(); ++y)
        p.fillRect(QRect(scale.left(), scale.bottom() - y, scale.width(), 1),
                   sequentialColour(double(y) / std::max(1, scale.height() - 1)));
    // The scale's ends in the metric's unit ("88.5°", "92 kHz").
    const ScanMetricInfo &info = scanMetricInfos()[std::size_t(m_metric)];
    const QString unit = scanMetricUnit(info, toQString(m_scan->gainUnit));
    p.drawText(QRect(scale.right() + 3, scale.top(), 66, 16), Qt::AlignLeft,
               scanValueText(m_hi, unit));
    p.drawText(QRect(scale.right() + 3, scale.bottom() - 16, 66, 16), Qt::AlignLeft,
               scanValueText(m_lo, unit));
    drawKey(p);
}

void HeatMap::mouseMoveEvent(QMouseEvent *event)
{
    const auto [i, j] = cellAt(event->position().toPoint());
    emit cellHovered(i, j);
}

void HeatMap::mousePressEvent(QMouseEvent *event)
{
    if (event->button() != Qt::LeftButton)
        return;
    const auto [i, j] = cellAt(event->position().toPoint());
    if (i >= 0)
        emit cellClicked(i, j);
}

void HeatMap::leaveEvent(QEvent *)
{
    emit cellHovered(-1, -1);
}

MapPanel::MapPanel(DesignDocument *document, QWidget *parent) : ScanRunPanel(document, parent)
{
    m_first = new QComboBox(this);
    m_second = new QComboBox(this);
    // As wide as a part's name, not as its longest field ("PD1.c_parallel"): with the series
    // they take one line of a 390-pixel dock; the list opens as wide as its entries.
    for (QComboBox *box : {m_first, m_second}) {
        box->setSizeAdjustPolicy(QComboBox::AdjustToMinimumContentsLengthWithIcon);
        box->setMinimumContentsLength(6);
    }
    makeRunControls(tr("their series"), tr("Map"));
    m_map = new HeatMap(this);
    layOut({new QLabel(tr("Across"), this), m_first, new QLabel(tr("up"), this), m_second},
           tr("Colour"), m_map, 2, true);
    m_hover->setText(hoverHint());

    connect(m_map, &HeatMap::cellHovered, this,
            [this](int i, int j) { m_hover->setText(i < 0 ? hoverHint() : cellText(i, j)); });
    connect(m_map, &HeatMap::cellClicked, this, [this](int i, int j) { applyCell(i, j); });
    refreshTargets();
}

QString MapPanel::finishedText(const ScanResult &scan) const
{
    return scan.cancelled
        ? tr("cancelled after %1 of %2 cells").arg(scan.completed).arg(scan.rows.size())
        : tr("%1 × %2 cells").arg(scan.axes[0].values.size()).arg(scan.axes[1].values.size());
}

void MapPanel::refreshTargets()
{
    const QStringList names = scanTargetNames(m_document->design());
    for (QComboBox *box : {m_first, m_second}) {
        const QString was = box->currentText();
        const QSignalBlocker block(box);
        box->clear();
        box->addItems(names);
        if (const int at = box->findText(was); at >= 0)
            box->setCurrentIndex(at);
    }
    if (m_first->currentIndex() == m_second->currentIndex() && m_second->count() > 1)
        m_second->setCurrentIndex(m_first->currentIndex() == 0 ? 1 : 0);
}

void MapPanel::mapParts(const QString &first, const QString &second)
{
    refreshTargets();
    for (auto [box, text] : {std::pair{m_first, first}, std::pair{m_second, second}}) {
        int at = box->findText(text);
        if (at < 0) {
            box->addItem(text);
            at = box->count() - 1;
        }
        box->setCurrentIndex(at);
    }
    run();
}

void MapPanel::mapSelected(const std::vector<std::string> &selected)
{
    refreshTargets();
    QStringList chosen;
    for (const std::string &id : selected)
        if (m_first->findText(toQString(id)) >= 0)
            chosen.append(toQString(id));
    m_first->setFocus();
    if (chosen.size() >= 2)
        mapParts(chosen[0], chosen[1]);
    else if (chosen.size() == 1)
        mapParts(chosen[0],
                 m_second->currentText() != chosen[0] ? m_second->currentText()
                                                      : m_first->currentText());
    else
        run();
}

void MapPanel::run()
{
    const std::optional<ESeries> series = chosenSeries();
    std::vector<ScanAxis> axes;
    for (QComboBox *box : {m_first, m_second}) {
        auto target = parseScanTarget(toStdString(box->currentText()), "Map");
        if (!target) {
            setStatus(toQString(target.errorText()));
            return;
        }
        auto axis = resolveScanAxis(m_document->design(), *target, series);
        if (!axis) {
            setStatus(toQString(axis.errorText()));
            return;
        }
        axes.push_back(*axis);
    }
    const QString status
        = tr("mapping %1 × %2 cells …").arg(axes[0].values.size()).arg(axes[1].values.size());
    startRun(std::move(axes), status);
}

QString MapPanel::cellText(int i, int j) const
{
    if (!m_scan || m_scan->axes.size() != 2)
        return {};
    const std::size_t n2 = m_scan->axes[1].values.size();
    if (i < 0 || j < 0 || std::size_t(i) >= m_scan->axes[0].values.size() || std::size_t(j) >= n2)
        return {};
    const ScanRow &r = m_scan->rows[std::size_t(i) * n2 + std::size_t(j)];
    QStringList parts;
    for (std::size_t k = 0; k < 2; ++k)
        parts.append(toQString(m_scan->axes[k].name()) + QStringLiteral(" = ")
                     + toQString(formatEngineering(r.values[k], 3, m_scan->axes[k].unit)));
    if (!r.done)
        return parts.join(QStringLiteral(", ")) + tr(": not computed");
    if (!r.metrics.problem.empty())
        return parts.join(QStringLiteral(", ")) + QStringLiteral(": ")
            + toQString(r.metrics.problem);
    const ScanMetricInfo &m = scanMetricInfos()[std::size_t(metricIndex())];
    const OptionalNumber v = r.metrics.*m.member;
    parts.append(m.name + QLatin1Char(' ')
                 + scanValueText(v, scanMetricUnit(m, toQString(m_scan->gainUnit))));
    parts.append(r.metrics.stable.value_or(false) ? tr("stable") : tr("UNSTABLE"));
    parts.append(r.metrics.specsPass.value_or(false) ? tr("meets every spec") : tr("fails a spec"));
    return parts.join(QStringLiteral(" · "));
}

std::vector<ScanMetric> MapPanel::metricsToCompute() const
{
    return {scanMetricInfos()[std::size_t(metricIndex())].member};
}

bool MapPanel::applyCell(int i, int j)
{
    if (!m_scan || m_scan->axes.size() != 2 || i < 0 || j < 0)
        return false;
    const std::size_t n2 = m_scan->axes[1].values.size();
    if (std::size_t(i) >= m_scan->axes[0].values.size() || std::size_t(j) >= n2)
        return false;
    return applyValues(m_scan->rows[std::size_t(i) * n2 + std::size_t(j)].values);
}

void MapPanel::redraw()
{
    if (!m_scan || m_scan->axes.size() != 2)
        return;
    m_map->setScan(m_scan, metricIndex(), designValue(m_scan->axes[0]),
                   designValue(m_scan->axes[1]));
}

} // namespace loopsketch::ui
