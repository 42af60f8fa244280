#pragma once

// How every JSON and CSV writer of core shows a quantity (schemas loopsketch.analysis/1,
// loopsketch.suggest/1, loopsketch.spread/1 and the sweep CSV): null (an empty CSV cell)
// where the quantity does not exist, the string "inf" or "-inf" where it is infinite (an
// open input, an ideal source), the number otherwise. Never a NaN or a printf "inf".

#include <nlohmann/json.hpp>

#include <cmath>
#include <optional>
#include <sstream>
#include <string>

namespace loopsketch::detail {

inline nlohmann::ordered_json jsonNumber(std::optional<double> v)
{
    if (!v || std::isnan(*v))
        return nullptr;
    if (std::isinf(*v))
        return *v > 0 ? "inf" : "-inf";
    return *v;
}

inline std::string csvNumber(double v, int precision = 10)
{
    if (std::isnan(v))
        return {};
    if (std::isinf(v))
        return v > 0 ? "inf" : "-inf";
    std::ostringstream os;
    os.precision(precision);
    os << v;
    return os.str();
}

} // namespace loopsketch::detail
