#pragma once

// Part types in the designer's words, the one place the Parts palette, the Inspector and any
// other view take them from.

#include "loopsketch/design/design.h"

#include <QString>

namespace loopsketch::ui {

/// "resistor", "signal source (voltage)", "gain block" ... for `type`.
QString partTypeLabel(PartType type);

} // namespace loopsketch::ui
