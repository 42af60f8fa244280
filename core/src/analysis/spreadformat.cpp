// The JSON (schema loopsketch.spread/1) and terminal text of a tolerance spread: the
// worst-case corners and the Monte Carlo statistics.
#include "loopsketch/analysis/spread.h"

#include "loopsketch/base/value.h"

#include "base/jsonnumber.h"

#include <nlohmann/json.hpp>

#include <sstream>

namespace loopsketch {

namespace {

using Json = nlohmann::ordered_json;

} // namespace

namespace {

Json number(const OptionalNumber &v)
{
    return detail::jsonNumber(v);
}

Json statsJson(const MetricStats &s)
{
    Json j;
    j["count"] = s.count;
    j["missing"] = s.missing;
    const bool any = s.count > 0;
    j["min"] = any ? Json(s.min) : Json(nullptr);
    j["mean"] = any ? Json(s.mean) : Json(nullptr);
    j["max"] = any ? Json(s.max) : Json(nullptr);
    j["std"] = any ? Json(s.std) : Json(nullptr);
    j["histogram"] = {{"low", any ? Json(s.histogramLow) : Json(nullptr)},
                      {"high", any ? Json(s.histogramHigh) : Json(nullptr)},
                      {"counts", s.histogram}};
    return j;
}

Json rangeJson(const MetricRange &r, const OptionalNumber &nominal)
{
    return {{"nominal", number(nominal)},
            {"min", number(r.min)},
            {"max", number(r.max)},
            {"min_corner", r.minCorner},
            {"max_corner", r.maxCorner}};
}

std::string quantityText(const SpreadQuantity &q)
{
    std::ostringstream os;
    os << q.part << " " << q.field << " +-" << formatValue(q.tolerance, ValueKind::Tolerance, 3);
    return os.str();
}

std::string numberText(const OptionalNumber &v, std::string_view unit)
{
    if (!v || std::isnan(*v))
        return "none";
    return formatEngineering(*v, 4, unit);
}

std::string degreesText(const OptionalNumber &v)
{
    if (!v || std::isnan(*v))
        return "none";
    return formatFixed(*v, 2) + " deg";
}

} // namespace

std::string spreadToJson(const WorstCaseResult &w, const MonteCarloResult &mc,
                         const std::string &gainUnit)
{
    Json j;
    j["schema"] = "loopsketch.spread/1";
    j["gain_unit"] = gainUnit;
    Json qs = Json::array();
    for (const auto &q : mc.quantities)
        qs.push_back({{"part", q.part},
                      {"field", q.field},
                      {"nominal", q.nominal},
                      {"tolerance", q.tolerance}});
    j["quantities"] = qs;
    j["worst_case"] = {{"method", w.exhaustive ? "vertices" : "sensitivity_corners"},
                       {"corners", w.corners},
                       {"cancelled", w.cancelled},
                       {"gain", rangeJson(w.gain, w.nominal.gain)},
                       {"bandwidth_hz", rangeJson(w.bandwidthHz, w.nominal.bandwidthHz)},
                       {"phase_margin_deg", rangeJson(w.phaseMarginDeg, w.nominal.phaseMarginDeg)},
                       {"output_noise_rms", rangeJson(w.outputNoiseRms, w.nominal.outputNoiseRms)},
                       {"snr_db", rangeJson(w.snrDb, w.nominal.snrDb)},
                       {"specs_pass", w.specsAtCorners.all()}};
    j["monte_carlo"]
        = {{"distribution", toString(mc.distribution)},
           {"seed", mc.seed},
           {"trials", mc.trials},
           {"completed", mc.completed},
           {"failed", mc.failed},
           {"cancelled", mc.cancelled},
           {"gain", statsJson(mc.gain)},
           {"bandwidth_hz", statsJson(mc.bandwidthHz)},
           {"phase_margin_deg", statsJson(mc.phaseMarginDeg)},
           {"output_noise_rms", mc.hasNoise ? statsJson(mc.outputNoiseRms) : Json(nullptr)},
           {"snr_db", mc.hasNoise ? statsJson(mc.snrDb) : Json(nullptr)},
           {"yield", mc.hasSpecs ? Json(mc.yield) : Json(nullptr)},
           {"passed", mc.passed}};
    return j.dump(2) + "\n";
}

std::string spreadToText(const WorstCaseResult &w, const MonteCarloResult &mc,
                         const std::string &gainUnit)
{
    std::ostringstream os;
    os << "Toleranced quantities:";
    for (std::size_t k = 0; k < mc.quantities.size(); ++k)
        os << (k ? ", " : " ") << quantityText(mc.quantities[k]);
    os << "\n\nWorst case ("
       << (w.exhaustive ? "all " + std::to_string(w.corners) + " corners"
                        : std::to_string(w.corners) + " sensitivity corners, an approximation")
       << "):\n";
    const auto rangeLine
        = [&](const char *name, const MetricRange &r, const OptionalNumber &nom, const auto &fmt) {
              os << "  " << name << "nominal " << fmt(nom) << ", min " << fmt(r.min) << ", max "
                 << fmt(r.max) << "\n";
          };
    const auto gainFmt = [&](const OptionalNumber &v) {
        return numberText(v, gainUnit);
    };
    const auto hzFmt = [](const OptionalNumber &v) {
        return numberText(v, "Hz");
    };
    rangeLine("gain          ", w.gain, w.nominal.gain, gainFmt);
    rangeLine("bandwidth     ", w.bandwidthHz, w.nominal.bandwidthHz, hzFmt);
    rangeLine("phase margin  ", w.phaseMarginDeg, w.nominal.phaseMarginDeg, degreesText);
    if (w.nominal.outputNoiseRms || w.outputNoiseRms.max) {
        const std::string out = gainUnit.substr(0, gainUnit.find('/'));
        rangeLine("output noise  ", w.outputNoiseRms, w.nominal.outputNoiseRms,
                  [&](const OptionalNumber &v) { return numberText(v, out + " rms"); });
    }
    if (w.nominal.snrDb || w.snrDb.min)
        rangeLine("SNR           ", w.snrDb, w.nominal.snrDb,
                  [](const OptionalNumber &v) { return numberText(v, "dB"); });
    os << "  specs         "
       << (w.specsAtCorners.all() ? "met at every corner" : "missed at some corner") << "\n";

    os << "\nMonte Carlo (" << mc.completed << " of " << mc.trials << " trials, "
       << toString(mc.distribution) << ", seed " << mc.seed << "):\n";
    const auto statsLine = [&](const char *name, const MetricStats &s, const auto &fmt) {
        os << "  " << name;
        if (s.count == 0) {
            os << "none\n";
            return;
        }
        os << "min " << fmt(s.min) << ", mean " << fmt(s.mean) << ", max " << fmt(s.max) << ", std "
           << fmt(s.std);
        if (s.missing)
            os << " (" << s.missing << " trials without one)";
        os << "\n";
    };
    statsLine("gain          ", mc.gain, gainFmt);
    statsLine("bandwidth     ", mc.bandwidthHz, hzFmt);
    statsLine("phase margin  ", mc.phaseMarginDeg, degreesText);
    if (mc.hasNoise) {
        const std::string out = gainUnit.substr(0, gainUnit.find('/'));
        statsLine("output noise  ", mc.outputNoiseRms,
                  [&](double v) { return formatEngineering(v, 4, out + " rms"); });
        if (mc.snrDb.count > 0 || w.nominal.snrDb)
            statsLine("SNR           ", mc.snrDb,
                      [](double v) { return formatFixed(v, 2) + " dB"; });
    }
    if (mc.failed)
        os << "  " << mc.failed << " trials had no circuit solution\n";
    if (mc.hasSpecs) {
        std::ostringstream y;
        y.setf(std::ios::fixed);
        y.precision(2);
        y << mc.yield * 100.0;
        os << "  yield         " << y.str() << " % (" << mc.passed << " of " << mc.completed
           << " trials meet every spec)\n";
    } else {
        os << "  yield         no specs in the design\n";
    }
    return os.str();
}

} // namespace loopsketch
