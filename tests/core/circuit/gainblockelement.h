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
    ControlledSourceElement cs;
    cs.inP = std::move(inP);
    cs.inN = std::move(inN);
    cs.out = std::move(out);
    cs.gain = gain;
    cs.polesHz = std::move(polesHz);
    cs.zerosHz = std::move(zerosHz);
    return cs;
}

} // namespace loopsketch::test
