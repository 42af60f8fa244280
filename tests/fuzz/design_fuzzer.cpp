// libFuzzer target for the design-file loader: any byte string must give a Design or a
// diagnostic, never a crash, a hang or a sanitizer report. A parsed design must also
// survive a save/load round trip.
#include "loopsketch/design/designfile.h"

#include <cstddef>
#include <cstdint>
#include <cstdlib>
#include <string_view>

extern "C" int LLVMFuzzerTestOneInput(const std::uint8_t *data, std::size_t size)
{
    const std::string_view text(reinterpret_cast<const char *>(data), size);
    const auto parsed = loopsketch::parseDesign(text, "fuzz.loopsketch");
    if (!parsed.ok()) {
        if (parsed.errorText().empty())
            std::abort();
        return 0;
    }
    const auto again = loopsketch::parseDesign(loopsketch::serializeDesign(*parsed), "again");
    if (!again.ok())
        std::abort();
    return 0;
}
