#include "support/vectorstate.h"

#include <QAbstractEventDispatcher>

#if defined(__x86_64__) && (defined(__GNUC__) || defined(__clang__))
#include <immintrin.h>
#define LOOPSKETCH_HAS_VZEROUPPER 1
#endif

namespace loopsketch::ui {

#ifdef LOOPSKETCH_HAS_VZEROUPPER
namespace {

// Built for AVX on its own; called only when the processor has it.
__attribute__((target("avx"))) void zeroUpper()
{
    _mm256_zeroupper();
}

bool hasAvx()
{
    static const bool has = __builtin_cpu_supports("avx");
    return has;
}

} // namespace
#endif

void clearUpperVectorState()
{
#ifdef LOOPSKETCH_HAS_VZEROUPPER
    if (hasAvx())
        zeroUpper();
#endif
}

void clearUpperVectorStateOnEveryWake()
{
    if (QAbstractEventDispatcher *dispatcher = QAbstractEventDispatcher::instance())
        QObject::connect(dispatcher, &QAbstractEventDispatcher::awake, dispatcher,
                         &clearUpperVectorState, Qt::DirectConnection);
}

} // namespace loopsketch::ui
