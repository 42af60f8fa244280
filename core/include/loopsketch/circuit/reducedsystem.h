#pragma once

// The fast sweep path. Only the unknowns K that carry capacitance, inductance or a
// gain-block state change with frequency; the others are eliminated once by a Schur
// complement (a static, exact reduction), leaving a k x k pencil, k = |K| (3..8 for a
// typical loop, against 15..30 MNA unknowns):
//   (Gr + s Cr) z = Br u,   y = Lr z + Dr u.
// Each frequency then costs one k x k LU instead of an n x n one, with the same backward
// stability as the full solve (no pole-residue sums, whose cancellation would lose the
// small high-frequency values). The finite generalized eigenvalues of (Gr, Cr) are the
// circuit's natural frequencies (det(G + sC) = det(Gss) det(Gr + sCr)).

#include "loopsketch/base/result.h"
#include "loopsketch/circuit/circuit.h"

#include <Eigen/Core>

#include <algorithm>
#include <complex>
#include <cstdint>
#include <initializer_list>
#include <memory>
#include <optional>
#include <span>
#include <string>
#include <vector>

namespace loopsketch {

namespace detail {
class HessenbergPencil;
}

/// How the per-frequency solves are done: the reduced k x k pencil (the product), or a
/// dense LU of the whole MNA matrix at every frequency (the straightforward reference the
/// benchmark and tests compare against).
enum class SolverPath { Reduced, DenseLu };

/// How many frequencies the reduced sweep solves side by side in vector registers. Automatic
/// takes the widest the processor runs (eight with AVX-512, four with AVX2, else two); the
/// others exist so tests can check that every width gives the same numbers
/// (detail::sweepWidthAvailable() in core/src/circuit/pencilsweep.h says which run here).
enum class SweepWidth { Automatic, Two, Four, Eight };

/// Output row and input column of one transfer-matrix entry.
struct TransferEntry
{
    int output = 0;
    int input = 0;
};

/// The distinct outputs and inputs that `entries` read, each in the order it first appears
/// (into `outputs` and `inputs`, cleared first, so a caller that sweeps often reuses them).
inline void distinctPorts(std::span<const TransferEntry> entries, std::vector<int> &outputs,
                          std::vector<int> &inputs)
{
    outputs.clear();
    inputs.clear();
    for (const TransferEntry &e : entries) {
        if (std::find(outputs.begin(), outputs.end(), e.output) == outputs.end())
            outputs.push_back(e.output);
        if (std::find(inputs.begin(), inputs.end(), e.input) == inputs.end())
            inputs.push_back(e.input);
    }
}

/// An entry whose accuracy is checked, with the quantity it gives in the user's words.
struct CheckedEntry
{
    TransferEntry entry;
    std::string quantity; ///< "gain", "z_in", "loop gain" ...
    /// False for a term a quantity is combined from (the feedthrough of the asymptotic gain
    /// model, a return ratio of Blackman's formula): a miss of the fast path still switches
    /// the system to the careful solve, but the entry's own error bound warns of nothing,
    /// since the term may be negligible in the quantity it enters (an exact zero, such as the
    /// feedthrough past an ideal output, has no relative accuracy at all).
    bool warns = true;
    /// The magnitude below which an error of this quantity is immaterial, in its own unit
    /// (0: none). An impedance that is zero in theory (an output held by an ideal source)
    /// comes out of any solve as rounding, with no relative accuracy at all; measured against
    /// this level instead (for an impedance, a millionth of the circuit's smallest
    /// resistance), that rounding is what it is: nothing.
    double floor = 0.0;
    /// True: any departure of the fast path from the careful solve beyond the tolerance is a
    /// miss, even within the careful solve's own error bound (which can be far above its
    /// actual error: a series chain of teraohms beside ohms gives a bound of 150 % on a
    /// value that is exact). For an estimate's terms, which warn of nothing.
    bool strict = false;
};

/// What ReducedSystem::checkAccuracy() found.
struct AccuracyCheck
{
    /// The reduced solves missed the careful solve of the full system; the system now
    /// solves the full matrix with iterative refinement at every frequency.
    bool refined = false;
    /// Largest first-order error bound of a checked entry, relative to its value.
    double worstRelativeError = 0;
    /// Entries whose bound exceeds the tolerance, each naming the part and field that
    /// contributes most to it.
    Diagnostics warnings;
};

class ReducedSystem
{
public:
    /// Reduces the system once. Fails, naming the unknowns involved, when the static part is
    /// singular in a way no frequency can cure (a voltage-source loop, a floating subnetwork).
    static Result<ReducedSystem> build(const DescriptorSystem &system,
                                       SolverPath path = SolverPath::Reduced)
    {
        return build(DescriptorSystem(system), path);
    }
    /// The same, keeping `system` (for checkAccuracy()) without a copy.
    static Result<ReducedSystem> build(DescriptorSystem &&system,
                                       SolverPath path = SolverPath::Reduced)
    {
        return build(std::make_shared<const DescriptorSystem>(std::move(system)), path);
    }
    /// The same, sharing `system` with the caller, who must leave it unchanged while the
    /// result lives (a Monte Carlo trial re-stamps its systems in place between trials).
    static Result<ReducedSystem> build(std::shared_ptr<const DescriptorSystem> system,
                                       SolverPath path = SolverPath::Reduced);

    int outputs() const { return static_cast<int>(m_lr.rows()); }
    int inputs() const { return static_cast<int>(m_br.cols()); }
    int order() const { return static_cast<int>(m_gr.rows()); }

    /// Transfer matrix (outputs x inputs) at complex frequency s (rad/s). Entries are NaN
    /// when the pencil is singular at s (check with allFinite()).
    Eigen::MatrixXcd evaluate(std::complex<double> s) const;

    /// The same into `h` (resized to outputs x inputs only when needed), computing only the
    /// columns listed in `inputs` (all when empty); the other columns are left as they were.
    /// The hot path of every sweep: no allocation once `h` has its size.
    void evaluateInto(std::complex<double> s, std::initializer_list<int> inputs,
                      Eigen::MatrixXcd &h) const
    {
        evaluateInto(s, inputs, {}, h);
    }
    /// ... and only the rows listed in `outputs` (all when empty).
    void evaluateInto(std::complex<double> s, std::initializer_list<int> inputs,
                      std::initializer_list<int> outputs, Eigen::MatrixXcd &h) const
    {
        evaluateInto(s, std::span<const int>(inputs.begin(), inputs.size()),
                     std::span<const int>(outputs.begin(), outputs.size()), h);
    }

    /// The same with the lists as spans.
    void evaluateInto(std::complex<double> s, std::span<const int> inputs,
                      std::span<const int> outputs, Eigen::MatrixXcd &h) const;

    /// One entry at s.
    std::complex<double> entry(std::complex<double> s, int output, int input) const;

    /// The listed entries at every complex frequency of `s` (rad/s), entry-major: entry e
    /// at s[i] is result[e * s.size() + i]; NaN where the pencil is singular. The sweeps of
    /// the analyses: one tight loop per system, one factorisation per point shared by all
    /// entries, and on the reduced path one solve per distinct row or column, whichever
    /// are fewer.
    std::vector<std::complex<double>> sweepEntries(std::span<const std::complex<double>> s,
                                                   std::span<const TransferEntry> entries,
                                                   SweepWidth width = SweepWidth::Automatic) const;

    /// Transfer matrices at j 2 pi f for each f (Hz).
    std::vector<Eigen::MatrixXcd> sweep(const std::vector<double> &frequenciesHz) const;

    /// Finite natural frequencies (rad/s): the finite generalized eigenvalues of (G, C),
    /// sorted by magnitude. Candidates from QZ under several scalings of the pencil are kept
    /// only where Newton's method on det(G + sC) confirms (and polishes) them; the argument
    /// principle counts the roots, and Newton's method with deflation looks for any the
    /// candidates missed.
    std::vector<std::complex<double>> naturalFrequencies() const;
    /// How many natural frequencies the last naturalFrequencies() call counted but could
    /// not locate (0 when every one was found and confirmed).
    int unconfirmedPoles() const { return m_unconfirmedPoles; }
    /// When the last naturalFrequencies() call left some unlocated, a warning naming the
    /// part and field behind the largest entry of the circuit equations (the value that
    /// stretches their range the most); std::nullopt otherwise.
    std::optional<Diagnostic> unconfirmedPolesWarning() const;

    /// True when the DC point (s = 0) is regular.
    bool dcRegular() const;

    /// Unit-step response (input stepping from 0 to 1 at t = 0) of one output at `times`
    /// (s, ascending, >= 0). Exact at each time for the linear model (matrix exponential of
    /// the proper state-space part). Fails for a non-proper (impulsive) response.
    Result<std::vector<double>> stepResponse(int output, int input,
                                             const std::vector<double> &times) const;

    /// Checks `entries` at the complex frequencies `probes` (rad/s; points where the
    /// circuit is singular are skipped) against the full nodal system solved with
    /// equilibration and iterative refinement. Where the fast path is off by more than
    /// `tolerance` (relative) and the careful solve is better, the system switches to the
    /// careful solve everywhere; where the careful solve's own error bound (componentwise
    /// backward error times the condition of the entry) exceeds `tolerance`, a warning names
    /// the part and field whose rounding dominates (entries with `warns`). A probe s = 0
    /// where the full system is singular makes every later value at s = 0 NaN
    /// (singularAtDc()).
    AccuracyCheck checkAccuracy(std::span<const std::complex<double>> probes,
                                std::span<const CheckedEntry> entries, double tolerance = 1e-8);

    /// From now on every point the reduced pencil solves gets a first-order error estimate
    /// (an adjoint solve more), and a point whose estimate is above
    /// detail::kDoubtfulRelativeError of its value is solved again from the full system
    /// with refinement; a value below `floor` (absolute) is held to that level instead of
    /// its own size (an impedance that counts as zero). For the systems whose entries are
    /// shown as they are (the exact gain and impedances): checkAccuracy() probes a few
    /// points, and the reduced pencil can be ill-conditioned between them where the
    /// circuit is not.
    void checkEveryPoint(double floor = 0.0)
    {
        m_checkEveryPoint = true;
        m_checkFloor = floor;
    }

    /// With checkEveryPoint(), the sweeps record, per entry, the worst point the per-point
    /// estimate found doubtful and that even the full system's careful solve could not assure
    /// (its own bound, as checkAccuracy() reads it at its probes). forgetUnassuredPoints()
    /// empties the record, so that only the sweeps of what the outputs show count (not an
    /// evaluation far below the sweep that only tells an open port from a closed one).
    void forgetUnassuredPoints() const { m_unassured.clear(); }
    /// A warning for the worst recorded point of the `entries` that warn, beyond `tolerance`,
    /// naming its quantity and frequency and the part and field whose rounding dominates;
    /// std::nullopt otherwise, and where checkAccuracy() has warned already.
    std::optional<Diagnostic> unassuredPointWarning(std::span<const CheckedEntry> entries,
                                                    double tolerance = 1e-8) const;

    /// True when the system solves the full matrix with refinement (see checkAccuracy()).
    bool refined() const { return m_refined; }

    /// True when checkAccuracy() was given s = 0 among its probes and found the full system
    /// singular there (an inductor loop across an ideal source, a node held by capacitors
    /// only): every entry at s = 0 is then NaN, on every path, instead of what the rounding
    /// of the reduced pencil leaves of a singular matrix.
    bool singularAtDc() const { return m_singularAtDc; }

    /// The full system it was reduced from (for re-stamping, see restamp.h).
    const DescriptorSystem &system() const { return *m_system; }
    SolverPath path() const { return m_path; }

    const Eigen::MatrixXd &gr() const { return m_gr; }
    const Eigen::MatrixXd &cr() const { return m_cr; }
    const Eigen::MatrixXd &br() const { return m_br; }
    const Eigen::MatrixXd &lr() const { return m_lr; }
    const Eigen::MatrixXd &dr() const { return m_dr; }

private:
    /// `doubtful` where the full system is at hand to solve a doubtful point again, else
    /// empty (no estimate asked of the sweep kernel).
    std::span<std::uint8_t> checkedPoints(std::span<std::uint8_t> doubtful) const;
    /// The full system solved carefully at s (RefinedSolver), for the inputs and outputs
    /// asked for; NaN where it is singular or a value is not finite. With `assure` (a point
    /// of a sweep that the per-point estimate found doubtful), each value's own error bound
    /// is taken and recorded (recordUnassured()).
    void solveFullInto(std::complex<double> s, std::span<const int> inputs,
                       std::span<const int> outputs, Eigen::MatrixXcd &h,
                       bool assure = false) const;
    /// The points the sweep kernel found doubtful, solved again from the full system.
    void resolveDoubtful(std::span<const std::complex<double>> s,
                         std::span<const TransferEntry> entries,
                         std::span<const std::uint8_t> doubtful,
                         std::vector<std::complex<double>> &out) const;

    Eigen::MatrixXd m_gr; ///< k x k
    Eigen::MatrixXd m_cr; ///< k x k
    Eigen::MatrixXd m_br; ///< k x inputs
    Eigen::MatrixXd m_lr; ///< outputs x k
    Eigen::MatrixXd m_dr; ///< outputs x inputs, static feedthrough of the eliminated part
    std::vector<std::string> m_unknowns; ///< names of the kept unknowns
    SolverPath m_path = SolverPath::Reduced;
    std::shared_ptr<const DescriptorSystem> m_system; ///< the full system, for checks
    /// The worst bound of a doubtful point of one entry solved again from the full system
    /// (relative to the value, or to the floor below it), with what a warning names.
    struct UnassuredPoint
    {
        double relative = 0;
        TransferEntry entry;
        std::complex<double> s;
        bool belowFloor = false;
        std::vector<double> shares; ///< per origin of the full system
    };
    /// Sweeps are const; the record of their doubtful points is not (one system is swept by
    /// one thread at a time: each worker of a scan or a spread has its own model).
    mutable std::vector<UnassuredPoint> m_unassured;
    /// Keeps `point` when it is its entry's worst so far.
    void recordUnassured(UnassuredPoint point) const;
    bool m_probesWarned = false; ///< checkAccuracy() gave a warning
    bool m_checkEveryPoint = false; ///< see checkEveryPoint()
    double m_checkFloor = 0.0; ///< see checkEveryPoint()
    /// outputs x inputs (row-major), true where the entry is zero for every value of the
    /// parts (core/src/circuit/structuralzeros.h); every path returns an exact 0 there.
    std::vector<bool> m_structuralZero;
    bool structuralZero(int output, int input) const
    {
        return !m_structuralZero.empty()
            && m_structuralZero[static_cast<std::size_t>(output * inputs() + input)];
    }
    /// The pencil in Hessenberg-triangular form, for orders where it pays
    /// (core/src/circuit/hessenbergpencil.h); null where the vector kernel does the sweeps.
    std::shared_ptr<const detail::HessenbergPencil> m_hessenberg;
    /// The reduced path's sweep: through m_hessenberg where there is one, else the kernel;
    /// either estimates each point's error where `doubtful` is given (detail::sweepPencil()).
    void sweepReduced(std::span<const std::complex<double>> s,
                      std::span<const TransferEntry> entries, std::complex<double> *out,
                      SweepWidth width = SweepWidth::Automatic,
                      std::span<std::uint8_t> doubtful = {}) const;
    bool m_refined = false;
    bool m_singularAtDc = false;
    mutable int m_unconfirmedPoles = 0; ///< of the last naturalFrequencies()
};

} // namespace loopsketch
