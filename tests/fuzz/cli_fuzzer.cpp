// libFuzzer target for the command line's argument parser: the input, split at NUL bytes, is
// the argument list. Any list must give a run request, the GUI, or an exit code of 0 or 2
// with a message; never a crash, a hang or a sanitizer report. No file is read.
#include "cliarguments.h"

#include <cstddef>
#include <cstdint>
#include <cstdlib>
#include <sstream>
#include <string>
#include <vector>

extern "C" int LLVMFuzzerTestOneInput(const std::uint8_t *data, std::size_t size)
{
    using loopsketch::app::ParsedArguments;
    std::vector<std::string> args(1);
    for (std::size_t i = 0; i < size && args.size() <= 32; ++i) {
        if (data[i] == 0)
            args.emplace_back();
        else
            args.back() += static_cast<char>(data[i]);
    }
    if (size == 0)
        args.clear();
    std::ostringstream out, err;
    const ParsedArguments p = loopsketch::app::parseArguments(args, out, err);
    switch (p.action) {
    case ParsedArguments::Action::Gui:
        if (args.size() > 1 || !err.str().empty())
            std::abort();
        break;
    case ParsedArguments::Action::Exit:
        if (p.exitCode == 0 && out.str().empty())
            std::abort(); // --help or --version print something
        if (p.exitCode == 2
            && (err.str().rfind("loopsketch: ", 0) != 0 || err.str().back() != '\n'))
            std::abort(); // a refusal says so
        if (p.exitCode != 0 && p.exitCode != 2)
            std::abort();
        break;
    case ParsedArguments::Action::Run: {
        const auto &o = p.options;
        if (o.file.empty() || !err.str().empty())
            std::abort();
        if ((o.command == "sweep" && o.csvOut.empty())
            || (o.command == "export" && o.pdfOut.empty())
            || (o.command == "suggest" && o.suggest.parts.empty()))
            std::abort();
        if (o.spread.trials < 1 || o.spreadTrials < 0 || !(o.suggest.decades > 0))
            std::abort();
        break;
    }
    }
    return 0;
}
