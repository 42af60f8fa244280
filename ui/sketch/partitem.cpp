#include "sketch/partitem.h"

#include "sketch/sketchlayout.h"
#include "sketch/sketchscene.h"
#include "support/qtadapter.h"

#include "loopsketch/base/value.h"

#include <QFontMetricsF>
#include <QGraphicsSceneMouseEvent>
#include <QPainter>
#include <QStyleOptionGraphicsItem>

#include <algorithm>
#include <cmath>
#include <limits>

namespace loopsketch::ui {

namespace {

const QColor kInk(0x2b, 0x2f, 0x36);
const QColor kSelected(0x00, 0x72, 0xb2); // Okabe-Ito blue
const QColor kLabel(0x44, 0x4a, 0x55);

QFont labelFont()
{
    QFont f;
    f.setPointSizeF(8.5);
    return f;
}

QFont valueFont()
{
    QFont f;
    f.setPointSizeF(9.0);
    f.setBold(true);
    return f;
}

bool isVertical(int rotation)
{
    return rotation % 180 != 0;
}

} // namespace

PartItem::PartItem(const Part &part, int rotation, bool mirror) : m_id(part.id), m_type(part.type)
{
    setFlags(ItemIsMovable | ItemIsSelectable | ItemIsFocusable | ItemSendsGeometryChanges);
    setToolTip(toQString(part.id));
    update(part, rotation, mirror);
}

QTransform PartItem::symbolTransform() const
{
    QTransform t;
    t.rotate(m_rotation);
    if (m_mirror)
        t.scale(-1, 1);
    return t;
}

SketchPlacement PartItem::placement() const
{
    return {pos().x(), pos().y(), m_rotation, m_mirror};
}

QRectF PartItem::sceneBodyRect() const
{
    return symbolTransform().mapRect(bodyRect(m_type)).translated(pos());
}

QString PartItem::valueText(const Part &part)
{
    auto eng = [&](std::string_view field, ValueKind kind) {
        return toQString(formatEngineering(part.number(field), 3, unitSymbol(kind)));
    };
    switch (part.type) {
    case PartType::Resistor:
        return eng("value", ValueKind::Resistance);
    case PartType::Capacitor:
        return eng("value", ValueKind::Capacitance);
    case PartType::Inductor:
        return eng("value", ValueKind::Inductance);
    case PartType::Load: {
        QString text = eng("r", ValueKind::Resistance);
        if (part.number("c") > 0)
            text += QStringLiteral(" ∥ ") + eng("c", ValueKind::Capacitance);
        return text;
    }
    case PartType::GainBlock: {
        // A negative gain inverts: dB gives only the magnitude, so the sign is said in words
        // (a bare "110 dB" on a block of -316k hid the positive feedback it makes).
        const double gain = part.number("gain");
        return toQString(formatEngineering(toDecibels(std::abs(gain)), 3))
            + (gain < 0 ? QObject::tr(" dB, inverting") : QStringLiteral(" dB"));
    }
    case PartType::ISource: {
        QStringList pieces;
        if (std::isfinite(part.number("r_parallel")))
            pieces << eng("r_parallel", ValueKind::Resistance);
        if (part.number("c_parallel") > 0)
            pieces << eng("c_parallel", ValueKind::Capacitance);
        return pieces.isEmpty() ? QObject::tr("ideal") : pieces.join(QStringLiteral(" ∥ "));
    }
    case PartType::VSource:
        return part.number("r_series") > 0 ? eng("r_series", ValueKind::Resistance)
                                           : QObject::tr("ideal");
    }
    return {};
}

void PartItem::update(const Part &part, int rotation, bool mirror)
{
    prepareGeometryChange();
    m_rotation = ((rotation % 360) + 360) % 360;
    m_mirror = mirror;
    m_label = toQString(part.id);
    m_value = valueText(part);
    m_hasValue = !part.primaryField().empty();
    layoutLabel();
    QGraphicsItem::update();
}

void PartItem::layoutLabel()
{
    const QFontMetricsF idMetrics(labelFont());
    const QFontMetricsF valueMetrics(valueFont());
    const double w
        = std::max(idMetrics.horizontalAdvance(m_label), valueMetrics.horizontalAdvance(m_value));
    const double h = idMetrics.height() + valueMetrics.height();
    m_labelSize = QSizeF(w, h);
    if (m_type == PartType::GainBlock)
        m_labelRect = QRectF(-w / 2, 44, w, h);
    else if (isVertical(m_rotation))
        m_labelRect = QRectF(28, -h / 2, w, h);
    else
        m_labelRect = QRectF(-w / 2, -16 - h, w, h);
}

void PartItem::placeLabel(const std::vector<QRectF> &obstacles)
{
    const double w = m_labelSize.width(), h = m_labelSize.height();
    const QRectF body = symbolTransform().mapRect(bodyRect(m_type));
    // The usual side first: under a gain block, beside a vertical part, above a horizontal one.
    const QRectF above(-w / 2, std::min(-16.0, body.top() - 4) - h, w, h);
    const QRectF below(-w / 2, std::max(16.0, body.bottom() + 4), w, h);
    const QRectF right(std::max(28.0, body.right() + 6), -h / 2, w, h);
    const QRectF left(std::min(-28.0, body.left() - 6) - w, -h / 2, w, h);
    std::vector<QRectF> sides;
    if (m_type == PartType::GainBlock)
        sides = {QRectF(-w / 2, 44, w, h), QRectF(-w / 2, -44 - h, w, h),
                 right.translated(0, 30 + h / 2), left.translated(0, 30 + h / 2)};
    else if (isVertical(m_rotation))
        sides = {right, left, above, below};
    else
        sides = {above, below, right, left};
    // Further out as a last resort, in the same order, then at the corners.
    const std::size_t near = sides.size();
    for (double step : {24.0, 48.0}) {
        for (std::size_t i = 0; i < near; ++i) {
            const QPointF out = sides[i].center();
            const double len = std::max(1.0, std::hypot(out.x(), out.y()));
            sides.push_back(sides[i].translated(out.x() / len * step, out.y() / len * step));
        }
    }
    for (double sx : {1.0, -1.0}) {
        for (double sy : {-1.0, 1.0}) {
            const double cx
                = sx > 0 ? std::max(28.0, body.right() + 6) : std::min(-28.0, body.left() - 6) - w;
            const double cy
                = sy < 0 ? std::min(-16.0, body.top() - 4) - h : std::max(16.0, body.bottom() + 4);
            sides.push_back(QRectF(cx, cy, w, h));
        }
    }
    std::size_t best = 0;
    int bestHits = std::numeric_limits<int>::max();
    for (std::size_t i = 0; i < sides.size(); ++i) {
        const QRectF r = sides[i].translated(pos());
        int hits = 0;
        for (const QRectF &o : obstacles)
            hits += r.intersects(o) ? 1 : 0;
        if (hits < bestHits) {
            bestHits = hits;
            best = i;
            if (hits == 0)
                break;
        }
    }
    if (sides[best] != m_labelRect) {
        prepareGeometryChange();
        m_labelRect = sides[best];
        QGraphicsItem::update();
    }
}

QRectF PartItem::boundingRect() const
{
    const QTransform t = symbolTransform();
    const QRectF symbol = t.mapRect(QRectF(-62, -44, 124, 88));
    const QRectF body
        = m_type == PartType::GainBlock ? symbol : t.mapRect(QRectF(-42, -26, 84, 52));
    return body.united(m_labelRect).adjusted(-2, -2, 2, 2);
}

QPainterPath PartItem::shape() const
{
    QPainterPath path;
    path.addRect(symbolTransform().mapRect(bodyRect(m_type).adjusted(-6, -6, 6, 6)));
    path.addRect(m_labelRect);
    return path;
}

void PartItem::paint(QPainter *painter, const QStyleOptionGraphicsItem *, QWidget *)
{
    painter->setRenderHint(QPainter::Antialiasing, true);
    const QColor ink = isSelected() ? kSelected : kInk;
    painter->save();
    painter->setTransform(symbolTransform(), true);
    painter->setPen(QPen(ink, 1.6, Qt::SolidLine, Qt::RoundCap, Qt::RoundJoin));
    painter->setBrush(Qt::NoBrush);
    paintSymbol(painter);
    painter->restore();

    const QFontMetricsF idMetrics(labelFont());
    painter->setPen(isSelected() ? kSelected : kLabel);
    painter->setFont(labelFont());
    // Beside the symbol the text keeps to the side that faces it.
    const Qt::Alignment align = m_labelRect.left() > 0 ? Qt::AlignLeft
        : m_labelRect.right() < 0                      ? Qt::AlignRight
                                                       : Qt::AlignHCenter;
    QRectF idRect(m_labelRect.left(), m_labelRect.top(), m_labelRect.width(), idMetrics.height());
    painter->drawText(idRect, int(align | Qt::AlignVCenter), m_label);
    painter->setFont(valueFont());
    painter->setPen(isSelected() ? kSelected : kInk);
    QRectF valueRect(m_labelRect.left(), idRect.bottom(), m_labelRect.width(),
                     m_labelRect.height() - idMetrics.height());
    painter->drawText(valueRect, int(align | Qt::AlignVCenter), m_value);
}

void PartItem::paintSymbol(QPainter *p) const
{
    // Upright sign or text at a point of the rotated symbol.
    auto upright = [&](QPointF at, const QString &text, double pointSize) {
        p->save();
        p->translate(at);
        p->setTransform(symbolTransform().inverted(), true);
        QFont f;
        f.setPointSizeF(pointSize);
        f.setBold(true);
        p->setFont(f);
        p->drawText(QRectF(-10, -10, 20, 20), Qt::AlignCenter, text);
        p->restore();
    };
    switch (m_type) {
    case PartType::Resistor:
        p->drawLine(QPointF(-40, 0), QPointF(-24, 0));
        p->drawLine(QPointF(24, 0), QPointF(40, 0));
        p->drawRect(QRectF(-24, -8, 48, 16));
        break;
    case PartType::Capacitor:
        p->drawLine(QPointF(-40, 0), QPointF(-5, 0));
        p->drawLine(QPointF(5, 0), QPointF(40, 0));
        p->setPen(QPen(p->pen().color(), 2.4, Qt::SolidLine, Qt::FlatCap));
        p->drawLine(QPointF(-5, -13), QPointF(-5, 13));
        p->drawLine(QPointF(5, -13), QPointF(5, 13));
        break;
    case PartType::Inductor: {
        p->drawLine(QPointF(-40, 0), QPointF(-24, 0));
        p->drawLine(QPointF(24, 0), QPointF(40, 0));
        QPainterPath coil(QPointF(-24, 0));
        for (int i = 0; i < 4; ++i)
            coil.arcTo(QRectF(-24 + 12 * i, -6, 12, 12), 180, -180);
        p->drawPath(coil);
        break;
    }
    case PartType::VSource:
        p->drawLine(QPointF(-40, 0), QPointF(-18, 0));
        p->drawLine(QPointF(18, 0), QPointF(40, 0));
        p->drawEllipse(QPointF(0, 0), 18, 18);
        upright(QPointF(-9, 0), QStringLiteral("+"), 9);
        upright(QPointF(9, 0), QStringLiteral("−"), 9);
        break;
    case PartType::ISource: {
        p->drawLine(QPointF(-40, 0), QPointF(-18, 0));
        p->drawLine(QPointF(18, 0), QPointF(40, 0));
        p->drawEllipse(QPointF(0, 0), 18, 18);
        // The arrow points to the "to" terminal (first pin): current leaves the source there.
        p->drawLine(QPointF(10, 0), QPointF(-9, 0));
        QPolygonF head({QPointF(-11, 0), QPointF(-4, -5), QPointF(-4, 5)});
        p->setBrush(p->pen().color());
        p->drawPolygon(head);
        p->setBrush(Qt::NoBrush);
        break;
    }
    case PartType::Load: {
        p->drawLine(QPointF(-40, 0), QPointF(-20, 0));
        p->drawLine(QPointF(20, 0), QPointF(40, 0));
        p->setBrush(QColor(0xf1, 0xf3, 0xf6));
        p->drawRoundedRect(QRectF(-20, -14, 40, 28), 3, 3);
        p->setBrush(Qt::NoBrush);
        p->save();
        p->setTransform(symbolTransform().inverted(), true);
        QFont f;
        f.setPointSizeF(7.5);
        p->setFont(f);
        p->drawText(QRectF(-20, -10, 40, 20), Qt::AlignCenter, QObject::tr("load"));
        p->restore();
        break;
    }
    case PartType::GainBlock: {
        p->drawLine(QPointF(-60, -20), QPointF(-40, -20));
        p->drawLine(QPointF(-60, 20), QPointF(-40, 20));
        p->drawLine(QPointF(40, 0), QPointF(60, 0));
        p->setBrush(QColor(0xf7, 0xf8, 0xfa));
        p->drawPolygon(QPolygonF({QPointF(-40, -40), QPointF(-40, 40), QPointF(40, 0)}));
        p->setBrush(Qt::NoBrush);
        upright(QPointF(-31, -20), QStringLiteral("−"), 10);
        upright(QPointF(-31, 20), QStringLiteral("+"), 10);
        break;
    }
    }
    p->setPen(Qt::NoPen);
    p->setBrush(p->pen().color());
    for (const PinGeometry &pin : pinGeometry(m_type)) {
        p->setBrush(QColor(0x2b, 0x2f, 0x36));
        p->drawEllipse(pin.position, 1.8, 1.8);
    }
}

QVariant PartItem::itemChange(GraphicsItemChange change, const QVariant &value)
{
    if (change == ItemPositionChange) {
        const QPointF p = value.toPointF();
        return QPointF(snapToGrid(p.x()), snapToGrid(p.y()));
    }
    if (change == ItemPositionHasChanged) {
        if (auto *s = dynamic_cast<SketchScene *>(scene()))
            s->partDragged();
    }
    return QGraphicsItem::itemChange(change, value);
}

void PartItem::mousePressEvent(QGraphicsSceneMouseEvent *event)
{
    m_pressPos = pos();
    m_labelDrag
        = m_hasValue && event->button() == Qt::LeftButton && m_labelRect.contains(event->pos());
    if (m_labelDrag) {
        // Dragging the value label up or down steps the value instead of moving the part.
        m_dragOrigin = event->screenPos().y();
        m_dragSteps = 0;
        event->accept();
        return;
    }
    QGraphicsItem::mousePressEvent(event);
}

void PartItem::mouseMoveEvent(QGraphicsSceneMouseEvent *event)
{
    if (!m_labelDrag) {
        QGraphicsItem::mouseMoveEvent(event);
        return;
    }
    const int steps = int((m_dragOrigin - event->screenPos().y()) / kPixelsPerStep);
    if (steps != m_dragSteps) {
        if (auto *s = dynamic_cast<SketchScene *>(scene()))
            emit s->stepRequested(m_id, steps - m_dragSteps,
                                  event->modifiers() & Qt::ShiftModifier);
        m_dragSteps = steps;
    }
    event->accept();
}

void PartItem::mouseReleaseEvent(QGraphicsSceneMouseEvent *event)
{
    if (m_labelDrag) {
        m_labelDrag = false;
        event->accept();
        return;
    }
    QGraphicsItem::mouseReleaseEvent(event);
    if (pos() != m_pressPos) {
        if (auto *s = dynamic_cast<SketchScene *>(scene()))
            s->reportMoves();
    }
}

} // namespace loopsketch::ui
