#pragma once

// Typed quantities (Boost.Units, SI) for values that cross core's boundary. A sum of unlike
// quantities (ohms plus farads) does not compile; tests/core/units_mixup checks that it
// stays so. Core's API passes plain doubles in SI base units, each documented in its `///`
// comment; core/README.md ("Units at the boundary") says where typed quantities serve and
// where they would not.

#include <boost/units/quantity.hpp>
#include <boost/units/systems/si/capacitance.hpp>
#include <boost/units/systems/si/frequency.hpp>
#include <boost/units/systems/si/inductance.hpp>
#include <boost/units/systems/si/resistance.hpp>
#include <boost/units/systems/si/time.hpp>

namespace loopsketch {

using Resistance = boost::units::quantity<boost::units::si::resistance>;
using Capacitance = boost::units::quantity<boost::units::si::capacitance>;
using Inductance = boost::units::quantity<boost::units::si::inductance>;
using Frequency = boost::units::quantity<boost::units::si::frequency>;
using Time = boost::units::quantity<boost::units::si::time>;

inline Resistance ohms(double v)
{
    return Resistance::from_value(v);
}
inline Capacitance farads(double v)
{
    return Capacitance::from_value(v);
}
inline Inductance henries(double v)
{
    return Inductance::from_value(v);
}
inline Frequency hertz(double v)
{
    return Frequency::from_value(v);
}
inline Time seconds(double v)
{
    return Time::from_value(v);
}

} // namespace loopsketch
