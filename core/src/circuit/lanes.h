#pragma once

// Complex numbers of several frequencies side by side in vector registers (GCC/Clang vector
// extension), shared by the sweep kernels (core/src/circuit/pencilsweep.cpp,
// core/src/circuit/hessenbergpencil.cpp). Every helper is inlined always and is used only
// inside functions compiled for one target, so the 32- and 64-byte lane types never cross
// a call of another calling convention (see the -O0 note in pencilsweep.cpp).

#include <Eigen/Core>

#include <cstddef>
#include <new>
#include <vector>

#if defined(__GNUC__) && !defined(__clang__)
#pragma GCC diagnostic ignored "-Wpsabi"
#endif

namespace loopsketch::detail::lanes {

using Index = Eigen::Index;

/// Points side by side (GCC/Clang vector extension): one value per point. Two fill an SSE2
/// register (every x86-64), four an AVX2 one, eight an AVX-512 one. Wider than the
/// register, the compiler splits the vectors badly, so each width has its own target.
using Lanes2 = double __attribute__((vector_size(2 * sizeof(double))));
using Lanes4 = double __attribute__((vector_size(4 * sizeof(double))));
using Lanes8 = double __attribute__((vector_size(8 * sizeof(double))));

template<typename L> constexpr int laneCount = static_cast<int>(sizeof(L) / sizeof(double));

/// A complex number per lane.
template<typename L> struct LaneComplex
{
    L re, im;
};

/// The widest lane vector (AVX-512) is 64 bytes. Scratch for any width is aligned to that,
/// not to alignof of the lane type: GCC reports alignof of these vector types as 16 where
/// the type is declared (outside the functions compiled for AVX), while the code generated
/// inside them stores whole 32- or 64-byte vectors with aligned instructions.
inline constexpr std::size_t kLaneAlignment = 64;

/// std::allocator with kLaneAlignment alignment, for the scratch of the general order.
template<typename T> struct LaneAllocator
{
    using value_type = T;
    LaneAllocator() = default;
    template<typename U> LaneAllocator(const LaneAllocator<U> &) { }
    T *allocate(std::size_t n)
    {
        return static_cast<T *>(::operator new(n * sizeof(T), std::align_val_t(kLaneAlignment)));
    }
    void deallocate(T *p, std::size_t) { ::operator delete(p, std::align_val_t(kLaneAlignment)); }
    template<typename U> bool operator==(const LaneAllocator<U> &) const { return true; }
};

template<typename T> using LaneVector = std::vector<T, LaneAllocator<T>>;

template<typename L> [[gnu::always_inline]] inline L magnitude2(LaneComplex<L> x)
{
    return x.re * x.re + x.im * x.im;
}

template<typename L>
[[gnu::always_inline]] inline LaneComplex<L> mul(LaneComplex<L> x, LaneComplex<L> y)
{
    return {x.re * y.re - x.im * y.im, x.re * y.im + x.im * y.re};
}

template<typename L>
[[gnu::always_inline]] inline void subMul(LaneComplex<L> &acc, LaneComplex<L> x, LaneComplex<L> y)
{
    acc.re -= x.re * y.re - x.im * y.im;
    acc.im -= x.re * y.im + x.im * y.re;
}

/// Per lane: x where `take` holds, else y (`take` a lane comparison result).
template<typename L, typename M>
[[gnu::always_inline]] inline LaneComplex<L> select(M take, LaneComplex<L> x, LaneComplex<L> y)
{
    return {take ? x.re : y.re, take ? x.im : y.im};
}

/// |x| per lane.
template<typename L> [[gnu::always_inline]] inline L absLanes(L x)
{
    return x < 0.0 ? -x : x;
}

/// 1 / x from its squared magnitude: one real division per lane. Lanes whose squared
/// magnitude over- or underflows are flagged by the caller and solved again carefully.
template<typename L>
[[gnu::always_inline]] inline LaneComplex<L> reciprocal(LaneComplex<L> x, L mag2)
{
    const L scale = 1.0 / mag2;
    return {x.re * scale, -x.im * scale};
}

/// Swaps rows j and r of `rows` (length `n` each) in the lanes where `take` holds.
template<typename L, typename M>
[[gnu::always_inline]] inline void swapLanes(M take, LaneComplex<L> *rowJ, LaneComplex<L> *rowR,
                                             Index n)
{
    for (Index cc = 0; cc < n; ++cc) {
        const LaneComplex<L> top = rowJ[cc];
        rowJ[cc] = select(take, rowR[cc], top);
        rowR[cc] = select(take, top, rowR[cc]);
    }
}

} // namespace loopsketch::detail::lanes
