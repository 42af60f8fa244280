#include "cli.h"

#include "demodesign.h"
#ifdef LOOPSKETCH_HAVE_GUI
#include "exportcommand.h"
#endif

#include "loopsketch/analysis.h"
#include "loopsketch/candidate.h"
#include "loopsketch/designfile.h"
#include "loopsketch/exactsolution.h"
#include "loopsketch/spread.h"
#include "loopsketch/suggest.h"

#include <charconv>
#include <cmath>
#include <cstdint>
#include <exception>
#include <ostream>

namespace loopsketch::app {

std::string_view demoDesignText()
{
    return kDemoDesignText;
}

std::string usage()
{
    return "Usage:\n"
           "  loopsketch [FILE]                        open the GUI (the demo design when no "
           "FILE)\n"
           "  loopsketch analyze FILE [--json] [--candidate NAME]\n"
           "                                           analyse a design and print the results\n"
           "  loopsketch sweep FILE --csv OUT          write the frequency sweep as CSV\n"
           "  loopsketch spread FILE --trials N --seed S [--normal] [--gain-spread PCT]\n"
           "                    [--gbw-spread PCT] [--json]\n"
           "                                           worst case and Monte Carlo over the "
           "tolerances\n"
           "  loopsketch suggest FILE --parts RF,CF [--decades D] [--best N] [--json]\n"
           "                                           E-series values that best meet the "
           "specs\n"
#ifdef LOOPSKETCH_HAVE_GUI
           "  loopsketch export FILE --pdf OUT [--letter] [--csv OUT] [--svg DIR] [--png DIR]\n"
           "                    [--spread-trials N] [--spread-seed S]\n"
           "                                           write the review sheet (PDF), the "
           "sweep\n"
           "                                           (CSV) and one SVG or PNG per plot; the\n"
           "                                           sheet's spread section runs N Monte "
           "Carlo\n"
           "                                           trials (default 2000, 0: none) with "
           "seed S\n"
           "                                           (default 1)\n"
#endif
           "  loopsketch --help | --version\n"
           "\n"
           "FILE may be \"demo\" for the embedded demo design.\n"
           "Exit codes: 0 ok, 2 bad input (the message names file, part and field),\n"
           "1 internal error.\n";
}

namespace {

struct Options
{
    std::string command;
    std::string file;
    bool json = false;
    std::string candidate;
    std::string csvOut;
    std::string pdfOut;
    std::string svgDir;
    std::string pngDir;
    bool letter = false;
    int spreadTrials = 2000; ///< export: Monte Carlo trials on the sheet, 0 = no spread section
    std::uint64_t spreadSeed = 1;
    SpreadOptions spread;
    SuggestOptions suggest;
};

std::optional<long long> parseInteger(const std::string &text)
{
    long long v = 0;
    const auto [end, ec] = std::from_chars(text.data(), text.data() + text.size(), v);
    if (ec != std::errc() || end != text.data() + text.size())
        return std::nullopt;
    return v;
}

std::optional<double> parseNumber(const std::string &text)
{
    try {
        std::size_t used = 0;
        const double v = std::stod(text, &used);
        if (used != text.size() || !std::isfinite(v))
            return std::nullopt;
        return v;
    } catch (const std::exception &) {
        return std::nullopt;
    }
}

std::vector<std::string> splitList(const std::string &text)
{
    std::vector<std::string> out;
    std::size_t start = 0;
    for (;;) {
        const std::size_t comma = text.find(',', start);
        out.push_back(text.substr(start, comma - start));
        if (comma == std::string::npos)
            break;
        start = comma + 1;
    }
    std::erase_if(out, [](const std::string &s) { return s.empty(); });
    return out;
}

Result<Design> loadForCli(const std::string &file)
{
    if (file == "demo")
        return parseDesign(demoDesignText(), "demo");
    return loadDesign(file);
}

int badInput(std::ostream &err, const std::string &message)
{
    err << "loopsketch: " << message << "\n";
    return kExitBadInput;
}

int reportDiagnostics(std::ostream &err, const Diagnostics &d)
{
    for (const auto &x : d)
        err << "loopsketch: " << x.toString() << "\n";
    return kExitBadInput;
}

int run(const Options &o, std::ostream &out, std::ostream &err)
{
    auto loaded = loadForCli(o.file);
    if (!loaded)
        return reportDiagnostics(err, loaded.diagnostics());
    Design design = std::move(loaded).value();
    if (!o.candidate.empty()) {
        auto withCandidate = applyCandidate(std::move(design), o.candidate, o.file);
        if (!withCandidate)
            return reportDiagnostics(err, withCandidate.diagnostics());
        design = std::move(withCandidate).value();
    }
    if (o.command == "spread") {
        auto worst = worstCase(design, o.spread, o.file);
        if (!worst)
            return reportDiagnostics(err, worst.diagnostics());
        auto mc = monteCarlo(design, o.spread, o.file);
        if (!mc)
            return reportDiagnostics(err, mc.diagnostics());
        const std::string unit = gainUnit(design);
        out << (o.json ? spreadToJson(*worst, *mc, unit) : spreadToText(*worst, *mc, unit));
        return kExitOk;
    }
    if (o.command == "suggest") {
        auto found = suggestValues(design, o.suggest, o.file);
        if (!found)
            return reportDiagnostics(err, found.diagnostics());
        const std::string unit = gainUnit(design);
        out << (o.json ? suggestToJson(*found, unit) : suggestToText(*found, unit));
        return kExitOk;
    }
    auto analysis = analyze(design, o.file);
    if (!analysis)
        return reportDiagnostics(err, analysis.diagnostics());
    if (o.command == "analyze") {
        out << (o.json ? analysisToJson(*analysis) : analysisToText(*analysis));
        return kExitOk;
    }
    if (o.command == "sweep") {
        auto written = writeFileAtomically(o.csvOut, sweepToCsv(*analysis));
        if (!written)
            return reportDiagnostics(err, written.diagnostics());
        return kExitOk;
    }
#ifdef LOOPSKETCH_HAVE_GUI
    if (o.command == "export")
        return runExport(design, *analysis,
                         {o.file, o.pdfOut, o.csvOut, o.svgDir, o.pngDir, o.letter, o.spreadTrials,
                          o.spreadSeed},
                         err);
#endif
    return badInput(err, "unknown command \"" + o.command + "\"");
}

} // namespace

std::optional<int> runCommandLine(const std::vector<std::string> &args, std::ostream &out,
                                  std::ostream &err)
{
    if (args.empty())
        return std::nullopt;
    const std::string &first = args.front();
    if (first == "--help" || first == "-h") {
        out << usage();
        return kExitOk;
    }
    if (first == "--version") {
        out << "loopsketch " << LOOPSKETCH_VERSION << "\n";
        return kExitOk;
    }
    bool known = first == "analyze" || first == "sweep" || first == "spread" || first == "suggest";
#ifdef LOOPSKETCH_HAVE_GUI
    known = known || first == "export";
#endif
    if (!known) {
        if (first.rfind("-", 0) == 0)
            return badInput(err, "unknown option \"" + first + "\"\n" + usage());
        if (args.size() == 1)
            return std::nullopt; // a design file for the GUI
        return badInput(err, "unknown command \"" + first + "\"\n" + usage());
    }
    Options o;
    o.command = first;
    for (std::size_t i = 1; i < args.size(); ++i) {
        const std::string &a = args[i];
        const auto value = [&](const char *flag) -> std::optional<std::string> {
            if (i + 1 >= args.size())
                return std::nullopt;
            (void)flag;
            return args[++i];
        };
        const bool spread = o.command == "spread", suggest = o.command == "suggest";
        if (a == "--json" && (o.command == "analyze" || spread || suggest)) {
            o.json = true;
        } else if (a == "--trials" && spread) {
            auto v = value("--trials");
            const auto n = v ? parseInteger(*v) : std::nullopt;
            if (!n || *n < 1 || *n > kMaxTrials)
                return badInput(
                    err, "--trials needs a whole number from 1 to " + std::to_string(kMaxTrials));
            o.spread.trials = static_cast<int>(*n);
        } else if (a == "--seed" && spread) {
            auto v = value("--seed");
            const auto n = v ? parseInteger(*v) : std::nullopt;
            if (!n || *n < 0)
                return badInput(err, "--seed needs a whole number >= 0");
            o.spread.seed = static_cast<std::uint64_t>(*n);
        } else if (a == "--normal" && spread) {
            o.spread.distribution = SpreadDistribution::Normal;
        } else if ((a == "--gain-spread" || a == "--gbw-spread") && spread) {
            auto v = value(a.c_str());
            const auto pct = v ? parseNumber(*v) : std::nullopt;
            if (!pct || !(*pct > 0 && *pct < 100))
                return badInput(err, a + " needs a percentage between 0 and 100 (excluded)");
            (a == "--gain-spread" ? o.spread.gainSpread : o.spread.gbwSpread) = *pct / 100.0;
        } else if (a == "--parts" && suggest) {
            auto v = value("--parts");
            if (!v || splitList(*v).empty())
                return badInput(err, "--parts needs part ids separated by commas, e.g. RF,CF");
            o.suggest.parts = splitList(*v);
        } else if (a == "--decades" && suggest) {
            auto v = value("--decades");
            const auto d = v ? parseNumber(*v) : std::nullopt;
            if (!d || !(*d > 0 && *d <= 12))
                return badInput(err, "--decades needs a number above 0 and at most 12");
            o.suggest.decades = *d;
        } else if (a == "--best" && suggest) {
            auto v = value("--best");
            const auto n = v ? parseInteger(*v) : std::nullopt;
            if (!n || *n < 1 || *n > 1000)
                return badInput(err, "--best needs a whole number from 1 to 1000");
            o.suggest.best = static_cast<int>(*n);
        } else if (a == "--candidate" && o.command == "analyze") {
            auto v = value("--candidate");
            if (!v)
                return badInput(err, "--candidate needs a candidate name");
            o.candidate = *v;
        } else if ((a == "--pdf" || a == "--svg" || a == "--png") && o.command == "export") {
            auto v = value(a.c_str());
            if (!v)
                return badInput(err,
                                a
                                    + (a == "--pdf" ? " needs an output file name"
                                                    : " needs an output directory"));
            (a == "--pdf" ? o.pdfOut : a == "--svg" ? o.svgDir : o.pngDir) = *v;
        } else if (a == "--letter" && o.command == "export") {
            o.letter = true;
        } else if (a == "--spread-trials" && o.command == "export") {
            auto v = value("--spread-trials");
            const auto n = v ? parseInteger(*v) : std::nullopt;
            if (!n || *n < 0 || *n > kMaxTrials)
                return badInput(err,
                                "--spread-trials needs a whole number from 0 (no spread) to "
                                    + std::to_string(kMaxTrials));
            o.spreadTrials = static_cast<int>(*n);
        } else if (a == "--spread-seed" && o.command == "export") {
            auto v = value("--spread-seed");
            const auto n = v ? parseInteger(*v) : std::nullopt;
            if (!n || *n < 0)
                return badInput(err, "--spread-seed needs a whole number >= 0");
            o.spreadSeed = static_cast<std::uint64_t>(*n);
        } else if (a == "--csv" && (o.command == "sweep" || o.command == "export")) {
            auto v = value("--csv");
            if (!v)
                return badInput(err, "--csv needs an output file name");
            o.csvOut = *v;
        } else if (a.rfind("-", 0) == 0) {
            return badInput(err, "unknown option \"" + a + "\" for " + o.command);
        } else if (o.file.empty()) {
            o.file = a;
        } else {
            return badInput(err, "unexpected argument \"" + a + "\"");
        }
    }
    if (o.file.empty())
        return badInput(err, o.command + " needs a design FILE");
    if (o.command == "sweep" && o.csvOut.empty())
        return badInput(err, "sweep needs --csv OUT");
    if (o.command == "export" && o.pdfOut.empty())
        return badInput(err, "export needs --pdf OUT");
    if (o.command == "suggest" && o.suggest.parts.empty())
        return badInput(err, "suggest needs --parts, e.g. --parts RF,CF");
    try {
        return run(o, out, err);
    } catch (const std::exception &e) {
        err << "loopsketch: internal error: " << e.what() << "\n";
        return kExitInternal;
    }
}

} // namespace loopsketch::app
