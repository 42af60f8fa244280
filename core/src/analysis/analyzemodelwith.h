#pragma once

// analyzeModel() with the noise model supplied by the caller: scans keep one noise model per
// worker and re-stamp it from row to row (NoiseModel::rebuilt()).

#include "analysis/noisemodel.h"
#include "loopsketch/analysis/analysis.h"

#include <functional>

namespace loopsketch::detail {

/// analyzeModel() with the noise model from `noiseModel` (NoiseModel::build() of `design`, or
/// a model rebuilt() for it), which is called only when the noise is computed: under
/// `options.metricsOnly` not for a loop that is not known stable, whose noise rms does not
/// exist (nor its SNR, nor a spec verdict that reads them). For scans, which keep one noise
/// model per worker.
/// The scope of the loop model `options` read: Full, Metrics under metricsOnly, GainAndLoop
/// where a metricsOnly run reads no impedance either.
inline LoopModelScope loopModelScope(const AnalysisOptions &options)
{
    if (!options.metricsOnly)
        return LoopModelScope::Full;
    return options.reads.impedances ? LoopModelScope::Metrics : LoopModelScope::GainAndLoop;
}

Analysis analyzeModelWith(const LoopModel &model, const Design &design,
                          const AnalysisOptions &options,
                          const std::function<const Result<NoiseModel> &()> &noiseModel);

} // namespace loopsketch::detail
