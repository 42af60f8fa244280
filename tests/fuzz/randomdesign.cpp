#include "randomdesign.h"

#include <algorithm>
#include <cmath>
#include <cstdio>
#include <map>
#include <numeric>
#include <string>
#include <vector>

namespace loopsketch::fuzz {

namespace {

std::uint64_t splitmix(std::uint64_t &state)
{
    std::uint64_t z = (state += 0x9e3779b97f4a7c15ULL);
    z = (z ^ (z >> 30)) * 0xbf58476d1ce4e5b9ULL;
    z = (z ^ (z >> 27)) * 0x94d049bb133111ebULL;
    return z ^ (z >> 31);
}

std::string number(double v)
{
    char buf[40];
    std::snprintf(buf, sizeof buf, "%.17g", v);
    return buf;
}

std::string quoted(const std::string &s)
{
    return "\"" + s + "\"";
}

struct GenPart
{
    std::string id;
    std::string type;
    std::vector<std::pair<std::string, std::string>> nodes; // terminal, node
    std::vector<std::pair<std::string, std::string>> fields; // key, JSON value text
};

/// Value ranges of the fuzz brief (ohm, farad) and a wide inductor range of our own.
constexpr double kRMin = 1e-3, kRMax = 1e12;
constexpr double kCMin = 1e-15, kCMax = 1e-3;
constexpr double kLMin = 1e-9, kLMax = 1e3;

class Builder
{
public:
    explicit Builder(RandomSource &r) : m_r(r) { }

    std::string newNode(const std::string &stem) { return stem + std::to_string(++m_nodeCount); }

    /// A resistor, capacitor or inductor between a and b (a != b).
    void passive(const std::string &a, const std::string &b)
    {
        const double pick = m_r.unit();
        GenPart p;
        if (pick < 0.5) {
            p = {"R" + std::to_string(++m_r_count), "resistor", {}, {}};
            p.fields.push_back({"value", number(m_r.logUniform(kRMin, kRMax))});
        } else if (pick < 0.8) {
            p = {"C" + std::to_string(++m_c_count), "capacitor", {}, {}};
            p.fields.push_back({"value", number(m_r.logUniform(kCMin, kCMax))});
        } else {
            p = {"L" + std::to_string(++m_l_count), "inductor", {}, {}};
            p.fields.push_back({"value", number(m_r.logUniform(kLMin, kLMax))});
        }
        p.nodes = {{"a", a}, {"b", b}};
        parts.push_back(std::move(p));
    }

    /// A resistor (the fix-up part that ties a dangling or floating node down).
    void resistor(const std::string &a, const std::string &b)
    {
        GenPart p{"R" + std::to_string(++m_r_count), "resistor", {{"a", a}, {"b", b}}, {}};
        p.fields.push_back({"value", number(m_r.logUniform(kRMin, kRMax))});
        parts.push_back(std::move(p));
    }

    /// `count` passive parts forming a network between `from` and `to` (a chain through
    /// internal nodes first, so every internal node has two terminals, then parts between
    /// random nodes of the network, ground among them when `grounded`). Returns the nodes.
    std::vector<std::string> network(const std::string &from, const std::string &to, int count,
                                     bool grounded, const std::string &stem)
    {
        std::vector<std::string> nodes{from, to};
        if (count <= 0)
            return nodes;
        const int chain = m_r.range(1, count);
        std::string at = from;
        for (int i = 1; i < chain; ++i) {
            const std::string next = newNode(stem);
            passive(at, next);
            nodes.push_back(next);
            at = next;
        }
        passive(at, to);
        if (grounded)
            nodes.push_back("0");
        for (int i = chain; i < count; ++i) {
            const std::size_t a = static_cast<std::size_t>(m_r.range(0, int(nodes.size()) - 1));
            std::size_t b = static_cast<std::size_t>(m_r.range(0, int(nodes.size()) - 2));
            if (b >= a)
                ++b;
            passive(nodes[a], nodes[b]);
        }
        return nodes;
    }

    RandomSource &m_r;
    std::vector<GenPart> parts;
    int m_nodeCount = 0;
    int m_r_count = 0, m_c_count = 0, m_l_count = 0;
};

/// Splits `total` into `n` non-negative shares at random.
std::vector<int> split(RandomSource &r, int total, int n)
{
    std::vector<int> share(static_cast<std::size_t>(n), 0);
    for (int i = 0; i < total; ++i)
        ++share[static_cast<std::size_t>(r.range(0, n - 1))];
    return share;
}

/// Ties every node with a single terminal to ground, and every group of nodes without a
/// path to ground, with a resistor: the loader's connectivity rules (dangling node,
/// floating subnetwork), kept here so the generator stays independent of core.
void tieDown(Builder &b)
{
    for (int round = 0; round < 4; ++round) {
        std::map<std::string, int> degree;
        std::map<std::string, std::string> parent;
        const auto find = [&](std::string n) {
            while (parent.count(n) && parent[n] != n)
                n = parent[n];
            return n;
        };
        for (const GenPart &p : b.parts) {
            std::string first;
            for (const auto &[terminal, node] : p.nodes) {
                ++degree[node];
                if (!parent.count(node))
                    parent[node] = node;
                if (first.empty())
                    first = node;
                else
                    parent[find(node)] = find(first);
            }
        }
        bool changed = false;
        for (const auto &[node, d] : degree) {
            if (node != "0" && d == 1) {
                b.resistor(node, "0");
                changed = true;
            }
        }
        if (changed)
            continue;
        std::map<std::string, std::string> floating; // root -> one node of the group
        const std::string groundRoot = degree.count("0") ? find("0") : std::string();
        for (const auto &[node, d] : degree) {
            const std::string root = find(node);
            if (root != groundRoot && !floating.count(root))
                floating[root] = node;
        }
        for (const auto &[root, node] : floating) {
            b.resistor(node, "0");
            changed = true;
        }
        if (!changed)
            return;
    }
}

} // namespace

RandomSource::RandomSource(std::span<const std::uint8_t> bytes) : m_bytes(bytes)
{
    // The fallback generator continues from a hash of the whole stream.
    std::uint64_t h = 0xcbf29ce484222325ULL;
    for (std::uint8_t b : bytes)
        h = (h ^ b) * 0x100000001b3ULL;
    m_state = h;
}

std::uint64_t RandomSource::next()
{
    if (m_used + 8 <= m_bytes.size()) {
        std::uint64_t v = 0;
        for (int i = 0; i < 8; ++i)
            v = (v << 8) | m_bytes[m_used++];
        // Mixed, so that short runs of equal bytes still spread over the ranges.
        std::uint64_t s = v;
        return splitmix(s);
    }
    m_used = m_bytes.size();
    return splitmix(m_state);
}

int RandomSource::range(int lo, int hi)
{
    if (hi <= lo)
        return lo;
    const auto span = static_cast<std::uint64_t>(hi - lo) + 1;
    return lo + static_cast<int>(next() % span);
}

double RandomSource::unit()
{
    return static_cast<double>(next() >> 11) * 0x1.0p-53;
}

double RandomSource::logUniform(double lo, double hi)
{
    const double l = std::log10(lo), h = std::log10(hi);
    return std::clamp(std::pow(10.0, l + (h - l) * unit()), lo, hi);
}

const char *shapeName(Shape shape)
{
    switch (shape) {
    case Shape::Free:
        return "free";
    case Shape::SeriesShunt:
        return "series-shunt";
    case Shape::ShuntShunt:
        return "shunt-shunt";
    case Shape::SeriesSeries:
        return "series-series";
    case Shape::ShuntSeries:
        return "shunt-series";
    }
    return "?";
}

namespace {

/// The signal source, a voltage or a current source with random source impedance.
GenPart signalSource(RandomSource &r, bool voltage)
{
    GenPart source{"SIG", voltage ? "vsource" : "isource", {}, {}};
    if (voltage) {
        if (r.chance(0.6))
            source.fields.push_back(
                {"r_series", number(r.chance(0.1) ? 0.0 : r.logUniform(kRMin, kRMax))});
    } else {
        if (r.chance(0.7))
            source.fields.push_back({"r_parallel", number(r.logUniform(kRMin, kRMax))});
        if (r.chance(0.5))
            source.fields.push_back({"c_parallel", number(r.logUniform(kCMin, kCMax))});
    }
    return source;
}

/// The gain block: 0..12 poles and zeros in all, a gbw pole counted among them;
/// `dynamicsOut` gets how many.
GenPart gainBlock(RandomSource &r, int &dynamicsOut)
{
    GenPart gb{"U1", "gain_block", {}, {}};
    const double gainMagnitude = r.logUniform(1.0, 1e8);
    gb.fields.push_back({"gain", number(r.chance(0.9) ? gainMagnitude : -gainMagnitude)});
    // At most as many zeros as poles: core refuses an improper gain (with a diagnostic),
    // which one design in twenty still tries.
    const int dynamics = r.range(0, 12);
    const int zeros = r.chance(0.05) ? r.range(0, dynamics) : r.range(0, dynamics / 2);
    int poles = dynamics - zeros;
    if (poles > 0 && r.chance(0.3)) {
        gb.fields.push_back({"gbw", number(r.logUniform(1e3, 1e10))});
        --poles;
    }
    const auto frequencies = [&](int count) {
        std::string list = "[";
        for (int i = 0; i < count; ++i)
            list += (i ? ", " : "") + number(r.logUniform(1e-2, 1e11));
        return list + "]";
    };
    gb.fields.push_back({"poles_hz", frequencies(poles)});
    gb.fields.push_back({"zeros_hz", frequencies(zeros)});
    dynamicsOut = dynamics;
    if (r.chance(0.5))
        gb.fields.push_back({"r_in", number(r.logUniform(kRMin, kRMax))});
    if (r.chance(0.5))
        gb.fields.push_back({"c_in", number(r.logUniform(kCMin, kCMax))});
    if (r.chance(0.7))
        gb.fields.push_back({"r_out", number(r.logUniform(kRMin, 1e5))});
    if (r.chance(0.2))
        gb.fields.push_back({"c_cm", number(r.logUniform(kCMin, 1e-9))});

    return gb;
}

/// The design file's text for `parts`, with a random output kind and sweep.
std::string designText(const std::vector<GenPart> &parts, Shape shape, RandomSource &r)
{
    std::string text = "{\n  \"schema\": \"loopsketch.design/1\",\n";
    text += "  \"title\": \"Generated " + std::string(shapeName(shape)) + " design\",\n";
    text += "  \"parts\": [\n";
    for (std::size_t i = 0; i < parts.size(); ++i) {
        const GenPart &p = parts[i];
        text += "    {\"id\": " + quoted(p.id) + ", \"type\": " + quoted(p.type);
        for (const auto &[terminal, node] : p.nodes)
            text += ", " + quoted(terminal) + ": " + quoted(node);
        for (const auto &[key, value] : p.fields)
            text += ", " + quoted(key) + ": " + value;
        text += i + 1 < parts.size() ? "},\n" : "}\n";
    }
    text += "  ],\n  \"input\": \"SIG\",\n";
    text += std::string("  \"output\": ") + (r.chance(0.7) ? "\"voltage\"" : "\"current\"") + ",\n";
    const double start = r.logUniform(1e-2, 1e3);
    const double stop = start * r.logUniform(1e2, 1e9);
    text += "  \"sweep\": {\"start\": " + number(start) + ", \"stop\": " + number(stop)
        + ", \"points_per_decade\": " + std::to_string(r.range(1, 40)) + "}\n}\n";
    return text;
}
} // namespace

GeneratedDesign generateDesign(RandomSource &r)
{
    GeneratedDesign out;
    out.shape = static_cast<Shape>(r.range(0, 4));
    const int total = r.range(3, 60);
    Builder b(r);

    // The signal source, between "src" and ground (the free shape may float it).
    const bool voltage = r.chance(0.5);
    GenPart source = signalSource(r, voltage);

    GenPart gb = gainBlock(r, out.poles);

    GenPart load{"LD", "load", {}, {}};
    load.fields.push_back({"r", number(r.logUniform(kRMin, kRMax))});
    if (r.chance(0.5))
        load.fields.push_back({"c", number(r.logUniform(kCMin, kCMax))});

    // Passive parts: the fix-up resistors of the free shape come out of the same budget.
    int passives = total - 3;
    const bool seriesMix = out.shape == Shape::SeriesShunt || out.shape == Shape::SeriesSeries;
    const bool seriesSample = out.shape == Shape::SeriesSeries || out.shape == Shape::ShuntSeries;
    if (out.shape == Shape::Free) {
        std::vector<std::string> pool{"0", "src", "out"};
        const int extra = r.range(0, 6);
        for (int i = 0; i < extra; ++i)
            pool.push_back("n" + std::to_string(i + 1));
        const auto pick = [&] {
            return pool[static_cast<std::size_t>(r.range(0, int(pool.size()) - 1))];
        };
        const auto pickOther = [&](const std::string &not1) {
            for (;;)
                if (std::string n = pick(); n != not1)
                    return n;
        };
        source.nodes = {{voltage ? "pos" : "to", "src"},
                        {voltage ? "neg" : "from", r.chance(0.9) ? "0" : pickOther("src")}};
        const std::string inP = pick();
        gb.nodes = {{"in_p", inP}, {"in_n", pickOther(inP)}, {"out", "out"}};
        const std::string la = r.chance(0.7) ? "out" : pickOther("0");
        load.nodes = {{"a", la}, {"b", r.chance(0.7) ? "0" : pickOther(la)}};
        b.parts = {source, gb, load};
        passives = std::max(0, passives - int(pool.size()));
        for (int i = 0; i < passives; ++i) {
            const std::string a = pick();
            b.passive(a, pickOther(a));
        }
    } else {
        // src -> [source-side chain] -> driven input; network between port 1 (a gain-block
        // input) and port 2 (the output node under shunt sampling, the load's far end under
        // series sampling); legs from the other input to ground under shunt mixing.
        const std::string driven = seriesMix ? "inp" : "inn";
        const std::string port1 = "inn";
        const std::string other = seriesMix ? "inn" : (r.chance(0.6) ? "0" : "inp");
        source.nodes = {{voltage ? "pos" : "to", "src"}, {voltage ? "neg" : "from", "0"}};
        gb.nodes = {{"in_p", seriesMix ? "inp" : other}, {"in_n", "inn"}, {"out", "out"}};
        const std::string port2 = seriesSample ? "ret" : (r.chance(0.7) ? "out" : "hot");
        if (seriesSample)
            load.nodes = r.chance(0.5)
                ? std::vector<std::pair<std::string, std::string>>{{"a", "out"}, {"b", "ret"}}
                : std::vector<std::pair<std::string, std::string>>{{"a", "ret"}, {"b", "out"}};
        else
            load.nodes = {{"a", port2}, {"b", "0"}};
        b.parts = {source, gb, load};
        const int usable = std::max(1, passives - (port2 == "hot" ? 1 : 0));
        // Shares: network, source side, other-input legs, output series part, spare legs.
        std::vector<int> share = split(r, usable - 1, 4);
        share[0] += 1;
        if (port2 == "hot")
            b.passive("out", "hot");
        b.network(port2, port1, share[0], true, "f");
        // The driven input: a chain from the source, or the source right at it.
        if (share[1] > 0) {
            b.network("src", driven, share[1], r.chance(0.5), "s");
        } else {
            for (auto &[terminal, node] : b.parts[0].nodes)
                if (node == "src")
                    node = driven;
        }
        if (!seriesMix && other == "inp") {
            b.network("inp", "0", std::max(1, share[2]), false, "p");
        } else if (share[2] > 0) {
            // Legs to ground at the source-side input under series mixing.
            for (int i = 0; i < share[2]; ++i)
                b.passive(driven, "0");
        }
        for (int i = 0; i < share[3]; ++i)
            b.passive(i % 2 ? "out" : port2, "0");
    }
    tieDown(b);

    out.text = designText(b.parts, out.shape, r);
    out.parts = static_cast<int>(b.parts.size());
    return out;
}

} // namespace loopsketch::fuzz
