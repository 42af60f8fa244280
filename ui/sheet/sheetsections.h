#pragma once

// The review sheet's sections, in sheet order: each writes its heading, text and tables at
// the SheetWriter's cursor.

#include "sheet/reviewsheet.h"
#include "sheet/sheetwriter.h"

namespace loopsketch::ui::sheet {

void titleBlock(SheetWriter &w, const Design &d, const Analysis &a, const QString &fileName,
                const SheetSpread *spread);
/// Numbers the solver could not assure, or values no real part has: said before any number.
void warningsSection(SheetWriter &w, const Analysis &a);
void sketchSection(SheetWriter &w, const Design &d);
void partsSection(SheetWriter &w, const Design &d);
void topologySection(SheetWriter &w, const Analysis &a);
void methodSection(SheetWriter &w, const Analysis &a);
void metricsSection(SheetWriter &w, const Design &d, const Analysis &a);
/// T near the loop crossover and at the phase crossings: the margins, recomputable by hand.
void loopGainSection(SheetWriter &w, const Analysis &a);
void noiseSection(SheetWriter &w, const Analysis &a);
void spreadSection(SheetWriter &w, const Design &d, const Analysis &a, const SheetSpread *spread);
/// The plots, each candidate overlaid.
void plotsSection(SheetWriter &w, const Analysis &a, const std::vector<SheetOverlay> &overlays);
void cautionsSection(SheetWriter &w);

} // namespace loopsketch::ui::sheet
