#include "cliarguments.h"

#include "cli.h"

#include <CLI/CLI.hpp>

#include <algorithm>
#include <charconv>
#include <cmath>
#include <cstdint>
#include <exception>
#include <functional>
#include <limits>
#include <memory>
#include <optional>
#include <ostream>

namespace loopsketch::app {

namespace {

// ----- values ---------------------------------------------------------------------------------

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

// ----- checks: each returns "" or what the value needs (CLI11 puts the option's name before it)

CLI::Validator wholeNumber(long long lowest, long long highest, const std::string &needs)
{
    return CLI::Validator(
        [=](std::string &text) -> std::string {
            const auto n = parseInteger(text);
            return n && *n >= lowest && *n <= highest ? std::string()
                                                      : needs + ", not \"" + text + "\"";
        },
        "");
}

CLI::Validator number(const std::function<bool(double)> &inRange, const std::string &needs)
{
    return CLI::Validator(
        [=](std::string &text) -> std::string {
            const auto v = parseNumber(text);
            return v && inRange(*v) ? std::string() : needs + ", not \"" + text + "\"";
        },
        "");
}

CLI::Validator nonEmpty(const std::string &needs)
{
    return CLI::Validator([=](std::string &text) { return text.empty() ? needs : std::string(); },
                          "");
}

CLI::Validator partList()
{
    return CLI::Validator(
        [](std::string &text) {
            return splitList(text).empty()
                ? std::string("needs part ids separated by commas, e.g. RF,CF")
                : std::string();
        },
        "");
}

const char *const kWholeNumberAtLeastZero = "needs a whole number >= 0";
constexpr long long kLargestSeed = std::numeric_limits<long long>::max();

/// Adds an option taking a whole number from `lowest` to `highest` into `target`; the value is
/// read by the same rule that checked it (CLI11's own conversion would read "010" as octal).
template<typename T>
CLI::Option *addWholeNumber(CLI::App &command, const std::string &name, T &target, long long lowest,
                            long long highest, const std::string &needs,
                            const std::string &description)
{
    return command
        .add_option_function<std::string>(
            name,
            [&target](const std::string &text) { target = static_cast<T>(*parseInteger(text)); },
            description)
        ->check(wholeNumber(lowest, highest, needs));
}

/// Adds a Monte Carlo run's --trials N (1 to kMaxTrials) and --seed S (>= 0).
template<typename Trials, typename Seed>
void addTrialsAndSeed(CLI::App &command, Trials &trials, const std::string &trialsHelp, Seed &seed,
                      const std::string &seedHelp)
{
    addWholeNumber(command, "--trials", trials, 1, kMaxTrials,
                   "needs a whole number from 1 to " + std::to_string(kMaxTrials), trialsHelp)
        ->type_name("N");
    addWholeNumber(command, "--seed", seed, 0, kLargestSeed, kWholeNumberAtLeastZero, seedHelp)
        ->type_name("S");
}

/// Adds an option taking a finite number that `inRange` accepts, stored through `store`.
CLI::Option *addNumber(CLI::App &command, const std::string &name,
                       const std::function<void(double)> &store,
                       const std::function<bool(double)> &inRange, const std::string &needs,
                       const std::string &description)
{
    return command
        .add_option_function<std::string>(
            name, [store](const std::string &text) { store(*parseNumber(text)); }, description)
        ->check(number(inRange, needs));
}

// ----- the one definition -------------------------------------------------------------------

/// Adds the design FILE every command reads.
void addDesignFile(CLI::App &command, CliOptions &o)
{
    command.add_option("FILE", o.file, "the design file, or \"demo\" for the embedded demo")
        ->required()
        ->type_name("")
        ->check(nonEmpty("needs a design file name"));
}

/// Adds --out: the printed text or JSON to a file.
void addTextOut(CLI::App &command, CliOptions &o)
{
    command
        .add_option("--out", o.textOut, "write the text or JSON to OUT (\"-\": standard output)")
        ->type_name("OUT")
        ->check(nonEmpty("needs an output file name (\"-\": standard output)"));
}

void addAnalyze(CLI::App &app, CliOptions &o)
{
    CLI::App *c = app.add_subcommand("analyze", "analyse a design and print the results");
    addDesignFile(*c, o);
    c->add_flag("--json", o.json, "print schema loopsketch.analysis/1 instead of text");
    c->add_option("--candidate", o.candidate, "apply the named candidate's values first")
        ->type_name("NAME")
        ->check(nonEmpty("needs a candidate name"));
    addTextOut(*c, o);
}

void addSweep(CLI::App &app, CliOptions &o)
{
    CLI::App *c = app.add_subcommand("sweep", "write the frequency sweep as CSV");
    addDesignFile(*c, o);
    c->add_option("--csv", o.csvOut, "the CSV file, one row per frequency (\"-\": standard output)")
        ->type_name("OUT")
        ->required()
        ->check(nonEmpty("needs an output file name"));
}

void addSpread(CLI::App &app, CliOptions &o)
{
    CLI::App *c = app.add_subcommand("spread", "worst case and Monte Carlo over the tolerances");
    addDesignFile(*c, o);
    addTrialsAndSeed(*c, o.spread.trials, "Monte Carlo trials (default 1000)", o.spread.seed,
                     "random seed (default 1)");
    c->add_flag_function(
        "--normal", [&o](std::int64_t) { o.spread.distribution = SpreadDistribution::Normal; },
        "normal instead of uniform over each tolerance");
    const auto percentage = [c](const std::string &name, std::optional<double> &fraction,
                                const std::string &description) {
        addNumber(
            *c, name, [&fraction](double pct) { fraction = pct / 100.0; },
            [](double pct) { return pct > 0 && pct < 100; },
            "needs a percentage between 0 and 100 (excluded)", description)
            ->type_name("PCT");
    };
    percentage("--gain-spread", o.spread.gainSpread, "spread of the gain block's gain, %");
    percentage("--gbw-spread", o.spread.gbwSpread, "spread of the gain block's gbw, %");
    c->add_flag("--json", o.json, "print JSON instead of text");
    addTextOut(*c, o);
}

void addSuggest(CLI::App &app, CliOptions &o)
{
    CLI::App *c = app.add_subcommand("suggest", "E-series values that best meet the specs");
    addDesignFile(*c, o);
    c->add_option_function<std::string>(
         "--parts", [&o](const std::string &text) { o.suggest.parts = splitList(text); },
         "the parts whose values are searched")
        ->type_name("RF,CF")
        ->required()
        ->check(partList());
    addNumber(
        *c, "--decades", [&o](double d) { o.suggest.decades = d; },
        [](double d) { return d > 0 && d <= 12; }, "needs a number above 0 and at most 12",
        "width of each part's search, decades (default 2)")
        ->type_name("D");
    addWholeNumber(*c, "--best", o.suggest.best, 1, 1000, "needs a whole number from 1 to 1000",
                   "suggestions listed (default 5)")
        ->type_name("N");
    addTrialsAndSeed(*c, o.suggest.yieldTrials,
                     "Monte Carlo trials of each row's yield (default 200)", o.suggest.seed,
                     "random seed of the yield (default 1)");
    c->add_flag("--json", o.json, "print JSON instead of text");
    addTextOut(*c, o);
}

#ifdef LOOPSKETCH_HAVE_GUI
void addExport(CLI::App &app, CliOptions &o)
{
    CLI::App *c = app.add_subcommand(
        "export",
        "write the review sheet (PDF), the sweep (CSV) and one SVG or PNG per plot; the sheet's "
        "spread section runs N Monte Carlo trials (default 2000, 0: none) with seed S (default "
        "1)");
    addDesignFile(*c, o);
    c->add_option("--pdf", o.pdfOut, "the review sheet")
        ->type_name("OUT")
        ->required()
        ->check(nonEmpty("needs an output file name"));
    c->add_flag("--letter", o.letter, "US Letter instead of A4");
    c->add_option("--csv", o.csvOut, "the sweep as CSV (\"-\": standard output)")
        ->type_name("OUT")
        ->check(nonEmpty("needs an output file name"));
    c->add_option("--svg", o.svgDir, "one SVG per plot into DIR")
        ->type_name("DIR")
        ->check(nonEmpty("needs an output directory"));
    c->add_option("--png", o.pngDir, "one PNG per plot into DIR")
        ->type_name("DIR")
        ->check(nonEmpty("needs an output directory"));
    addWholeNumber(*c, "--spread-trials", o.spreadTrials, 0, kMaxTrials,
                   "needs a whole number from 0 (no spread) to " + std::to_string(kMaxTrials),
                   "Monte Carlo trials on the sheet")
        ->type_name("N");
    addWholeNumber(*c, "--spread-seed", o.spreadSeed, 0, kLargestSeed, kWholeNumberAtLeastZero,
                   "seed of the sheet's Monte Carlo run")
        ->type_name("S");
}
#endif

// ----- --help: the synopsis of every command, generated from the definition --------------------

constexpr std::size_t kDescriptionColumn = 43;
constexpr std::size_t kWidth = 92;
constexpr std::size_t kContinuationIndent = 20;

/// `words` filled into lines of at most kWidth columns, the first starting at `first` columns
/// (its indentation included by the caller), the rest indented by `indent`.
std::vector<std::string> fill(const std::vector<std::string> &words, std::size_t first,
                              std::size_t indent)
{
    std::vector<std::string> lines(1);
    std::size_t used = first;
    for (const auto &w : words) {
        if (!lines.back().empty() && used + 1 + w.size() > kWidth) {
            lines.emplace_back();
            used = indent;
        }
        if (!lines.back().empty()) {
            lines.back() += ' ';
            ++used;
        }
        lines.back() += w;
        used += w.size();
    }
    return lines;
}

std::vector<std::string> wordsOf(const std::string &text)
{
    std::vector<std::string> words;
    std::size_t start = 0;
    while ((start = text.find_first_not_of(' ', start)) != std::string::npos) {
        const std::size_t end = text.find(' ', start);
        words.push_back(text.substr(start, end - start));
        start = end;
    }
    return words;
}

/// How an option stands in a synopsis: "FILE", "--csv OUT", "[--json]", "[--out OUT]".
std::string synopsisItem(const CLI::Option &option)
{
    std::string item = option.get_positional() ? option.get_name() : option.get_name(false, false);
    if (!option.get_positional() && !option.get_type_name().empty())
        item += " " + option.get_type_name();
    return option.get_required() ? item : "[" + item + "]";
}

/// One usage entry: the synopsis, wrapped, and the description beside or below it.
void writeEntry(std::string &text, const std::vector<std::string> &synopsis,
                const std::string &description)
{
    std::vector<std::string> lines = fill(synopsis, 2, kContinuationIndent);
    for (std::size_t i = 1; i < lines.size(); ++i)
        lines[i] = std::string(kContinuationIndent - 2, ' ') + lines[i];
    std::vector<std::string> said
        = fill(wordsOf(description), kDescriptionColumn, kDescriptionColumn);
    std::size_t next = 0;
    if (lines.back().size() + 2 + 2 <= kDescriptionColumn) {
        lines.back().resize(kDescriptionColumn - 2, ' ');
        lines.back() += said[next++];
    }
    for (; next < said.size(); ++next)
        lines.push_back(std::string(kDescriptionColumn - 2, ' ') + said[next]);
    for (const auto &line : lines)
        text += "  " + line + "\n";
}

std::string synopsisHelp(const CLI::App &app)
{
    std::string text = "Usage:\n";
    std::vector<std::string> gui = {"loopsketch"};
    for (const CLI::Option *opt : app.get_options())
        if (opt->get_positional())
            gui.push_back(synopsisItem(*opt));
    writeEntry(text, gui, "open the GUI (the demo design when no FILE)");
    for (const CLI::App *command : app.get_subcommands({})) {
        std::vector<std::string> synopsis = {"loopsketch", command->get_name()};
        for (const CLI::Option *opt : command->get_options())
            if (opt != command->get_help_ptr())
                synopsis.push_back(synopsisItem(*opt));
        writeEntry(text, synopsis, command->get_description());
    }
    text += "  loopsketch --help | --version\n\n";
    text += "\"loopsketch COMMAND --help\" describes each option of a command.\n";
    text += app.get_footer();
    return text;
}

/// The top level's help is the synopsis of every command; a command's own help is CLI11's.
class UsageFormatter : public CLI::Formatter
{
public:
    std::string make_help(const CLI::App *app, std::string name,
                          CLI::AppFormatMode mode) const override
    {
        if (app->get_parent() == nullptr)
            return synopsisHelp(*app);
        return CLI::Formatter::make_help(app, std::move(name), mode);
    }
};

/// The command line, its options bound to `o` and `guiFile`.
std::unique_ptr<CLI::App> makeCommandLine(CliOptions &o, std::string &guiFile)
{
    auto app = std::make_unique<CLI::App>("", "loopsketch");
    app->formatter(std::make_shared<UsageFormatter>());
    app->set_version_flag("--version", std::string("loopsketch ") + LOOPSKETCH_VERSION);
    app->add_option("FILE", guiFile, "the design to open in the GUI");
    app->require_subcommand(0, 1);
    // an option given twice keeps the last value, as it always has
    app->option_defaults()->multi_option_policy(CLI::MultiOptionPolicy::TakeLast);
    app->footer("FILE may be \"demo\" for the embedded demo design. --out writes the text or JSON\n"
                "to OUT instead of standard output; OUT \"-\" for --csv or --out is standard "
                "output.\n"
                "An output that is the design file or another output of the command is refused.\n"
                "Exit codes: 0 ok, 2 bad input (the message names file, part and field),\n"
                "1 internal error.\n");
    addAnalyze(*app, o);
    addSweep(*app, o);
    addSpread(*app, o);
    addSuggest(*app, o);
#ifdef LOOPSKETCH_HAVE_GUI
    addExport(*app, o);
#endif
    return app;
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

/// The arguments no option or command took, each named: "unknown option "--x"" or "unexpected
/// argument "y"", in the order given.
std::string leftOvers(const std::vector<std::string> &args, std::vector<std::string> unused)
{
    std::string said;
    for (const auto &a : args) {
        const auto at = std::find(unused.begin(), unused.end(), a);
        if (at == unused.end())
            continue;
        unused.erase(at);
        said += (said.empty() ? "" : "; ")
            + std::string(a.rfind('-', 0) == 0 ? "unknown option \"" : "unexpected argument \"") + a
            + "\"";
    }
    return said;
}

std::string commandNames(const CLI::App &app)
{
    std::string names;
    for (const CLI::App *command : app.get_subcommands({}))
        names += (names.empty() ? "" : ", ") + command->get_name();
    return names;
}

} // namespace

std::string usage()
{
    CliOptions unused;
    std::string guiFile;
    return makeCommandLine(unused, guiFile)->help();
}

ParsedArguments parseArguments(const std::vector<std::string> &args, std::ostream &out,
                               std::ostream &err)
{
    CliOptions o;
    std::string guiFile;
    const auto app = makeCommandLine(o, guiFile);
    std::vector<std::string> reversed(args.rbegin(), args.rend()); // CLI11 pops from the back
    try {
        app->parse(reversed);
    } catch (const CLI::CallForHelp &) {
        out << app->help();
        return exitWith(kExitOk);
    } catch (const CLI::CallForAllHelp &) {
        out << app->help();
        return exitWith(kExitOk);
    } catch (const CLI::CallForVersion &version) {
        out << version.what() << "\n";
        return exitWith(kExitOk);
    } catch (const CLI::ParseError &e) {
        // CLI11's own exit codes are 100 and above: every refusal of the arguments is bad
        // input, exit 2, with the message naming the option or value.
        const auto chosen = app->get_subcommands();
        if (chosen.empty() && !guiFile.empty() && dynamic_cast<const CLI::ExtrasError *>(&e))
            return refuse(err,
                          "unknown command \"" + guiFile + "\" (the commands: " + commandNames(*app)
                              + "; see loopsketch --help)");
        const std::string where = chosen.empty() ? "" : chosen.front()->get_name() + ": ";
        // an argument nothing took is the first thing to fix, even where a required one is
        // also missing (`sweep demo --json`)
        if (const std::string extra = leftOvers(args, app->remaining(true)); !extra.empty())
            return refuse(err, where + extra);
        return refuse(err, where + e.what());
    }
    const auto chosen = app->get_subcommands();
    if (chosen.empty())
        return {ParsedArguments::Action::Gui, kExitOk, {}};
    if (!guiFile.empty())
        return refuse(
            err, "unexpected argument \"" + guiFile + "\" before " + chosen.front()->get_name());
    o.command = chosen.front()->get_name();
    return {ParsedArguments::Action::Run, kExitOk, std::move(o)};
}

} // namespace loopsketch::app
