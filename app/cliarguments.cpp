#include "cliarguments.h"

#include "cli.h"

#include <charconv>
#include <cmath>
#include <exception>
#include <optional>
#include <ostream>

namespace loopsketch::app {

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

ParsedArguments exitWith(int code)
{
    return {ParsedArguments::Action::Exit, code, {}};
}

ParsedArguments refuse(std::ostream &err, const std::string &message)
{
    err << "loopsketch: " << message << "\n";
    return exitWith(kExitBadInput);
}

} // namespace

ParsedArguments parseArguments(const std::vector<std::string> &args, std::ostream &out,
                               std::ostream &err)
{
    if (args.empty())
        return {ParsedArguments::Action::Gui, kExitOk, {}};
    const std::string &first = args.front();
    if (first == "--help" || first == "-h") {
        out << usage();
        return exitWith(kExitOk);
    }
    if (first == "--version") {
        out << "loopsketch " << LOOPSKETCH_VERSION << "\n";
        return exitWith(kExitOk);
    }
    bool known = first == "analyze" || first == "sweep" || first == "spread" || first == "suggest";
#ifdef LOOPSKETCH_HAVE_GUI
    known = known || first == "export";
#endif
    if (!known) {
        if (first.rfind("-", 0) == 0)
            return refuse(err, "unknown option \"" + first + "\"\n" + usage());
        if (args.size() == 1)
            return {ParsedArguments::Action::Gui, kExitOk, {}}; // a design file for the GUI
        return refuse(err, "unknown command \"" + first + "\"\n" + usage());
    }
    CliOptions o;
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
                return refuse(
                    err, "--trials needs a whole number from 1 to " + std::to_string(kMaxTrials));
            o.spread.trials = static_cast<int>(*n);
        } else if (a == "--seed" && spread) {
            auto v = value("--seed");
            const auto n = v ? parseInteger(*v) : std::nullopt;
            if (!n || *n < 0)
                return refuse(err, "--seed needs a whole number >= 0");
            o.spread.seed = static_cast<std::uint64_t>(*n);
        } else if (a == "--normal" && spread) {
            o.spread.distribution = SpreadDistribution::Normal;
        } else if ((a == "--gain-spread" || a == "--gbw-spread") && spread) {
            auto v = value(a.c_str());
            const auto pct = v ? parseNumber(*v) : std::nullopt;
            if (!pct || !(*pct > 0 && *pct < 100))
                return refuse(err, a + " needs a percentage between 0 and 100 (excluded)");
            (a == "--gain-spread" ? o.spread.gainSpread : o.spread.gbwSpread) = *pct / 100.0;
        } else if (a == "--parts" && suggest) {
            auto v = value("--parts");
            if (!v || splitList(*v).empty())
                return refuse(err, "--parts needs part ids separated by commas, e.g. RF,CF");
            o.suggest.parts = splitList(*v);
        } else if (a == "--decades" && suggest) {
            auto v = value("--decades");
            const auto d = v ? parseNumber(*v) : std::nullopt;
            if (!d || !(*d > 0 && *d <= 12))
                return refuse(err, "--decades needs a number above 0 and at most 12");
            o.suggest.decades = *d;
        } else if (a == "--best" && suggest) {
            auto v = value("--best");
            const auto n = v ? parseInteger(*v) : std::nullopt;
            if (!n || *n < 1 || *n > 1000)
                return refuse(err, "--best needs a whole number from 1 to 1000");
            o.suggest.best = static_cast<int>(*n);
        } else if (a == "--out" && (o.command == "analyze" || spread || suggest)) {
            auto v = value("--out");
            if (!v || v->empty())
                return refuse(err, "--out needs an output file name (\"-\": standard output)");
            o.textOut = *v;
        } else if (a == "--candidate" && o.command == "analyze") {
            auto v = value("--candidate");
            if (!v)
                return refuse(err, "--candidate needs a candidate name");
            o.candidate = *v;
        } else if ((a == "--pdf" || a == "--svg" || a == "--png") && o.command == "export") {
            auto v = value(a.c_str());
            if (!v)
                return refuse(err,
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
                return refuse(err,
                              "--spread-trials needs a whole number from 0 (no spread) to "
                                  + std::to_string(kMaxTrials));
            o.spreadTrials = static_cast<int>(*n);
        } else if (a == "--spread-seed" && o.command == "export") {
            auto v = value("--spread-seed");
            const auto n = v ? parseInteger(*v) : std::nullopt;
            if (!n || *n < 0)
                return refuse(err, "--spread-seed needs a whole number >= 0");
            o.spreadSeed = static_cast<std::uint64_t>(*n);
        } else if (a == "--csv" && (o.command == "sweep" || o.command == "export")) {
            auto v = value("--csv");
            if (!v)
                return refuse(err, "--csv needs an output file name");
            o.csvOut = *v;
        } else if (a.rfind("-", 0) == 0) {
            return refuse(err, "unknown option \"" + a + "\" for " + o.command);
        } else if (o.file.empty()) {
            o.file = a;
        } else {
            return refuse(err, "unexpected argument \"" + a + "\"");
        }
    }
    if (o.file.empty())
        return refuse(err, o.command + " needs a design FILE");
    if (o.command == "sweep" && o.csvOut.empty())
        return refuse(err, "sweep needs --csv OUT");
    if (o.command == "export" && o.pdfOut.empty())
        return refuse(err, "export needs --pdf OUT");
    if (o.command == "suggest" && o.suggest.parts.empty())
        return refuse(err, "suggest needs --parts, e.g. --parts RF,CF");
    return {ParsedArguments::Action::Run, kExitOk, std::move(o)};
}

} // namespace loopsketch::app
