// scanToCsv(): the scan table of `loopsketch scan` (core/README.md §8.1).

#include "loopsketch/analysis/scan.h"

#include "base/jsonnumber.h"

#include <sstream>

namespace loopsketch {

namespace {

std::string cell(const OptionalNumber &v)
{
    return v ? detail::csvNumber(*v) : std::string();
}

std::string cell(const std::optional<bool> &v)
{
    return v ? (*v ? "1" : "0") : "";
}

} // namespace

std::string scanToCsv(const ScanResult &scan)
{
    std::ostringstream os;
    for (const ScanAxis &axis : scan.axes)
        os << axis.name() << ',';
    os << "gain,bandwidth_hz,phase_margin_deg,gain_margin_db,peaking_db,overshoot_pct,"
          "settling_time_s,output_noise_rms,z_in,z_out,stable,specs_pass\n";
    for (const ScanRow &row : scan.rows) {
        if (!row.done)
            continue;
        for (double v : row.values)
            os << detail::csvNumber(v) << ',';
        const ScanMetrics &m = row.metrics;
        os << cell(m.gain) << ',' << cell(m.bandwidthHz) << ',' << cell(m.phaseMarginDeg) << ','
           << cell(m.gainMarginDb) << ',' << cell(m.peakingDb) << ',' << cell(m.overshootPct) << ','
           << cell(m.settlingTimeS) << ',' << cell(m.outputNoiseRms) << ',' << cell(m.zIn) << ','
           << cell(m.zOut) << ',' << cell(m.stable) << ',' << cell(m.specsPass) << '\n';
    }
    return os.str();
}

} // namespace loopsketch
