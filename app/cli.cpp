#include "cli.h"

#include "demodesign.h"

#include "loopsketch/analysis.h"
#include "loopsketch/designfile.h"

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
};

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

Result<Design> applyCandidate(Design design, const std::string &name, const std::string &file)
{
    for (const auto &c : design.candidates) {
        if (c.name != name)
            continue;
        for (const auto &[id, value] : c.values) {
            Part *p = design.findPart(id);
            if (!p || p->primaryField().empty())
                return Diagnostic{file, id, "candidates",
                                  "candidate \"" + name + "\" changes a part that has no value"};
            p->fields[std::string(p->primaryField())] = value;
        }
        return design;
    }
    return Diagnostic{file, {}, "candidates", "no candidate named \"" + name + "\""};
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
    if (first != "analyze" && first != "sweep") {
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
        if (a == "--json" && o.command == "analyze") {
            o.json = true;
        } else if (a == "--candidate" && o.command == "analyze") {
            auto v = value("--candidate");
            if (!v)
                return badInput(err, "--candidate needs a candidate name");
            o.candidate = *v;
        } else if (a == "--csv" && o.command == "sweep") {
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
    try {
        return run(o, out, err);
    } catch (const std::exception &e) {
        err << "loopsketch: internal error: " << e.what() << "\n";
        return kExitInternal;
    }
}

} // namespace loopsketch::app
