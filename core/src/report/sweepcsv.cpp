// sweepToCsv(): the sweep table (core/README.md §8).

#include "loopsketch/analysis/analysis.h"
#include "loopsketch/report/noisenames.h"

#include "base/jsonnumber.h"
#include "detail/phase.h"

#include <cctype>
#include <cmath>
#include <sstream>

namespace loopsketch {

namespace {

double magnitudeDb(std::complex<double> v)
{
    return 20.0 * std::log10(std::abs(v));
}
double phaseDeg(std::complex<double> v)
{
    return detail::degrees(std::arg(v));
}

std::string csvNumber(double v)
{
    return detail::csvNumber(v);
}

} // namespace

std::string sweepToCsv(const Analysis &a)
{
    const LoopCurves &c = a.curves;
    const std::pair<const char *, const Curve *> columns[] = {
        {"a", &c.a},
        {"loop_gain", &c.loopGain},
        {"gain_two_port", &c.gainTwoPort},
        {"gain_exact", &c.gainExact},
        {"z_in", &c.zInExact},
        {"z_out", &c.zOutExact},
        {"desensitivity", &c.desensitivity},
        {"a_ol", &c.openLoopGain},
        {"inv_beta", &c.invBeta},
    };
    std::ostringstream os;
    os << "f_hz";
    for (const auto &[name, curve] : columns)
        os << ',' << name << "_db," << name << "_deg";
    const bool noise = a.noise && a.noise->outputDensity.size() == a.frequenciesHz.size();
    // the cumulative rms from the sweep start (absent for an unstable loop)
    const bool cumulative = noise && a.noise->cumulativeRms.size() == a.frequenciesHz.size();
    // Densities per sqrt(Hz) in the output's and the signal source's unit, named with
    // that unit as the other columns are (f_hz, _db, _deg): output_noise_v_per_rthz,
    // input_noise_a_per_rthz for a transimpedance stage.
    if (noise) {
        auto [outUnit, inUnit] = noiseUnits(a.gainUnit);
        const auto lower = [](std::string u) {
            for (char &ch : u)
                ch = static_cast<char>(std::tolower(static_cast<unsigned char>(ch)));
            return u;
        };
        os << ",output_noise_" << lower(outUnit) << "_per_rthz,input_noise_" << lower(inUnit)
           << "_per_rthz";
        if (cumulative)
            os << ",output_noise_cumulative_" << lower(outUnit) << "_rms";
    }
    os << '\n';
    for (std::size_t i = 0; i < a.frequenciesHz.size(); ++i) {
        os << csvNumber(a.frequenciesHz[i]);
        for (const auto &[name, curve] : columns)
            os << ',' << csvNumber(magnitudeDb((*curve)[i])) << ','
               << csvNumber(phaseDeg((*curve)[i]));
        if (noise)
            os << ',' << csvNumber(a.noise->outputDensity[i]) << ','
               << csvNumber(a.noise->inputDensity[i]);
        if (cumulative)
            os << ',' << csvNumber(a.noise->cumulativeRms[i]);
        os << '\n';
    }
    return os.str();
}

} // namespace loopsketch
