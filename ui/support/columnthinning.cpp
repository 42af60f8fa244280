#include "support/columnthinning.h"

#include <algorithm>
#include <cmath>

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

} // namespace loopsketch::ui
