#pragma once

// A seed sequence of four 32-bit words whose generate() writes the same words as std::seed_seq
// (the algorithm of ISO C++ [rand.util.seedseq]), without std::seed_seq's allocation and
// without a division per index: the Monte Carlo run seeds one generator per trial, and
// std::seed_seq's three remainders per step made the seeding about a tenth of a trial.

#include <algorithm>
#include <array>
#include <cstddef>
#include <cstdint>
#include <iterator>
#include <memory>
#include <type_traits>

namespace loopsketch::detail {

class SeedSequence
{
public:
    using result_type = std::uint32_t;

    explicit SeedSequence(std::array<std::uint32_t, 4> words) : m_words(words) { }

    /// Fills [begin, end) with the words std::seed_seq{w0, w1, w2, w3}.generate() writes.
    template<typename It> void generate(It begin, It end) const
    {
        const auto n = static_cast<std::size_t>(std::distance(begin, end));
        if (n == 0)
            return;
        std::uint32_t *out = nullptr;
        if constexpr (std::is_same_v<typename std::iterator_traits<It>::value_type,
                                     std::uint32_t> && std::contiguous_iterator<It>) {
            out = std::to_address(begin);
            fill(out, n);
        } else {
            // Any other range: through a buffer of the standard generators' size or less.
            std::uint32_t buffer[kMaxWords];
            if (n > kMaxWords)
                return; // not used with more words than mt19937_64 takes
            fill(buffer, n);
            for (std::size_t i = 0; i < n; ++i, ++begin)
                *begin = static_cast<typename std::iterator_traits<It>::value_type>(buffer[i]);
        }
    }

    std::size_t size() const { return m_words.size(); }

private:
    static constexpr std::size_t kMaxWords = 624;

    void fill(std::uint32_t *b, std::size_t n) const
    {
        const std::size_t s = m_words.size();
        for (std::size_t i = 0; i < n; ++i)
            b[i] = 0x8b8b8b8bu;
        const std::size_t t = n >= 623 ? 11 : n >= 68 ? 7 : n >= 39 ? 5 : n >= 7 ? 3 : (n - 1) / 2;
        const std::size_t p = (n - t) / 2, q = p + t;
        const std::size_t m = std::max(s + 1, n);
        const auto mix = [](std::uint32_t x) {
            return x ^ (x >> 27);
        };
        // Indices k mod n, (k + p) mod n and (k + q) mod n, advanced together. b[(k - 1) mod n]
        // is always the word written last (each step ends writing b[k mod n]), so it stays in
        // a register instead of making every step wait for a store.
        std::size_t ik = 0, ip = p % n, iq = q % n;
        std::uint32_t last = b[n - 1];
        const auto advance = [n](std::size_t &i) {
            i = i + 1 == n ? 0 : i + 1;
        };
        for (std::size_t k = 0; k < m; ++k) {
            const std::uint32_t r1 = 1664525u * mix(b[ik] ^ b[ip] ^ last);
            const std::uint32_t extra = k == 0 ? static_cast<std::uint32_t>(s)
                : k <= s                       ? static_cast<std::uint32_t>(ik) + m_words[k - 1]
                                               : static_cast<std::uint32_t>(ik);
            const std::uint32_t r2 = r1 + extra;
            b[ip] += r1;
            b[iq] += r2;
            b[ik] = r2;
            last = r2;
            advance(ik);
            advance(ip);
            advance(iq);
        }
        for (std::size_t k = m; k < m + n; ++k) {
            const std::uint32_t r3 = 1566083941u * mix(b[ik] + b[ip] + last);
            const std::uint32_t r4 = r3 - static_cast<std::uint32_t>(ik);
            b[ip] ^= r3;
            b[iq] ^= r4;
            b[ik] = r4;
            last = r4;
            advance(ik);
            advance(ip);
            advance(iq);
        }
    }

    std::array<std::uint32_t, 4> m_words;
};

} // namespace loopsketch::detail
