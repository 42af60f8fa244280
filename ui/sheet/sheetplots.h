#pragma once

// The review sheet's plot engine: framed panels with grids and tick labels drawn straight
// onto the sheet's painter as vector paths, so the PDF and SVG stay small and sharp.

#include "sheet/reviewsheet.h"

#include "loopsketch/analysis/noise.h"
#include "loopsketch/analysis/spread.h"

#include <QPainter>
#include <QRectF>

#include <cstddef>
#include <initializer_list>
#include <string>

namespace loopsketch::ui::sheet {

/// The sweep index the sheet quotes source densities at: 1 kHz when the band holds it
/// (a common reference point of noise data, common practice), else the band's centre on
/// a log scale.
std::size_t noiseReferenceIndex(const NoiseAnalysis &n);

/// The first of `steps` that divides `span` into at most `maxTicks` intervals.
double niceStep(double span, int maxTicks, std::initializer_list<double> steps);

/// The gain histogram of a Monte Carlo run, with the spec window and the nominal gain.
void drawGainHistogram(QPainter &p, const QRectF &rect, double k, const MetricStats &s,
                       const Specs &specs, const OptionalNumber &nominal, const std::string &unit);

} // namespace loopsketch::ui::sheet
