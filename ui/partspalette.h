#pragma once

// The Parts palette: the symbols Loopsketch knows, and the parts of the open design
// (clicking one selects it on the Sketch).

#include "loopsketch/design.h"

#include <QWidget>

#include <string>

class QListWidget;

namespace loopsketch::ui {

class PartsPalette : public QWidget
{
    Q_OBJECT

public:
    explicit PartsPalette(QWidget *parent = nullptr);

    void showDesign(const Design &design);
    /// Refreshes one part's line.
    void updatePart(const Part &part);
    void selectPart(const std::string &partId);

signals:
    void partActivated(const std::string &partId);
    /// Double-click on a symbol: place a new part of that type.
    void placeRequested(loopsketch::PartType type);

private:
    QListWidget *m_kinds;
    QListWidget *m_parts;
};

} // namespace loopsketch::ui
