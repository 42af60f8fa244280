#include "sketch/partspalette.h"

#include "sketch/partitem.h"
#include "support/partlabels.h"
#include "support/qtadapter.h"

#include <QAction>
#include <QLabel>
#include <QListWidget>
#include <QMimeData>
#include <QVBoxLayout>

namespace loopsketch::ui {

namespace {

QMimeData *symbolData(const QListWidgetItem *item)
{
    auto *data = new QMimeData;
    data->setData(PartsPalette::kSymbolMimeType,
                  QByteArray::number(item->data(Qt::UserRole).toInt()));
    return data;
}

/// The symbol list: its drags carry the symbol's type for the Sketch to place.
class SymbolList : public QListWidget
{
public:
    using QListWidget::QListWidget;

protected:
    QStringList mimeTypes() const override { return {PartsPalette::kSymbolMimeType}; }
    QMimeData *mimeData(const QList<QListWidgetItem *> &items) const override
    {
        return items.isEmpty() ? nullptr : symbolData(items.front());
    }
};

} // namespace

PartsPalette::PartsPalette(QWidget *parent)
    : QWidget(parent), m_kinds(new SymbolList(this)), m_parts(new QListWidget(this))
{
    auto *layout = new QVBoxLayout(this);
    layout->setContentsMargins(6, 4, 6, 4);
    auto *kindsTitle = new QLabel(tr("<b>Symbols</b>"), this);
    layout->addWidget(kindsTitle);
    struct Kind
    {
        const char *tip;
        int type; ///< PartType, or -1 for ground (a node, not a part)
    };
    const Kind kinds[] = {
        {"pos, neg, optional r_series", int(PartType::VSource)},
        {"current into 'to'; optional r_parallel, c_parallel", int(PartType::ISource)},
        {"in_p, in_n, out; gain, poles, zeros, r_in, c_in, r_out", int(PartType::GainBlock)},
        {"a, b, value", int(PartType::Resistor)},
        {"a, b, value", int(PartType::Capacitor)},
        {"a, b, value", int(PartType::Inductor)},
        {"a, b, r, optional c", int(PartType::Load)},
        {"wire a pin to it to connect the pin to ground", -1},
    };
    for (const Kind &k : kinds) {
        const QString label = k.type < 0 ? tr("ground") : partTypeLabel(PartType(k.type));
        auto *item = new QListWidgetItem(label, m_kinds);
        item->setData(Qt::UserRole, k.type);
        item->setToolTip(
            tr("Drag onto the Sketch, or double-click to place at its centre. "
               "%1. Drag from pin to pin on the Sketch to wire.")
                .arg(k.type < 0 ? tr(k.tip) : tr("Terminals and fields: %1").arg(tr(k.tip))));
    }
    connect(m_kinds, &QListWidget::itemDoubleClicked, this, [this](QListWidgetItem *item) {
        emit placeRequested(item->data(Qt::UserRole).toInt());
    });
    m_kinds->setSelectionMode(QAbstractItemView::SingleSelection);
    m_kinds->setDragEnabled(true);
    m_kinds->setDragDropMode(QAbstractItemView::DragOnly);
    m_kinds->setMaximumHeight(m_kinds->sizeHintForRow(0) * 8 + 6);
    layout->addWidget(m_kinds);
    layout->addWidget(new QLabel(tr("<b>In this design</b>"), this));
    m_parts->setMaximumHeight(m_kinds->sizeHintForRow(0) * 9 + 6);
    layout->addWidget(m_parts, 1);
    connect(m_parts, &QListWidget::itemClicked, this, [this](QListWidgetItem *item) {
        emit partActivated(toStdString(item->data(Qt::UserRole).toString()));
    });
    m_parts->setSelectionMode(QAbstractItemView::ExtendedSelection);
    auto *remove = new QAction(tr("Delete"), m_parts);
    remove->setShortcuts({QKeySequence::Delete, QKeySequence(Qt::Key_Backspace)});
    remove->setShortcutContext(Qt::WidgetShortcut);
    m_parts->addAction(remove);
    m_parts->setContextMenuPolicy(Qt::ActionsContextMenu);
    connect(remove, &QAction::triggered, this, [this] {
        std::vector<std::string> ids;
        for (QListWidgetItem *item : m_parts->selectedItems())
            ids.push_back(toStdString(item->data(Qt::UserRole).toString()));
        if (!ids.empty())
            emit deleteRequested(ids);
    });
}

QMimeData *PartsPalette::dragData(const QString &label) const
{
    for (int i = 0; i < m_kinds->count(); ++i) {
        if (m_kinds->item(i)->text() == label)
            return symbolData(m_kinds->item(i));
    }
    return nullptr;
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
