#pragma once

// Every limit on what Loopsketch accepts and how much work it takes on, in one place.
// README.md and DEVELOPERS.md list them; messages quote them from here.

#include <cstddef>

namespace loopsketch {

// ---- design files (loader and validateDesign) ----

/// Largest design file, in bytes (16 MiB).
inline constexpr std::size_t kMaxDesignFileBytes = 16u * 1024u * 1024u;
/// Most parts in one design.
inline constexpr std::size_t kMaxParts = 10000;
/// Most frequency points in one sweep.
inline constexpr std::size_t kMaxSweepPoints = 10000;
/// Decades one sweep may span (stop / start at most 1e20).
inline constexpr int kMaxSweepDecades = 20;
/// Longest part id, in characters (UTF-8 code points).
inline constexpr std::size_t kMaxPartIdChars = 64;
/// Longest candidate name, in characters (UTF-8 code points).
inline constexpr std::size_t kMaxCandidateNameChars = 64;
/// Longest title, in characters (UTF-8 code points).
inline constexpr std::size_t kMaxTitleChars = 1024;
/// Largest notes text, in bytes (64 KiB).
inline constexpr std::size_t kMaxNotesBytes = 64u * 1024u;
/// Most candidates in one design.
inline constexpr std::size_t kMaxCandidates = 1000;
/// Most poles, and separately most zeros, of one gain block.
inline constexpr std::size_t kMaxPolesPerGainBlock = 20;
inline constexpr std::size_t kMaxZerosPerGainBlock = 20;
/// How many unknown keys one message names before it gives only the count.
inline constexpr std::size_t kUnknownKeysNamed = 5;

// ---- work budgets (checked before the work starts; see workbudget.h) ----

/// Most unknowns of the full nodal system (node voltages, branch currents, gain-block states).
inline constexpr std::size_t kMaxUnknowns = 2000;
/// Tolerance-box quantities up to which worstCase() enumerates every vertex (2^12 = 4096
/// corners); above it, a fixed set of corners.
inline constexpr int kMaxVertexQuantities = 12;
/// Most Monte Carlo trials of one spread run.
inline constexpr int kMaxTrials = 1'000'000;
/// Most rows of one scan or map (values of one part, or pairs of two): 200 x 200.
inline constexpr std::size_t kMaxScanRows = 40'000;
/// Most combinations one suggest run evaluates, after pruning.
inline constexpr std::size_t kMaxCombinations = 1'000'000;
/// Most elementary operations (about one complex multiply-add each) one run may take:
/// evaluations x (reduced order)^3 x frequency points, estimated up front. About 10 s of
/// work on one core of a 2020s desktop; more is refused with a message saying what to reduce.
inline constexpr double kMaxWorkOperations = 2e10;

} // namespace loopsketch
