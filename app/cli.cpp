#include "cli.h"

#include "demodesign.h"
#ifdef LOOPSKETCH_HAVE_GUI
#include "exportcommand.h"
#endif

#include "loopsketch/analysis.h"
#include "loopsketch/atomicfile.h"
#include "loopsketch/candidate.h"
#include "loopsketch/designfile.h"
#include "loopsketch/exactsolution.h"
#include "loopsketch/spread.h"
#include "loopsketch/suggest.h"

#include <cerrno>
#include <charconv>
#include <cmath>
#include <cstdint>
#include <cstring>
#include <exception>
#include <ostream>

#include <unistd.h>

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
           "  loopsketch analyze FILE [--json] [--candidate NAME] [--out OUT]\n"
           "                                           analyse a design and print the results\n"
           "  loopsketch sweep FILE --csv OUT          write the frequency sweep as CSV\n"
           "  loopsketch spread FILE --trials N --seed S [--normal] [--gain-spread PCT]\n"
           "                    [--gbw-spread PCT] [--json] [--out OUT]\n"
           "                                           worst case and Monte Carlo over the "
           "tolerances\n"
           "  loopsketch suggest FILE --parts RF,CF [--decades D] [--best N] [--json]\n"
           "                    [--out OUT]\n"
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
           "FILE may be \"demo\" for the embedded demo design. --out writes the text or JSON\n"
           "to OUT instead of standard output; OUT \"-\" for --csv or --out is standard output.\n"
           "An output that is the design file or another output of the command is refused.\n"
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
    std::string textOut = "-"; ///< --out: the printed text or JSON; "-" is standard output
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

/// Prints the diagnostics; one that names no file gets `file`, so every message says which
/// design it is about.
int reportDiagnostics(std::ostream &err, const Diagnostics &d, const std::string &file = {})
{
    for (Diagnostic x : d) {
        if (x.file.empty())
            x.file = file;
        err << "loopsketch: " << x.toString() << "\n";
    }
    return kExitBadInput;
}

/// `diagnostics` with "cannot write the <what>: " before each message, so a message says which
/// output failed as well as where and why.
Diagnostics forOutput(Diagnostics diagnostics, const std::string &what)
{
    for (auto &d : diagnostics)
        d.message = "cannot write the " + what + ": " + d.message;
    return diagnostics;
}

/// What the text output of a command holds, for messages.
std::string textOutputName(const std::string &command)
{
    return command == "analyze" ? "analysis"
        : command == "spread"   ? "spread results"
                                : "suggestions";
}

/// Every output of one command, resolved and checked against the input and each other before
/// any work is done.
struct Outputs
{
    std::optional<OutputTarget> text; ///< analyze, spread, suggest: the printed text or JSON
    std::optional<OutputTarget> csv; ///< sweep, export --csv
};

Result<Outputs> planOutputs(const Options &o)
{
    Outputs planned;
    std::vector<OutputTarget> all;
    Diagnostics problems;
    const auto resolve
        = [&](const std::string &path, bool allowStandardOutput, const std::string &what) {
              auto target = resolveOutput(path, allowStandardOutput);
              if (!target) {
                  const Diagnostics named = forOutput(target.diagnostics(), what);
                  problems.insert(problems.end(), named.begin(), named.end());
                  return std::optional<OutputTarget>();
              }
              all.push_back(*target);
              return std::optional<OutputTarget>(*target);
          };
    if (o.command == "analyze" || o.command == "spread" || o.command == "suggest")
        planned.text = resolve(o.textOut, true, textOutputName(o.command));
    if (!o.csvOut.empty())
        planned.csv = resolve(o.csvOut, true, "sweep");
#ifdef LOOPSKETCH_HAVE_GUI
    if (o.command == "export") {
        resolve(o.pdfOut, false, "review sheet");
        for (const auto &[dir, svg] : {std::pair{o.svgDir, true}, std::pair{o.pngDir, false}}) {
            if (dir.empty())
                continue;
            auto files = plotOutputPaths(dir, svg);
            if (!files) {
                problems.insert(problems.end(), files.diagnostics().begin(),
                                files.diagnostics().end());
                continue;
            }
            for (const auto &file : *files)
                resolve(file, false, "plot");
            // a folder still to be made must not be another output's file either
            if (files->empty())
                if (auto folder = resolveOutput(dir); folder)
                    all.push_back(*folder);
        }
    }
#endif
    if (!problems.empty())
        return problems;
    std::vector<std::string> inputs;
    if (o.file != "demo")
        inputs.push_back(o.file);
    if (auto apart = checkOutputsApart(inputs, all); !apart)
        return apart.diagnostics();
    return planned;
}

/// Writes a command's text, CSV or JSON to its target: standard output through `out` (checked,
/// so a full disk behind a redirection is an error too), a file through the atomic writer.
int emit(const OutputTarget &target, const std::string &what, const std::string &text,
         std::ostream &out, std::ostream &err)
{
    if (target.kind == OutputTargetKind::Descriptor && target.descriptor == STDOUT_FILENO) {
        errno = 0;
        out << text;
        out.flush();
        if (!out) {
            const int error = errno;
            return badInput(err,
                            "standard output: cannot write the " + what + ": write failed"
                                + (error ? std::string(": ") + std::strerror(error) : ""));
        }
        return kExitOk;
    }
    auto written = writeOutput(target, text);
    if (!written)
        return reportDiagnostics(err, forOutput(written.diagnostics(), what));
    return kExitOk;
}

int run(const Options &o, std::ostream &out, std::ostream &err)
{
    auto outputs = planOutputs(o);
    if (!outputs)
        return reportDiagnostics(err, outputs.diagnostics());
    auto loaded = loadForCli(o.file);
    if (!loaded)
        return reportDiagnostics(err, loaded.diagnostics(), o.file);
    Design design = std::move(loaded).value();
    if (!o.candidate.empty()) {
        auto withCandidate = applyCandidate(std::move(design), o.candidate, o.file);
        if (!withCandidate)
            return reportDiagnostics(err, withCandidate.diagnostics(), o.file);
        design = std::move(withCandidate).value();
    }
    if (o.command == "spread") {
        auto worst = worstCase(design, o.spread, o.file);
        if (!worst)
            return reportDiagnostics(err, worst.diagnostics(), o.file);
        auto mc = monteCarlo(design, o.spread, o.file);
        if (!mc)
            return reportDiagnostics(err, mc.diagnostics(), o.file);
        const std::string unit = gainUnit(design);
        return emit(*outputs->text, textOutputName(o.command),
                    o.json ? spreadToJson(*worst, *mc, unit) : spreadToText(*worst, *mc, unit), out,
                    err);
    }
    if (o.command == "suggest") {
        auto found = suggestValues(design, o.suggest, o.file);
        if (!found)
            return reportDiagnostics(err, found.diagnostics(), o.file);
        const std::string unit = gainUnit(design);
        return emit(*outputs->text, textOutputName(o.command),
                    o.json ? suggestToJson(*found, unit) : suggestToText(*found, unit), out, err);
    }
    auto analysis = analyze(design, o.file);
    if (!analysis)
        return reportDiagnostics(err, analysis.diagnostics(), o.file);
    if (o.command == "analyze")
        return emit(*outputs->text, textOutputName(o.command),
                    o.json ? analysisToJson(*analysis) : analysisToText(*analysis, &design), out,
                    err);
    if (o.command == "sweep")
        return emit(*outputs->csv, "sweep", sweepToCsv(*analysis), out, err);
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
        } else if (a == "--out" && (o.command == "analyze" || spread || suggest)) {
            auto v = value("--out");
            if (!v || v->empty())
                return badInput(err, "--out needs an output file name (\"-\": standard output)");
            o.textOut = *v;
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
