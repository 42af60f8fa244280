#include "support/partlabels.h"

#include "loopsketch/base/lookup.h"

#include <QObject>

#include <array>

namespace loopsketch::ui {

QString partTypeLabel(PartType type)
{
    static constexpr std::array<EnumName<PartType>, 7> kLabels{
        {{PartType::Resistor, QT_TR_NOOP("resistor")},
         {PartType::Capacitor, QT_TR_NOOP("capacitor")},
         {PartType::Inductor, QT_TR_NOOP("inductor")},
         {PartType::VSource, QT_TR_NOOP("signal source (voltage)")},
         {PartType::ISource, QT_TR_NOOP("signal source (current)")},
         {PartType::GainBlock, QT_TR_NOOP("gain block")},
         {PartType::Load, QT_TR_NOOP("load")}}};
    const char *label = nameOf(kLabels, type, static_cast<const char *>(nullptr));
    return label ? QObject::tr(label) : QString();
}

} // namespace loopsketch::ui
