#pragma once

// What the analysis fuzzer demands of analyze() on one design: a result or a diagnostic
// that says why, no NaN or infinity outside the curves that mark a quantity as missing, no
// "nan"/"inf" in the text outputs, and the identities between the methods (asymptotic gain
// = exact, Blackman = exact, two-port = exact when the loop gain is large) within stated
// tolerances. A warning from a solve's own accuracy check exempts the design from the
// identity checks, and only such a warning.

#include <string>
#include <string_view>
#include <vector>

namespace loopsketch::fuzz {

/// Relative tolerance of the identity checks, against the sum of the magnitudes of the
/// terms each identity adds up (so cancellation inside a term is accounted for, and the
/// tolerance stays relative to the condition of the sum). The compared quantities come
/// from different systems (full circuit, test-driven circuit, A circuit), each solved by a
/// backward-stable LU: error about eps * cond per solve. A solve whose accuracy check
/// raises no warning is trusted to cond < 1e8 or so, i.e. about 1e-8 relative; 1e-6 leaves
/// a factor of 100 for the handful of products and quotients each identity takes.
inline constexpr double kIdentityTolerance = 1e-6;

/// |T| above which "the loop gain is large" and the two-port estimate must approach the
/// exact gain (within the bound derived in analysischecks.cpp).
inline constexpr double kLargeLoopGain = 100.0;

struct CheckReport
{
    bool loaded = false; ///< the design text loaded (a generator bug when false)
    bool analyzed = false; ///< analyze() gave a result (else `refusal` says why)
    std::string refusal;
    bool exempt = false; ///< warnings raised: identity checks skipped
    std::vector<std::string> warnings; ///< accuracy warnings (these exempt)
    int limitWarnings = 0; ///< part-limit warnings (values no real part has): exempt nothing
    std::vector<std::string> failures; ///< "kind: detail", empty when all checks pass
    bool hadTopology = false;
    bool twoPortChecked = false; ///< the large-T two-port check ran on at least one point
    /// Largest error / allowed error seen per identity (0 when not checked).
    double worstAgm = 0, worstBlackman = 0, worstTwoPort = 0;
};

/// Loads `text` (named `file` in diagnostics), analyzes it and runs every check. `denseLu`
/// analyzes on the full dense LU path instead of the reduced one (both are product code).
CheckReport checkDesignText(std::string_view text, const std::string &file, bool denseLu = false);

} // namespace loopsketch::fuzz
