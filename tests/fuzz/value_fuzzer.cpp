// libFuzzer target for the value parser: every ValueKind and ValueRange on any text. A
// success must be finite and inside the range; a failure must carry a message.
#include "loopsketch/base/value.h"

#include <array>
#include <cmath>
#include <cstddef>
#include <cstdint>
#include <cstdlib>
#include <string_view>

namespace {

constexpr std::array kKinds{
    loopsketch::ValueKind::Resistance, loopsketch::ValueKind::Capacitance,
    loopsketch::ValueKind::Inductance, loopsketch::ValueKind::Frequency,
    loopsketch::ValueKind::Gain,       loopsketch::ValueKind::Tolerance,
    loopsketch::ValueKind::Plain,
};
constexpr std::array kRanges{loopsketch::ValueRange::Positive, loopsketch::ValueRange::NonNegative,
                             loopsketch::ValueRange::Any};

} // namespace

extern "C" int LLVMFuzzerTestOneInput(const std::uint8_t *data, std::size_t size)
{
    const std::string_view text(reinterpret_cast<const char *>(data), size);
    for (const auto kind : kKinds) {
        for (const auto range : kRanges) {
            const auto parsed = loopsketch::parseValue(text, kind, range);
            if (!parsed.ok()) {
                if (parsed.errorText().empty())
                    std::abort();
                continue;
            }
            const double v = *parsed;
            if (!std::isfinite(v))
                std::abort();
            if (range == loopsketch::ValueRange::Positive && !(v > 0))
                std::abort();
            if (range == loopsketch::ValueRange::NonNegative && !(v >= 0))
                std::abort();
            (void)loopsketch::formatValue(v, kind);
            if (kind == loopsketch::ValueKind::Resistance
                || kind == loopsketch::ValueKind::Capacitance)
                (void)loopsketch::formatRkm(v, kind);
        }
    }
    return 0;
}
