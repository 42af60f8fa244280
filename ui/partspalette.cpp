#include "partspalette.h"

#include "partitem.h"
#include "qtadapter.h"

#include <QLabel>
#include <QListWidget>
#include <QVBoxLayout>

namespace loopsketch::ui {

PartsPalette::PartsPalette(QWidget *parent)
    : QWidget(parent), m_kinds(new QListWidget(this)), m_parts(new QListWidget(this))
{
    auto *layout = new QVBoxLayout(this);
    layout->setContentsMargins(6, 4, 6, 4);
    auto *kindsTitle = new QLabel(tr("<b>Symbols</b>"), this);
    layout->addWidget(kindsTitle);
    struct Kind
    {
        const char *label;
        const char *tip;
        int type; ///< PartType, or -1 for ground (a node, not a part)
    };
    const Kind kinds[] = {
        {"signal source (voltage)", "pos, neg, optional r_series", int(PartType::VSource)},
        {"signal source (current)", "current into 'to'; optional r_parallel, c_parallel",
         int(PartType::ISource)},
        {"gain block", "in_p, in_n, out; gain, poles, zeros, r_in, c_in, r_out",
         int(PartType::GainBlock)},
        {"resistor", "a, b, value", int(PartType::Resistor)},
        {"capacitor", "a, b, value", int(PartType::Capacitor)},
        {"inductor", "a, b, value", int(PartType::Inductor)},
        {"load", "a, b, r, optional c", int(PartType::Load)},
        {"ground", "right-click a pin on the Sketch to connect it to ground", -1},
    };
    for (const Kind &k : kinds) {
        auto *item = new QListWidgetItem(tr(k.label), m_kinds);
        item->setData(Qt::UserRole, k.type);
        item->setToolTip(k.type < 0 ? tr(k.tip)
                                    : tr("Double-click to place. Terminals and fields: %1. "
                                         "Drag from pin to pin on the Sketch to wire it.")
                                          .arg(tr(k.tip)));
    }
    connect(m_kinds, &QListWidget::itemDoubleClicked, this, [this](QListWidgetItem *item) {
        const int type = item->data(Qt::UserRole).toInt();
        if (type >= 0)
            emit placeRequested(PartType(type));
    });
    m_kinds->setSelectionMode(QAbstractItemView::NoSelection);
    m_kinds->setMaximumHeight(m_kinds->sizeHintForRow(0) * 8 + 6);
    layout->addWidget(m_kinds);
    layout->addWidget(new QLabel(tr("<b>In this design</b>"), this));
    m_parts->setMaximumHeight(m_kinds->sizeHintForRow(0) * 9 + 6);
    layout->addWidget(m_parts, 1);
    connect(m_parts, &QListWidget::itemClicked, this, [this](QListWidgetItem *item) {
        emit partActivated(toStdString(item->data(Qt::UserRole).toString()));
    });
}

void PartsPalette::showDesign(const Design &design)
{
    m_parts->clear();
    for (const Part &p : design.parts) {
        auto *item = new QListWidgetItem(
            toQString(p.id) + QStringLiteral("   ") + PartItem::valueText(p), m_parts);
        item->setData(Qt::UserRole, toQString(p.id));
    }
}

void PartsPalette::updatePart(const Part &part)
{
    for (int i = 0; i < m_parts->count(); ++i) {
        QListWidgetItem *item = m_parts->item(i);
        if (item->data(Qt::UserRole).toString() == toQString(part.id))
            item->setText(toQString(part.id) + QStringLiteral("   ") + PartItem::valueText(part));
    }
}

void PartsPalette::selectPart(const std::string &partId)
{
    for (int i = 0; i < m_parts->count(); ++i) {
        QListWidgetItem *item = m_parts->item(i);
        item->setSelected(item->data(Qt::UserRole).toString() == toQString(partId));
    }
}

} // namespace loopsketch::ui
