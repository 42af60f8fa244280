#pragma once

// The UI thread's vector registers left "dirty" by other code, and what that costs.
//
// Some library code run on the UI thread (seen after the Readout's label updates) returns
// with the upper halves of the 256-bit AVX registers in use and no VZEROUPPER. While they
// stay so, every switch between plain SSE code (ours and Qt's, built for the x86-64
// baseline) and the VEX-coded maths of libm (log10, atan2, hypot: the FMA variants glibc
// picks on this machine) costs a penalty: measured here, 901 calls of log10 took 145 µs
// dirty against 7.5 µs clean (a standalone probe; inside the window 143 µs against 8 µs),
// and a demo wheel step's panel updates 8.3 ms against 2.9 ms. The penalty of mixing SSE and
// AVX code with dirty upper state and the VZEROUPPER remedy: Intel 64 and IA-32
// Architectures Optimization Reference Manual, the section on mixing AVX and SSE code
// (recalled from memory, not looked up).

namespace loopsketch::ui {

/// Clears the upper halves of the AVX registers (VZEROUPPER) when the processor has AVX;
/// does nothing elsewhere. Cheap enough for every panel update.
void clearUpperVectorState();

/// Clears them each time the calling thread's event loop wakes, before it handles events.
void clearUpperVectorStateOnEveryWake();

} // namespace loopsketch::ui
