#pragma once

// The gain block as the circuit tests write it straight into a netlist: a controlled source
// from the difference of two nodes to an output node.

#include "loopsketch/circuit/netlist.h"

#include <string>
#include <utility>
#include <vector>

namespace loopsketch::test {

/// e = gain (v(inP) - v(inN)) with `polesHz` and `zerosHz` (Hz) at node `out`.
inline ControlledSourceElement gainBlockElement(std::string inP, std::string inN, std::string out,
                                                double gain, std::vector<double> polesHz = {},
                                                std::vector<double> zerosHz = {})
{
    return {{},   std::move(inP),     std::move(inN),     std::move(out),
            gain, std::move(polesHz), std::move(zerosHz), ControlledSourceElement::Mode::Normal,
            -1};
}

} // namespace loopsketch::test
