// detail::SeedSequence against the standard library's std::seed_seq: the same words into the
// same generator, so a Monte Carlo run draws the same trials as it did with std::seed_seq.
// Source: ISO C++ [rand.util.seedseq] (the generate() algorithm both implement) and the
// standard library's own std::seed_seq as the reference.

#include "detail/seedsequence.h"

#include <gtest/gtest.h>

#include <array>
#include <cstdint>
#include <random>
#include <vector>

namespace {

using loopsketch::detail::SeedSequence;

std::array<std::uint32_t, 4> wordsOf(std::uint64_t seed, std::uint64_t trial)
{
    return {static_cast<std::uint32_t>(seed), static_cast<std::uint32_t>(seed >> 32),
            static_cast<std::uint32_t>(trial), static_cast<std::uint32_t>(trial >> 32)};
}

TEST(SeedSequence, WritesTheWordsOfStdSeedSeq)
{
    // Lengths around each branch of the standard's t (n - 1) / 2, 3, 5, 7, 11, and the 624
    // words mt19937_64 asks for.
    for (std::size_t n : {1u, 2u, 5u, 6u, 7u, 38u, 39u, 67u, 68u, 622u, 623u, 624u}) {
        for (std::uint64_t seed : {0ull, 1ull, 7ull, 0xfedcba9876543210ull}) {
            for (std::uint64_t trial : {0ull, 1ull, 9999ull, 0x100000000ull}) {
                const auto w = wordsOf(seed, trial);
                std::seed_seq reference{w[0], w[1], w[2], w[3]};
                std::vector<std::uint32_t> want(n), got(n, 0);
                reference.generate(want.begin(), want.end());
                SeedSequence(w).generate(got.begin(), got.end());
                EXPECT_EQ(got, want) << "n " << n << ", seed " << seed << ", trial " << trial;
            }
        }
    }
}

TEST(SeedSequence, SeedsTheSameGeneratorStream)
{
    for (std::uint64_t trial = 0; trial < 200; ++trial) {
        const auto w = wordsOf(7, trial);
        std::seed_seq reference{w[0], w[1], w[2], w[3]};
        SeedSequence fast(w);
        std::mt19937_64 want(reference), got(fast);
        for (int i = 0; i < 400; ++i) // past the first regeneration of the state (312 words)
            ASSERT_EQ(got(), want()) << "trial " << trial << ", draw " << i;
    }
}

TEST(SeedSequence, FillsOtherWordTypes)
{
    const auto w = wordsOf(3, 4);
    std::seed_seq reference{w[0], w[1], w[2], w[3]};
    std::vector<std::uint32_t> want(16);
    reference.generate(want.begin(), want.end());
    std::vector<std::uint64_t> got(16, 0);
    SeedSequence(w).generate(got.begin(), got.end());
    for (std::size_t i = 0; i < want.size(); ++i)
        EXPECT_EQ(got[i], want[i]) << i;
}

} // namespace
