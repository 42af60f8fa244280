// The seeded analysis fuzzer, built with the project's own compiler: design number i of a
// run is generateDesign(RandomSource(seed + i)), analyzed and checked (analysischecks.h) in
// a forked child, so a crash or a hang is recorded and the run goes on. A failing design is
// written to the output directory as seed-<S>.loopsketch (replay it with `loopsketch
// analyze FILE` or with `--seed S --count 1`) beside seed-<S>.txt, the failures.
//
// Usage: analysis_fuzz_driver [--seed S] [--count N] [--seconds T] [--out DIR] [--no-fork]
//                             [--dense] [--print] [--verbose] [--file PATH]...
// --file PATH (repeatable) checks saved designs instead of generated ones.
// --print writes the designs' text to stdout instead of checking them.
// --dense analyzes on the dense LU path (SolverPath::DenseLu) instead of the reduced one.
// Stops after N designs or T seconds, whichever comes first (at least one bound is needed).
// Exit status 0 when every design passed, 1 when any failed, 64 on a usage error.

#include "analysischecks.h"
#include "randomdesign.h"

#include <sys/resource.h>
#include <sys/wait.h>
#include <unistd.h>

#include <algorithm>
#include <chrono>
#include <csignal>
#include <cstdio>
#include <cstdlib>
#include <cstring>
#include <filesystem>
#include <fstream>
#include <iterator>
#include <map>
#include <sstream>
#include <string>
#include <vector>

using namespace loopsketch::fuzz;

namespace {

constexpr int kChildTimeoutS = 60;

struct Options
{
    std::uint64_t seed = 1;
    long count = -1;
    double seconds = -1;
    std::string out = "fuzz-found";
    bool fork = true;
    bool verbose = false;
    bool dense = false;
    bool print = false;
    std::vector<std::string> files;
};

/// The child's report through the pipe: one tagged line per item.
std::string encode(const CheckReport &r)
{
    std::ostringstream o;
    o << "loaded " << r.loaded << "\nanalyzed " << r.analyzed << "\nexempt " << r.exempt
      << "\nlimits " << r.limitWarnings << "\ntopology " << r.hadTopology << "\ntwoport "
      << r.twoPortChecked << "\nworst " << r.worstAgm << ' ' << r.worstBlackman << ' '
      << r.worstTwoPort << '\n';
    for (const auto &f : r.failures)
        o << "failure " << f << '\n';
    for (const auto &w : r.warnings)
        o << "warning " << w << '\n';
    std::string refusal = r.refusal;
    for (char &ch : refusal)
        if (ch == '\n')
            ch = ' ';
    if (!refusal.empty())
        o << "refusal " << refusal << '\n';
    return o.str();
}

CheckReport decode(const std::string &text)
{
    CheckReport r;
    std::istringstream in(text);
    std::string line;
    while (std::getline(in, line)) {
        const auto space = line.find(' ');
        const std::string tag = line.substr(0, space);
        const std::string rest = space == std::string::npos ? "" : line.substr(space + 1);
        if (tag == "loaded")
            r.loaded = rest == "1";
        else if (tag == "analyzed")
            r.analyzed = rest == "1";
        else if (tag == "exempt")
            r.exempt = rest == "1";
        else if (tag == "limits")
            r.limitWarnings = std::atoi(rest.c_str());
        else if (tag == "topology")
            r.hadTopology = rest == "1";
        else if (tag == "twoport")
            r.twoPortChecked = rest == "1";
        else if (tag == "worst")
            std::istringstream(rest) >> r.worstAgm >> r.worstBlackman >> r.worstTwoPort;
        else if (tag == "failure")
            r.failures.push_back(rest);
        else if (tag == "warning")
            r.warnings.push_back(rest);
        else if (tag == "refusal")
            r.refusal = rest;
    }
    return r;
}

/// The largest relative error an exempting design's accuracy warnings state ("may be off by
/// X of ..."), or -1 when none states one (only "poles counted but not located" warnings).
double statedError(const CheckReport &r)
{
    const std::string marker = "may be off by ";
    double worst = -1;
    for (const std::string &w : r.warnings)
        if (const auto at = w.find(marker); at != std::string::npos)
            worst = std::max(worst, std::atof(w.c_str() + at + marker.size()));
    return worst;
}

/// The share of exempted designs by the error their warnings state, one decade a bin.
struct ExemptionHistogram
{
    static constexpr double kEdges[] = {1e-8, 1e-7, 1e-6, 1e-5, 1e-4, 1e-2, 1.0};
    long bins[std::size(kEdges) + 1] = {};
    long unstated = 0;

    void add(const CheckReport &r)
    {
        const double e = statedError(r);
        if (e < 0) {
            ++unstated;
            return;
        }
        std::size_t i = 0;
        while (i < std::size(kEdges) && e >= kEdges[i])
            ++i;
        ++bins[i];
    }

    void print() const
    {
        std::printf("  exempted by stated error:");
        for (std::size_t i = 0; i <= std::size(kEdges); ++i) {
            if (i == 0)
                std::printf(" <%g: %ld", kEdges[0], bins[0]);
            else if (i == std::size(kEdges))
                std::printf(", >=%g: %ld", kEdges[i - 1], bins[i]);
            else
                std::printf(", %g..%g: %ld", kEdges[i - 1], kEdges[i], bins[i]);
        }
        std::printf("; poles-only warnings: %ld\n", unstated);
    }
};

/// Runs the checks in a child process; a signal, a timeout or a lost report is a failure.
CheckReport runForked(const std::string &text, const std::string &file, bool dense)
{
    int fds[2];
    if (pipe(fds) != 0) {
        std::perror("pipe");
        std::exit(1);
    }
    std::fflush(nullptr);
    const pid_t pid = fork();
    if (pid < 0) {
        std::perror("fork");
        std::exit(1);
    }
    if (pid == 0) {
        close(fds[0]);
        alarm(kChildTimeoutS);
        const std::string report = encode(checkDesignText(text, file, dense));
        std::size_t done = 0;
        while (done < report.size()) {
            const ssize_t n = write(fds[1], report.data() + done, report.size() - done);
            if (n <= 0)
                _exit(3);
            done += static_cast<std::size_t>(n);
        }
        _exit(0);
    }
    close(fds[1]);
    std::string received;
    char buf[4096];
    for (ssize_t n; (n = read(fds[0], buf, sizeof buf)) > 0;)
        received.append(buf, static_cast<std::size_t>(n));
    close(fds[0]);
    int status = 0;
    waitpid(pid, &status, 0);
    if (WIFSIGNALED(status)) {
        CheckReport r = decode(received);
        const int sig = WTERMSIG(status);
        r.failures.push_back(sig == SIGALRM
                                 ? "hang: no result within " + std::to_string(kChildTimeoutS) + " s"
                                 : std::string("crash: signal ") + strsignal(sig));
        return r;
    }
    if (!WIFEXITED(status) || WEXITSTATUS(status) != 0) {
        CheckReport r;
        r.failures.push_back("crash: exit status " + std::to_string(WEXITSTATUS(status)));
        return r;
    }
    return decode(received);
}

bool parseArgs(int argc, char **argv, Options &o)
{
    for (int i = 1; i < argc; ++i) {
        const std::string a = argv[i];
        const bool hasValue = i + 1 < argc;
        if (a == "--seed" && hasValue)
            o.seed = std::strtoull(argv[++i], nullptr, 10);
        else if (a == "--count" && hasValue)
            o.count = std::strtol(argv[++i], nullptr, 10);
        else if (a == "--seconds" && hasValue)
            o.seconds = std::strtod(argv[++i], nullptr);
        else if (a == "--out" && hasValue)
            o.out = argv[++i];
        else if (a == "--no-fork")
            o.fork = false;
        else if (a == "--file" && hasValue)
            o.files.push_back(argv[++i]);
        else if (a == "--print")
            o.print = true;
        else if (a == "--dense")
            o.dense = true;
        else if (a == "--verbose")
            o.verbose = true;
        else
            return false;
    }
    return o.count > 0 || o.seconds > 0 || !o.files.empty();
}

/// Checks saved design files (a reproducer, say) and prints every failure.
int checkFiles(const Options &o)
{
    int failed = 0;
    for (const std::string &path : o.files) {
        std::ifstream in(path, std::ios::binary);
        std::stringstream text;
        text << in.rdbuf();
        const CheckReport r = o.fork ? runForked(text.str(), path, o.dense)
                                     : checkDesignText(text.str(), path, o.dense);
        std::printf("%s: %s\n", path.c_str(),
                    !r.failures.empty() ? "FAIL"
                        : r.analyzed    ? (r.exempt ? "ok (exempt by warnings)" : "ok")
                                        : ("refused: " + r.refusal).c_str());
        for (const auto &f : r.failures)
            std::printf("  %s\n", f.c_str());
        for (const auto &w : r.warnings)
            std::printf("  warning: %s\n", w.c_str());
        failed += !r.failures.empty();
    }
    return failed == 0 ? 0 : 1;
}

} // namespace

int main(int argc, char **argv)
{
    Options o;
    if (!parseArgs(argc, argv, o)) {
        std::fprintf(stderr,
                     "usage: %s [--seed S] [--count N] [--seconds T] [--out DIR] "
                     "[--no-fork] [--dense] [--print] [--verbose] [--file PATH]...   (N, T or a "
                     "file required)\n",
                     argv[0]);
        return 64;
    }
    if (!o.files.empty())
        return checkFiles(o);
    const auto start = std::chrono::steady_clock::now();
    const auto elapsed = [&] {
        return std::chrono::duration<double>(std::chrono::steady_clock::now() - start).count();
    };
    long executions = 0, failed = 0, exempt = 0, refused = 0, topology = 0, twoPort = 0;
    long withLimitWarnings = 0;
    double worstAgm = 0, worstBlackman = 0, worstTwoPort = 0;
    std::map<std::string, long> kinds;
    std::map<std::string, long> shapes;
    ExemptionHistogram histogram;
    for (std::uint64_t seed = o.seed;; ++seed) {
        if (o.count > 0 && executions >= o.count)
            break;
        if (o.seconds > 0 && elapsed() >= o.seconds)
            break;
        RandomSource random(seed);
        const GeneratedDesign g = generateDesign(random);
        const std::string name = "seed-" + std::to_string(seed) + ".loopsketch";
        if (o.print) {
            std::fputs(g.text.c_str(), stdout);
            ++executions;
            continue;
        }
        const CheckReport r
            = o.fork ? runForked(g.text, name, o.dense) : checkDesignText(g.text, name, o.dense);
        ++executions;
        ++shapes[shapeName(g.shape)];
        exempt += r.exempt;
        if (r.exempt)
            histogram.add(r);
        withLimitWarnings += r.limitWarnings > 0;
        refused += r.loaded && !r.analyzed && r.failures.empty();
        topology += r.hadTopology;
        twoPort += r.twoPortChecked;
        worstAgm = std::max(worstAgm, r.worstAgm);
        worstBlackman = std::max(worstBlackman, r.worstBlackman);
        worstTwoPort = std::max(worstTwoPort, r.worstTwoPort);
        if (o.verbose)
            std::printf("seed %llu: %s, %d parts, %d poles/zeros: %s%s%s\n",
                        static_cast<unsigned long long>(seed), shapeName(g.shape), g.parts, g.poles,
                        !r.failures.empty() ? "FAIL"
                            : r.analyzed    ? (r.exempt ? "ok (exempt)" : "ok")
                                            : "refused: ",
                        r.failures.empty() && !r.analyzed ? r.refusal.c_str() : "",
                        r.hadTopology ? " [topology]" : "");
        if (o.verbose)
            for (const auto &w : r.warnings)
                std::printf("  warning %s\n", w.c_str());
        if (r.failures.empty())
            continue;
        ++failed;
        std::filesystem::create_directories(o.out);
        const std::filesystem::path base = std::filesystem::path(o.out) / name;
        std::ofstream(base) << g.text;
        std::ofstream log(std::filesystem::path(base).replace_extension(".txt"));
        log << "seed " << seed << " (" << shapeName(g.shape) << ", " << g.parts << " parts, "
            << g.poles << " poles and zeros)\n";
        for (const auto &f : r.failures) {
            log << f << '\n';
            ++kinds[f.substr(0, f.find(':'))];
        }
        for (const auto &w : r.warnings)
            log << "warning: " << w << '\n';
        std::printf("FAIL seed %llu (%s, %d parts, %d poles/zeros): %s -> %s\n",
                    static_cast<unsigned long long>(seed), shapeName(g.shape), g.parts, g.poles,
                    r.failures.front().c_str(), base.c_str());
        std::fflush(stdout);
    }
    if (o.print)
        return 0;
    const double t = elapsed();
    const long analyzed = executions - refused - (kinds.count("crash") ? kinds["crash"] : 0);
    std::printf("analysis fuzz: seeds %llu..%llu, %ld executions in %.1f s (%.0f/s)\n",
                static_cast<unsigned long long>(o.seed),
                static_cast<unsigned long long>(o.seed + static_cast<std::uint64_t>(executions))
                    - 1,
                executions, t, static_cast<double>(executions) / (t > 0 ? t : 1));
    std::printf("  shapes:");
    for (const auto &[s, n] : shapes)
        std::printf(" %s %ld", s.c_str(), n);
    std::printf("\n  refused with a diagnostic: %ld; with a topology: %ld; two-port checked at "
                "large T: %ld\n",
                refused, topology, twoPort);
    std::printf("  exempted from the identity checks by accuracy warnings: %ld of %ld analyzed "
                "(%.2f %%)\n",
                exempt, analyzed,
                analyzed > 0 ? 100.0 * static_cast<double>(exempt) / static_cast<double>(analyzed)
                             : 0.0);
    histogram.print();
    std::printf("  designs with part-limit warnings (exempting nothing): %ld\n", withLimitWarnings);
    std::printf("  worst error/allowed: asymptotic gain %.3g, Blackman %.3g, two-port %.3g\n",
                worstAgm, worstBlackman, worstTwoPort);
    std::printf("  failed: %ld", failed);
    for (const auto &[k, n] : kinds)
        std::printf("; %s %ld", k.c_str(), n);
    std::printf("\n");
    return failed == 0 ? 0 : 1;
}
