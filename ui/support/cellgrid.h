#pragma once

// Drawing on a grid of cells as the Map panel and the review sheet's map both do: i counts
// across, j up, and `cell(i, j)` gives a cell's rectangle (QRect on screen, QRectF on paper,
// each kept in its own type so neither drawing moves).

#include <QPainter>

namespace loopsketch::ui {

/// Draws, with the painter's pen, the border of the region of an n1 x n2 grid where
/// `inside(i, j)` holds: an edge wherever a cell inside meets one that is not (a cell off
/// the grid is not inside).
template<class Inside, class Cell>
void drawRegionOutline(QPainter &p, int n1, int n2, Inside inside, Cell cell)
{
    for (int i = 0; i < n1; ++i)
        for (int j = 0; j < n2; ++j) {
            if (!inside(i, j))
                continue;
            const auto c = cell(i, j);
            if (!inside(i - 1, j))
                p.drawLine(c.topLeft(), c.bottomLeft());
            if (!inside(i + 1, j))
                p.drawLine(c.topRight(), c.bottomRight());
            if (!inside(i, j - 1))
                p.drawLine(c.bottomLeft(), c.bottomRight());
            if (!inside(i, j + 1))
                p.drawLine(c.topLeft(), c.topRight());
        }
}

/// A cross over `r` from corner to corner, with the painter's pen: an unstable cell.
template<class Rect> void drawCellCross(QPainter &p, const Rect &r)
{
    p.drawLine(r.topLeft(), r.bottomRight());
    p.drawLine(r.topRight(), r.bottomLeft());
}

} // namespace loopsketch::ui
