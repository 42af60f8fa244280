#include "cli.h"

#include "cliarguments.h"

#include "demodesign.h"
#ifdef LOOPSKETCH_HAVE_GUI
#include "exportcommand.h"
#endif

#include "loopsketch/analysis/analysis.h"
#include "loopsketch/analysis/scan.h"
#include "loopsketch/analysis/spread.h"
#include "loopsketch/analysis/suggest.h"
#include "loopsketch/design/atomicfile.h"
#include "loopsketch/design/candidate.h"
#include "loopsketch/design/designfile.h"
#include "loopsketch/feedback/exactsolution.h"

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

namespace {

using Options = CliOptions;

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
        planned.csv = resolve(o.csvOut, true, o.command == "scan" ? "scan" : "sweep");
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

/// The scan (one target) or map (two) of `design`, every target resolved first and every
/// problem reported.
Result<ScanResult> scanOf(const Design &design, const std::vector<ScanTarget> &targets,
                          std::optional<ESeries> series, const std::string &file)
{
    std::vector<ScanAxis> axes;
    Diagnostics problems;
    for (const ScanTarget &target : targets) {
        auto axis = resolveScanAxis(design, target, series, file);
        if (axis)
            axes.push_back(std::move(axis).value());
        else
            problems.insert(problems.end(), axis.diagnostics().begin(), axis.diagnostics().end());
    }
    if (!problems.empty())
        return problems;
    return runScan(design, axes, {}, file);
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
    if (o.command == "scan") {
        auto scan = scanOf(design, o.scanTargets, o.scanSeries, o.file);
        if (!scan)
            return reportDiagnostics(err, scan.diagnostics(), o.file);
        return emit(*outputs->csv, "scan", scanToCsv(*scan), out, err);
    }
#ifdef LOOPSKETCH_HAVE_GUI
    // The sheet's scans and maps, run before anything is written: a bad target writes nothing.
    std::vector<ScanResult> sheetScans;
    for (const std::vector<ScanTarget> &targets : o.exportScans) {
        auto scan = scanOf(design, targets, std::nullopt, o.file);
        if (!scan)
            return reportDiagnostics(err, scan.diagnostics(), o.file);
        sheetScans.push_back(std::move(scan).value());
    }
#endif
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
                          o.spreadSeed, std::move(sheetScans)},
                         err);
#endif
    return badInput(err, "unknown command \"" + o.command + "\"");
}

} // namespace

std::optional<int> runCommandLine(const std::vector<std::string> &args, std::ostream &out,
                                  std::ostream &err)
{
    const ParsedArguments parsed = parseArguments(args, out, err);
    if (parsed.action == ParsedArguments::Action::Gui)
        return std::nullopt;
    if (parsed.action == ParsedArguments::Action::Exit)
        return parsed.exitCode;
    try {
        return run(parsed.options, out, err);
    } catch (const std::exception &e) {
        err << "loopsketch: internal error: " << e.what() << "\n";
        return kExitInternal;
    }
}

} // namespace loopsketch::app
