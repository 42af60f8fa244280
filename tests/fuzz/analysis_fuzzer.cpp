// libFuzzer target for the whole analysis: the byte string steers the random design
// generator (randomdesign.h), and every check of analysischecks.h must pass, else abort()
// so that libFuzzer keeps the input. The same generator and checks as analysis_fuzz_driver.
// Built with clang: the numeric sources lose their GCC-only -fcx-fortran-rules here (C99
// complex arithmetic instead), see CMakeLists.txt.
#include "analysischecks.h"
#include "randomdesign.h"

#include <cstddef>
#include <cstdint>
#include <cstdio>
#include <cstdlib>

extern "C" int LLVMFuzzerTestOneInput(const std::uint8_t *data, std::size_t size)
{
    loopsketch::fuzz::RandomSource random({data, size});
    const auto design = loopsketch::fuzz::generateDesign(random);
    const auto report = loopsketch::fuzz::checkDesignText(design.text, "fuzz.loopsketch");
    if (report.failures.empty())
        return 0;
    std::fprintf(stderr, "%s\n", design.text.c_str());
    for (const auto &f : report.failures)
        std::fprintf(stderr, "%s\n", f.c_str());
    std::abort();
}
