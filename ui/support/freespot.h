#pragma once

// Where a label goes on a plot without covering another or a marker: the Poles panel and the
// review sheet place their labels by the same rule.

#include <QPointF>
#include <QRectF>
#include <QSizeF>

#include <initializer_list>
#include <optional>
#include <vector>

namespace loopsketch::ui {

/// The first of `corners` (each a top-left) where a box of `size` lies inside `area` and over
/// none of `taken`; none when no corner has room.
inline std::optional<QRectF> firstFreeSpot(std::initializer_list<QPointF> corners, QSizeF size,
                                           const QRectF &area, const std::vector<QRectF> &taken)
{
    for (const QPointF &corner : corners) {
        const QRectF spot(corner, size);
        bool free = area.contains(spot);
        for (const QRectF &r : taken)
            free = free && !r.intersects(spot);
        if (free)
            return spot;
    }
    return std::nullopt;
}

} // namespace loopsketch::ui
