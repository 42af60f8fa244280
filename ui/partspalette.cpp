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
    const char *kinds[][2] = {
        {"signal source (voltage)", "vsource: pos, neg, optional r_series"},
        {"signal source (current)", "isource: current into 'to'; optional r_parallel, c_parallel"},
        {"gain block", "gain_block: in_p, in_n, out; gain, poles, zeros, r_in, c_in, r_out"},
        {"resistor", "resistor: a, b, value"},
        {"capacitor", "capacitor: a, b, value"},
        {"inductor", "inductor: a, b, value"},
        {"load", "load: a, b, r, optional c"},
        {"ground", "node \"0\""},
    };
    for (const auto &k : kinds) {
        auto *item = new QListWidgetItem(tr(k[0]), m_kinds);
        item->setToolTip(QString::fromUtf8(k[1]));
    }
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
