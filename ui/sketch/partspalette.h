#pragma once

// The Parts palette: the symbols Loopsketch knows, and the parts of the open design
// (clicking one selects it on the Sketch).

#include "loopsketch/design/design.h"

#include <QWidget>

#include <string>
#include <vector>

class QListWidget;
class QMimeData;

namespace loopsketch::ui {

class PartsPalette : public QWidget
{
    Q_OBJECT

public:
    /// Drag data of a symbol: its PartType as decimal text, or "-1" for a ground symbol.
    static constexpr const char *kSymbolMimeType = "application/x-loopsketch-symbol";

    explicit PartsPalette(QWidget *parent = nullptr);

    /// What dragging the symbol labelled `label` carries (the palette's own drag data);
    /// nullptr when there is no such symbol. The caller owns the result.
    QMimeData *dragData(const QString &label) const;
    QListWidget *symbolList() const { return m_kinds; }
    QListWidget *partList() const { return m_parts; }

    void showDesign(const Design &design);
    /// Refreshes one part's line.
    void updatePart(const Part &part);
    void selectPart(const std::string &partId);

signals:
    void partActivated(const std::string &partId);
    /// Double-click on a symbol: place one at the centre of the visible Sketch. `symbol` is
    /// a PartType, or -1 for a ground symbol.
    void placeRequested(int symbol);
    /// Delete pressed in the list of the design's parts.
    void deleteRequested(const std::vector<std::string> &partIds);

private:
    QListWidget *m_kinds;
    QListWidget *m_parts;
};

} // namespace loopsketch::ui
