#pragma once

// The review sheet's page layout: fonts, the number formats of the sheet, and SheetWriter,
// a cursor running down the page in millimetres that breaks pages, keeps headings with what
// follows them and repeats a table's header on a new page.

#include "support/qtadapter.h"

#include "loopsketch/base/value.h"

#include <QColor>
#include <QFont>
#include <QFontMetricsF>
#include <QPainter>
#include <QPdfWriter>
#include <QRectF>
#include <QString>
#include <QStringList>

#include <cmath>
#include <string>
#include <string_view>
#include <vector>

namespace loopsketch::ui::sheet {

inline const QString kFontFamily = QStringLiteral("DejaVu Sans");
inline constexpr double kBodyPt = 8.5;
inline constexpr double kRowMm = 4.6;
inline const QColor kInk(20, 20, 20);
inline const QColor kRule(150, 150, 150);
inline const QColor kGrid(215, 215, 215);
inline const QColor kPass(20, 110, 40);
inline const QColor kFail(170, 20, 20);

/// The sheet's font (DejaVu Sans, no ligatures so the extracted text reads as written).
QFont sheetFont(double pt, bool bold = false);
QString q(const std::string &s);
/// Engineering notation with the unit; "—" where absent, "∞" where infinite.
QString eng(const OptionalNumber &v, std::string_view unit, int digits = 4);
QString decibels(const OptionalNumber &v);
QString percent(const OptionalNumber &v);

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

} // namespace loopsketch::ui::sheet
