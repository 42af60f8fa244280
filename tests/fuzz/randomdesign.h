#pragma once

// Random valid designs for the analysis fuzzer: one generator behind the libFuzzer target,
// the seeded driver and the seed-range test. It writes loopsketch.design/1 text and knows
// nothing of core, so a design it makes is judged by the same loader a user's file meets,
// and a failing one can be saved and replayed with `loopsketch analyze FILE`.

#include <cstddef>
#include <cstdint>
#include <span>
#include <string>

namespace loopsketch::fuzz {

/// Where the generator's choices come from: a seeded generator (splitmix64), or a byte
/// stream (libFuzzer's input) that falls back to a generator seeded from the stream once its
/// bytes are used up, so every stream gives a complete design.
class RandomSource
{
public:
    explicit RandomSource(std::uint64_t seed) : m_state(seed) { }
    explicit RandomSource(std::span<const std::uint8_t> bytes);

    std::uint64_t next();
    /// Uniform integer in [lo, hi].
    int range(int lo, int hi);
    /// Uniform in [0, 1).
    double unit();
    /// True with probability p.
    bool chance(double p) { return unit() < p; }
    /// Log-uniform in [lo, hi] (both > 0).
    double logUniform(double lo, double hi);

private:
    std::span<const std::uint8_t> m_bytes;
    std::size_t m_used = 0;
    std::uint64_t m_state = 0;
};

/// The topology the generator aims at. The design is wired the way that topology is
/// usually built, with random networks around it; Loopsketch identifies it on its own (and
/// may well find that a random network breaks the form).
enum class Shape { Free, SeriesShunt, ShuntShunt, SeriesSeries, ShuntSeries };

struct GeneratedDesign
{
    std::string text; ///< loopsketch.design/1
    Shape shape = Shape::Free;
    int parts = 0; ///< every part, source, gain block and load included (3..60)
    int poles = 0; ///< poles and zeros of the gain block (0..12), a gbw pole included
};

/// Builds a design that validateDesign() accepts: the three parts every design needs, 0..57
/// resistors, capacitors and inductors (internal nodes included), 0..12 gain-block poles and
/// zeros; resistances 1e-3..1e12 ohm, capacitances 1e-15..1e-3 F, inductances 1e-9..1e3 H.
GeneratedDesign generateDesign(RandomSource &random);

/// "series-shunt", ..., "free".
const char *shapeName(Shape shape);

} // namespace loopsketch::fuzz
