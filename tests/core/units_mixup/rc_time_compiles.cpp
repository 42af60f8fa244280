// The control of units_mixup: like quantities combine as physics says (ohm times farad is
// seconds, 1 / (2 pi R C) is a frequency), so the check below fails for the unit mix-up
// alone, not for a broken include path. Common practice (Boost.Units documentation, "Quantity").

#include "loopsketch/base/units.h"

#include <numbers>

int main()
{
    const loopsketch::Time tau = loopsketch::ohms(10e3) * loopsketch::farads(1.5e-12);
    const loopsketch::Frequency corner(1.0 / (2.0 * std::numbers::pi * tau));
    const loopsketch::Resistance series = loopsketch::ohms(4.7e3) + loopsketch::ohms(220.0);
    return corner.value() > 0 && series.value() > 0 ? 0 : 1;
}
