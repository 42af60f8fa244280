#pragma once

// A layout that places its items left to right and starts a new line when the width runs
// out, so a strip of readings never forces its width on the window (the Readout with an
// UNSTABLE badge was wider than a 1280-pixel screen). Its height follows its width
// (heightForWidth); a widget holding it sets its minimum height from that on resize.

#include <QLayout>

#include <vector>

namespace loopsketch::ui {

class FlowLayout : public QLayout
{
public:
    FlowLayout(QWidget *parent, int horizontalSpacing, int verticalSpacing);
    ~FlowLayout() override;

    void addItem(QLayoutItem *item) override;
    int count() const override;
    QLayoutItem *itemAt(int index) const override;
    QLayoutItem *takeAt(int index) override;
    Qt::Orientations expandingDirections() const override;
    bool hasHeightForWidth() const override;
    int heightForWidth(int width) const override;
    QSize minimumSize() const override;
    QSize sizeHint() const override;
    void setGeometry(const QRect &rect) override;

private:
    /// Lays the items out in `rect` (only measures when `apply` is false); returns the height.
    int arrange(const QRect &rect, bool apply) const;

    std::vector<QLayoutItem *> m_items;
    int m_horizontalSpacing;
    int m_verticalSpacing;
};

} // namespace loopsketch::ui
