#include "loopsketch/analysis.h"

#include "loopsketch/value.h"

#include <nlohmann/json.hpp>

#include <cmath>
#include <numbers>
#include <sstream>

namespace loopsketch {

namespace {

using Json = nlohmann::ordered_json;

Json number(const OptionalNumber &v)
{
    if (!v || !std::isfinite(*v))
        return nullptr;
    return *v;
}

double magnitudeDb(std::complex<double> v)
{
    return 20.0 * std::log10(std::abs(v));
}
double phaseDeg(std::complex<double> v)
{
    return std::arg(v) * 180.0 / std::numbers::pi;
}

std::string csvNumber(double v)
{
    if (!std::isfinite(v))
        return {};
    std::ostringstream os;
    os.precision(10);
    os << v;
    return os.str();
}

} // namespace

std::string analysisToJson(const Analysis &a)
{
    Json j;
    j["schema"] = kAnalysisSchema;
    j["title"] = a.title;
    j["gain_unit"] = a.gainUnit;
    j["topology"] = nullptr;
    Json dc;
    dc["exact"] = {{"gain", number(a.exact.gain)},
                   {"z_in", number(a.exact.zIn)},
                   {"z_out", number(a.exact.zOut)}};
    dc["two_port"] = nullptr;
    dc["return_ratio"] = nullptr;
    j["dc"] = dc;
    j["margins"] = nullptr;
    j["closed_loop"] = nullptr;
    j["desensitivity_db"] = nullptr;
    j["sensitivity"] = nullptr;
    return j.dump(2) + "\n";
}

std::string analysisToText(const Analysis &a)
{
    std::ostringstream os;
    os << a.title << "\n";
    os << "Exact solution at DC\n";
    const auto show = [&](const char *label, const OptionalNumber &v, const std::string &unit) {
        os << "  " << label << ": " << (v ? formatEngineering(*v, 6, unit) : "none") << "\n";
    };
    show("gain ", a.exact.gain, a.gainUnit);
    show("z_in ", a.exact.zIn, "Ω");
    show("z_out", a.exact.zOut, "Ω");
    return os.str();
}

std::string sweepToCsv(const Analysis &a)
{
    std::ostringstream os;
    os << "f_hz,gain_exact_db,gain_exact_deg,z_in_db,z_in_deg,z_out_db,z_out_deg\n";
    for (std::size_t i = 0; i < a.frequenciesHz.size(); ++i) {
        os << csvNumber(a.frequenciesHz[i]);
        for (const Curve *c : {&a.exact.gainSweep, &a.exact.zInSweep, &a.exact.zOutSweep})
            os << ',' << csvNumber(magnitudeDb((*c)[i])) << ',' << csvNumber(phaseDeg((*c)[i]));
        os << '\n';
    }
    return os.str();
}

} // namespace loopsketch
