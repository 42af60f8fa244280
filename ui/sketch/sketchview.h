#pragma once

// The Sketch's view: Ctrl+wheel zooms, wheel over a part steps its value through its
// E-series (Shift: a decade), arrow keys step the selected part, R turns it; a drag on the
// background selects with a rubber band, a middle-button drag pans, a drag from a pin to
// another pin draws a wire (joins their nodes), with Shift it moves the pin's connection
// there; a selected wire's end dragged to another pin re-attaches the wire; H mirrors the
// selected part; Delete removes the selection (parts, ground symbols, wires).

#include <QGraphicsView>
#include <QString>

#include <string>
#include <utility>
#include <vector>

class QLabel;
class QGraphicsLineItem;

namespace loopsketch::ui {

class SketchScene;

class SketchView : public QGraphicsView
{
    Q_OBJECT

public:
    explicit SketchView(SketchScene *scene, QWidget *parent = nullptr);

    /// The topology badge shown in the top left corner.
    void setBadge(const QString &text, bool twoPortForm);
    QString badgeText() const;
    void zoomBy(double factor);
    void fitDesign();
    /// The keys and pointer gestures the view handles itself ({keys, what they do}), for
    /// Help > Keyboard shortcuts; kept beside keyPressEvent() and wheelEvent().
    static std::vector<std::pair<QString, QString>> keyHelp();

signals:
    /// The user asked to step a part's value by `steps` positions (decade: whole decades).
    void stepRequested(const std::string &partId, int steps, bool decade);
    void rotateRequested(const std::string &partId);
    void deleteRequested(const std::vector<std::string> &partIds);
    /// A wire was drawn from one pin to another.
    void connectRequested(const std::string &partA, const std::string &terminalA,
                          const std::string &partB, const std::string &terminalB);
    void groundRequested(const std::string &partId, const std::string &terminal);
    /// A symbol from the Parts palette was dropped at `scenePos`: `symbol` is a PartType, or
    /// -1 for a ground symbol.
    void placeRequested(int symbol, QPointF scenePos);
    void deleteGroundsRequested(const std::vector<int> &indices);
    /// Delete or Backspace on the Sketch: remove whatever is selected.
    void deleteSelectionRequested();
    void mirrorRequested(const std::string &partId);
    /// Take one pin off its node (context menu).
    void disconnectRequested(const std::string &partId, const std::string &terminal);
    /// Remove the wire between two pins (context menu).
    void wireDeleteRequested(const std::string &partA, const std::string &terminalA,
                             const std::string &partB, const std::string &terminalB);
    /// The wire between `keep` and `moved` was dragged by its `moved` end onto another pin
    /// (`targetPart` empty: onto a ground symbol).
    void reattachRequested(const std::string &keepPart, const std::string &keepTerminal,
                           const std::string &movedPart, const std::string &movedTerminal,
                           const std::string &targetPart, const std::string &targetTerminal);
    /// Shift-drag from a pin: the pin leaves its node and joins the target's
    /// (`targetPart` empty: ground).
    void movePinRequested(const std::string &partId, const std::string &terminal,
                          const std::string &targetPart, const std::string &targetTerminal);

protected:
    void wheelEvent(QWheelEvent *event) override;
    void keyPressEvent(QKeyEvent *event) override;
    void resizeEvent(QResizeEvent *event) override;
    void mousePressEvent(QMouseEvent *event) override;
    void mouseMoveEvent(QMouseEvent *event) override;
    void mouseReleaseEvent(QMouseEvent *event) override;
    void contextMenuEvent(QContextMenuEvent *event) override;
    void dragEnterEvent(QDragEnterEvent *event) override;
    void dragMoveEvent(QDragMoveEvent *event) override;
    void dropEvent(QDropEvent *event) override;

private:
    QLabel *m_badge;
    int m_wheelRemainder = 0;
    bool m_autoFit = true; ///< refit on resize until the user zooms or pans
    bool m_panning = false;
    // A wire being drawn from a pin.
    QGraphicsLineItem *m_wire = nullptr;
    std::string m_wirePart, m_wireTerminal; ///< empty part: the wire starts at a ground symbol
    bool m_movePin = false; ///< Shift held: the pin's connection moves instead of a new wire
    /// A selected wire's end being dragged: the pin that stays and the pin that is left.
    std::string m_keepPart, m_keepTerminal, m_leavePart, m_leaveTerminal;
    bool m_reattach = false;
    int m_badgeForm = -1; ///< style last applied: 1 two-port form, 0 none, -1 never
    QPoint m_panFrom;
};

} // namespace loopsketch::ui
