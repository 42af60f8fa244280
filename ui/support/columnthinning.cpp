#include "support/columnthinning.h"

#include <algorithm>
#include <cmath>
#include <utility>
#include <vector>

namespace loopsketch::ui {

QList<QPointF> thinToColumns(const QList<QPointF> &points, double x0, double width)
{
    const qsizetype n = points.size();
    if (!(width > 0) || n < 3)
        return points;
    const auto columnOf = [&](qsizetype i) {
        return std::floor((points[i].x() - x0) / width);
    };
    QList<QPointF> kept;
    kept.append(points.front());
    qsizetype last = 0; // the index of the last point kept
    const auto keep = [&](qsizetype k) {
        if (k > last) {
            kept.append(points[k]);
            last = k;
        }
    };
    qsizetype i = 0;
    while (i < n) {
        const double column = columnOf(i);
        qsizetype j = i, lowest = i, highest = i;
        while (j < n && columnOf(j) == column) {
            if (points[j].y() < points[lowest].y())
                lowest = j;
            if (points[j].y() > points[highest].y())
                highest = j;
            ++j;
        }
        keep(std::min(lowest, highest));
        keep(std::max(lowest, highest));
        i = j;
    }
    keep(n - 1);
    return kept;
}

namespace {

/// Distance in pixels from p to the segment a-b (all in pixels).
double distanceToSegment(QPointF p, QPointF a, QPointF b)
{
    const QPointF ab = b - a, ap = p - a;
    const double length2 = QPointF::dotProduct(ab, ab);
    const double t
        = length2 > 0 ? std::clamp(QPointF::dotProduct(ap, ab) / length2, 0.0, 1.0) : 0.0;
    const QPointF off = ap - t * ab;
    return std::hypot(off.x(), off.y());
}

} // namespace

QList<QPointF> dropStraightRuns(const QList<QPointF> &points, double xPerPixel, double yPerPixel,
                                double tolerancePixels)
{
    const qsizetype n = points.size();
    if (n < 3 || !(xPerPixel > 0) || !(yPerPixel > 0) || !(tolerancePixels > 0)
        || !std::isfinite(xPerPixel) || !std::isfinite(yPerPixel))
        return points;
    for (const QPointF &p : points) {
        if (!std::isfinite(p.x()) || !std::isfinite(p.y()))
            return points;
    }
    const auto pixels = [&](qsizetype i) {
        return QPointF(points[i].x() / xPerPixel, points[i].y() / yPerPixel);
    };
    std::vector<char> keep(std::size_t(n), 0);
    const auto byY = [](const QPointF &p, const QPointF &q) {
        return p.y() < q.y();
    };
    const auto [lowest, highest] = std::minmax_element(points.begin(), points.end(), byY);
    keep.front() = keep.back() = 1;
    keep[std::size_t(lowest - points.begin())] = 1;
    keep[std::size_t(highest - points.begin())] = 1;
    std::vector<std::pair<qsizetype, qsizetype>> spans;
    for (qsizetype a = 0, b = 1; b < n; ++b) {
        if (keep[std::size_t(b)]) {
            spans.emplace_back(a, b);
            a = b;
        }
    }
    while (!spans.empty()) {
        const auto [a, b] = spans.back();
        spans.pop_back();
        const QPointF pa = pixels(a), pb = pixels(b);
        double worst = 0;
        qsizetype at = -1;
        for (qsizetype i = a + 1; i < b; ++i) {
            const double d = distanceToSegment(pixels(i), pa, pb);
            if (d > worst) {
                worst = d;
                at = i;
            }
        }
        if (at >= 0 && worst > tolerancePixels) {
            keep[std::size_t(at)] = 1;
            spans.emplace_back(a, at);
            spans.emplace_back(at, b);
        }
    }
    QList<QPointF> kept;
    for (qsizetype i = 0; i < n; ++i) {
        if (keep[std::size_t(i)])
            kept.append(points[i]);
    }
    return kept;
}

} // namespace loopsketch::ui
