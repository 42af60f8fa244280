// Must not compile: a resistance plus a capacitance has no meaning. tests/check_units_mixup.cmake
// expects the compiler to refuse this file, naming operator+.

#include "loopsketch/base/units.h"

int main()
{
    const auto nonsense = loopsketch::ohms(10e3) + loopsketch::farads(1.5e-12);
    return nonsense.value() > 0 ? 0 : 1;
}
