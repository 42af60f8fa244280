#pragma once

// Parts on the clipboard: a fragment of a design (the copied parts, their connections
// among themselves and their places on the Sketch) as design-file text, so a copy pastes
// into another window or a text editor alike.

#include "loopsketch/design/design.h"

#include <optional>
#include <string>
#include <vector>

class QMimeData;

namespace loopsketch::ui {

/// The clipboard format: the fragment's loopsketch.design/1 text.
inline constexpr const char *kPartsMimeType = "application/x-loopsketch-parts";

/// The parts `partIds` of `design` with their placements in `layout`, as a design of their
/// own (no input, candidates or specs). Unknown ids are skipped.
Design copyParts(const Design &design, const SketchLayout &layout,
                 const std::vector<std::string> &partIds);

/// Clipboard data of a fragment (kPartsMimeType, and the same text as plain text). The
/// caller owns the result.
QMimeData *partsMimeData(const Design &fragment);

/// The fragment on `data`; nullopt when there is none or its text does not load as a draft.
std::optional<Design> partsFromMimeData(const QMimeData *data);

} // namespace loopsketch::ui
