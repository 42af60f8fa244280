#include "cli.h"

#include "loopsketch/analysis/analysis.h"
#include "loopsketch/design/designfile.h"

#include <csignal>
#include <iostream>

#ifdef LOOPSKETCH_HAVE_GUI
int runGui(int argc, char **argv);
#endif

int main(int argc, char **argv)
{
    using namespace loopsketch;
    // A file-size limit (ulimit -f) then makes write() fail with EFBIG, which every writer
    // reports and cleans up after, instead of killing the process mid-file.
    std::signal(SIGXFSZ, SIG_IGN);
    std::vector<std::string> args(argv + 1, argv + argc);
    if (auto code = app::runCommandLine(args, std::cout, std::cerr))
        return *code;
#ifdef LOOPSKETCH_HAVE_GUI
    return runGui(argc, argv);
#else
    // Built without the GUI: show the design's analysis instead of a window.
    auto design = args.empty() ? parseDesign(app::demoDesignText(), "demo") : loadDesign(args[0]);
    if (!design) {
        std::cerr << "loopsketch: " << design.errorText() << "\n";
        return app::kExitBadInput;
    }
    auto analysis = analyze(*design, args.empty() ? "demo" : args[0]);
    if (!analysis) {
        std::cerr << "loopsketch: " << analysis.errorText() << "\n";
        return app::kExitBadInput;
    }
    std::cout << analysisToText(*analysis, &*design);
    return app::kExitOk;
#endif
}
