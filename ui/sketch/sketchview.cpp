#include "sketch/sketchview.h"

#include "sketch/partitem.h"
#include "sketch/partspalette.h"
#include "sketch/sketchscene.h"
#include "sketch/wireitem.h"

#include <QContextMenuEvent>
#include <QDragEnterEvent>
#include <QGraphicsLineItem>
#include <QKeyEvent>
#include <QLabel>
#include <QMenu>
#include <QMimeData>
#include <QMouseEvent>
#include <QScrollBar>
#include <QWheelEvent>

#include <cmath>

namespace loopsketch::ui {

SketchView::SketchView(SketchScene *scene, QWidget *parent)
    : QGraphicsView(scene, parent), m_badge(new QLabel(this))
{
    setRenderHint(QPainter::Antialiasing, true);
    setDragMode(QGraphicsView::RubberBandDrag);
    setTransformationAnchor(QGraphicsView::AnchorUnderMouse);
    setViewportUpdateMode(QGraphicsView::BoundingRectViewportUpdate);
    setFocusPolicy(Qt::StrongFocus);
    setAcceptDrops(true);
    m_badge->setAttribute(Qt::WA_TransparentForMouseEvents);
    m_badge->move(8, 8);
    setBadge(QString(), true);
}

void SketchView::setBadge(const QString &text, bool twoPortForm)
{
    // Called on every recomputation: restyling re-polishes, so only on a change.
    if (m_badge->text() == text && m_badgeForm == int(twoPortForm))
        return;
    m_badgeForm = int(twoPortForm);
    m_badge->setVisible(!text.isEmpty());
    m_badge->setText(text);
    m_badge->setStyleSheet(
        twoPortForm ? QStringLiteral("QLabel { background: #e8f1f8; color: #0b3d5c; border: 1px "
                                     "solid #9cc3de; border-radius: 9px; padding: 2px 9px; }")
                    : QStringLiteral("QLabel { background: #fbf0e4; color: #6b3a00; border: 1px "
                                     "solid #e0b27a; border-radius: 9px; padding: 2px 9px; }"));
    m_badge->adjustSize();
}

QString SketchView::badgeText() const
{
    return m_badge->text();
}

void SketchView::zoomBy(double factor)
{
    const double current = transform().m11();
    const double next = std::clamp(current * factor, 0.2, 5.0);
    scale(next / current, next / current);
}

void SketchView::fitDesign()
{
    if (!scene())
        return;
    const QRectF items = scene()->itemsBoundingRect().adjusted(-40, -50, 40, 30);
    setSceneRect(items.adjusted(-400, -400, 400, 400));
    resetTransform();
    fitInView(items, Qt::KeepAspectRatio);
    if (transform().m11() > 1.4) {
        const double f = 1.4 / transform().m11();
        scale(f, f);
    }
    m_autoFit = true;
}

void SketchView::wheelEvent(QWheelEvent *event)
{
    const QPoint delta = event->angleDelta();
    const int d = delta.y() != 0 ? delta.y() : delta.x();
    if (event->modifiers() & Qt::ControlModifier) {
        m_autoFit = false;
        zoomBy(std::pow(1.0015, d));
        event->accept();
        return;
    }
    auto *part = qgraphicsitem_cast<PartItem *>(itemAt(event->position().toPoint()));
    if (!part) {
        QGraphicsView::wheelEvent(event);
        return;
    }
    // High-resolution wheels deliver fractions of a notch; step once per 120 units.
    m_wheelRemainder += d;
    const int steps = m_wheelRemainder / 120;
    m_wheelRemainder -= steps * 120;
    if (steps != 0)
        emit stepRequested(part->partId(), steps, event->modifiers() & Qt::ShiftModifier);
    event->accept();
}

std::vector<std::pair<QString, QString>> SketchView::keyHelp()
{
    return {
        {tr("Wheel over a part; Up, Down"), tr("Step the value through its E-series")},
        {tr("Shift+wheel; Shift+Up, Shift+Down"), tr("Step the value by a decade")},
        {tr("R"), tr("Rotate the selected part")},
        {tr("H"), tr("Mirror the selected part left to right")},
        {tr("Delete; Backspace"), tr("Delete the selected parts, grounds and wires")},
        {tr("+; -; Ctrl+wheel"), tr("Zoom the Sketch")},
        {tr("Middle drag"), tr("Pan the Sketch")},
        {tr("Drag from pin to pin"),
         tr("Wire the pins (with Shift the first pin leaves its node)")},
    };
}

void SketchView::keyPressEvent(QKeyEvent *event)
{
    auto *sketch = qobject_cast<SketchScene *>(scene());
    const std::string id = sketch ? sketch->selectedPartId() : std::string();
    if (!id.empty()) {
        const bool decade = event->modifiers() & Qt::ShiftModifier;
        switch (event->key()) {
        case Qt::Key_Up:
            emit stepRequested(id, 1, decade);
            return;
        case Qt::Key_Down:
            emit stepRequested(id, -1, decade);
            return;
        case Qt::Key_R:
            emit rotateRequested(id);
            return;
        case Qt::Key_H:
            emit mirrorRequested(id);
            return;
        default:
            break;
        }
    }
    if (sketch && (event->key() == Qt::Key_Delete || event->key() == Qt::Key_Backspace)
        && !sketch->selectedItems().isEmpty()) {
        emit deleteSelectionRequested();
        return;
    }
    if (event->key() == Qt::Key_Plus || event->key() == Qt::Key_Equal) {
        m_autoFit = false;
        zoomBy(1.2);
        return;
    }
    if (event->key() == Qt::Key_Minus) {
        m_autoFit = false;
        zoomBy(1 / 1.2);
        return;
    }
    QGraphicsView::keyPressEvent(event);
}

void SketchView::mousePressEvent(QMouseEvent *event)
{
    auto *sketch = qobject_cast<SketchScene *>(scene());
    QPointF at;
    const QPointF scenePos = mapToScene(event->position().toPoint());
    bool fromPin = false;
    m_reattach = false;
    if (event->button() == Qt::LeftButton && sketch) {
        int end = 0;
        if (WireItem *w = sketch->selectedWireEndAt(scenePos, 7.0, &end)) {
            // A selected wire's end: drag it to another pin.
            const RoutedWire &r = w->wire();
            const PinRef &keep = end == 0 ? r.to : r.from;
            const PinRef &leave = end == 0 ? r.from : r.to;
            m_keepPart = keep.part;
            m_keepTerminal = keep.terminal;
            m_leavePart = leave.part;
            m_leaveTerminal = leave.terminal;
            m_reattach = true;
            const QPointF fixed = w->endPoint(1 - end);
            m_wire = sketch->addLine(QLineF(fixed, scenePos),
                                     QPen(QColor(0x00, 0x72, 0xb2), 1.5, Qt::DashLine));
            m_wire->setZValue(50);
            event->accept();
            return;
        }
        m_movePin = event->modifiers() & Qt::ShiftModifier;
        fromPin = sketch->pinAt(scenePos, 7.0, &m_wirePart, &m_wireTerminal, &at);
        if (!fromPin && sketch->groundAt(scenePos, 7.0, &at) >= 0) {
            fromPin = true;
            m_wirePart.clear();
            m_wireTerminal.clear();
        }
    }
    if (fromPin) {
        m_wire = sketch->addLine(QLineF(at, at), QPen(QColor(0x00, 0x72, 0xb2), 1.5, Qt::DashLine));
        m_wire->setZValue(50);
        event->accept();
        return;
    }
    if (event->button() == Qt::MiddleButton) {
        m_panning = true;
        m_autoFit = false;
        m_panFrom = event->position().toPoint();
        viewport()->setCursor(Qt::ClosedHandCursor);
        event->accept();
        return;
    }
    QGraphicsView::mousePressEvent(event);
}

void SketchView::mouseMoveEvent(QMouseEvent *event)
{
    if (m_wire) {
        QLineF line = m_wire->line();
        line.setP2(mapToScene(event->position().toPoint()));
        m_wire->setLine(line);
        event->accept();
        return;
    }
    if (m_panning) {
        const QPoint d = event->position().toPoint() - m_panFrom;
        m_panFrom = event->position().toPoint();
        horizontalScrollBar()->setValue(horizontalScrollBar()->value() - d.x());
        verticalScrollBar()->setValue(verticalScrollBar()->value() - d.y());
        event->accept();
        return;
    }
    QGraphicsView::mouseMoveEvent(event);
}

void SketchView::mouseReleaseEvent(QMouseEvent *event)
{
    if (m_wire && event->button() == Qt::LeftButton) {
        delete m_wire;
        m_wire = nullptr;
        auto *sketch = qobject_cast<SketchScene *>(scene());
        std::string part, terminal;
        QPointF at;
        const QPointF end = mapToScene(event->position().toPoint());
        const bool onPin = sketch && sketch->pinAt(end, 9.0, &part, &terminal, &at);
        const bool onGround = !onPin && sketch && sketch->groundAt(end, 9.0) >= 0;
        if (m_reattach) {
            m_reattach = false;
            const bool same = onPin
                && ((part == m_leavePart && terminal == m_leaveTerminal)
                    || (part == m_keepPart && terminal == m_keepTerminal));
            if ((onPin && !same) || onGround)
                emit reattachRequested(m_keepPart, m_keepTerminal, m_leavePart, m_leaveTerminal,
                                       onPin ? part : std::string(),
                                       onPin ? terminal : std::string());
        } else if (m_movePin && !m_wirePart.empty()) {
            if (onGround)
                emit movePinRequested(m_wirePart, m_wireTerminal, {}, {});
            else if (onPin && !(part == m_wirePart && terminal == m_wireTerminal))
                emit movePinRequested(m_wirePart, m_wireTerminal, part, terminal);
        } else if (m_wirePart.empty()) {
            if (onPin)
                emit groundRequested(part, terminal);
        } else if (onGround) {
            emit groundRequested(m_wirePart, m_wireTerminal);
        } else if (onPin && !(part == m_wirePart && terminal == m_wireTerminal)) {
            emit connectRequested(m_wirePart, m_wireTerminal, part, terminal);
        }
        event->accept();
        return;
    }
    if (m_panning && event->button() == Qt::MiddleButton) {
        m_panning = false;
        viewport()->unsetCursor();
        event->accept();
        return;
    }
    QGraphicsView::mouseReleaseEvent(event);
}

void SketchView::contextMenuEvent(QContextMenuEvent *event)
{
    auto *sketch = qobject_cast<SketchScene *>(scene());
    if (!sketch)
        return;
    const QPointF scenePos = mapToScene(event->pos());
    std::string part, terminal;
    QPointF at;
    QMenu menu(this);
    QGraphicsItem *under = itemAt(event->pos());
    if (sketch->pinAt(scenePos, 7.0, &part, &terminal, &at)) {
        const QString pin = QStringLiteral("%1.%2").arg(QString::fromStdString(part),
                                                        QString::fromStdString(terminal));
        menu.addAction(tr("Connect %1 to ground").arg(pin), this,
                       [this, part, terminal] { emit groundRequested(part, terminal); });
        menu.addAction(tr("Disconnect %1").arg(pin), this,
                       [this, part, terminal] { emit disconnectRequested(part, terminal); });
    } else if (auto *wire = qgraphicsitem_cast<WireItem *>(under)) {
        const RoutedWire r = wire->wire();
        menu.addAction(
            tr("Delete wire %1.%2 – %3.%4")
                .arg(QString::fromStdString(r.from.part), QString::fromStdString(r.from.terminal),
                     QString::fromStdString(r.to.part), QString::fromStdString(r.to.terminal)),
            this, [this, r] {
                emit wireDeleteRequested(r.from.part, r.from.terminal, r.to.part, r.to.terminal);
            });
    } else if (auto *item = qgraphicsitem_cast<PartItem *>(under)) {
        const std::string id = item->partId();
        menu.addAction(tr("Rotate %1").arg(QString::fromStdString(id)), this,
                       [this, id] { emit rotateRequested(id); });
        menu.addAction(tr("Mirror %1 left to right").arg(QString::fromStdString(id)), this,
                       [this, id] { emit mirrorRequested(id); });
        menu.addAction(tr("Delete %1").arg(QString::fromStdString(id)), this,
                       [this, id] { emit deleteRequested({id}); });
    } else {
        return;
    }
    menu.exec(event->globalPos());
}

void SketchView::dragEnterEvent(QDragEnterEvent *event)
{
    if (event->mimeData()->hasFormat(PartsPalette::kSymbolMimeType))
        event->acceptProposedAction();
    else
        event->ignore();
}

void SketchView::dragMoveEvent(QDragMoveEvent *event)
{
    if (event->mimeData()->hasFormat(PartsPalette::kSymbolMimeType))
        event->acceptProposedAction();
    else
        event->ignore();
}

void SketchView::dropEvent(QDropEvent *event)
{
    bool ok = false;
    const int symbol
        = QString::fromUtf8(event->mimeData()->data(PartsPalette::kSymbolMimeType)).toInt(&ok);
    if (!ok) {
        event->ignore();
        return;
    }
    event->acceptProposedAction();
    emit placeRequested(symbol, mapToScene(event->position().toPoint()));
}

void SketchView::resizeEvent(QResizeEvent *event)
{
    QGraphicsView::resizeEvent(event);
    m_badge->move(8, 8);
    if (m_autoFit)
        fitDesign();
}

} // namespace loopsketch::ui
