#pragma once

// The test designs the analysis tests share: a follower around a gain block with chosen
// poles and zeros, written as design-file text.

#include "designs.h"

#include <sstream>
#include <string>
#include <vector>

namespace loopsketch::test {

/// A follower (in_n tied to the output) around a gain block with the given poles and
/// zeros (Hz); `positive` ties in_p to the output instead (positive feedback). With the
/// defaults (no r_in, r_out = 0, resistive load) the loop gain is the gain block's own
/// gain(s); r_out and a load capacitance add the pole of r_out with the load.
struct Follower
{
    double gain = 1e4;
    std::vector<double> polesHz;
    std::vector<double> zerosHz;
    double rOut = 0;
    double loadC = 0;
    double stop = 1e9;
    int pointsPerDecade = 100;
    bool positive = false;
    std::string extra; ///< more top-level keys, each ending in a comma

    std::string text() const
    {
        std::ostringstream s;
        s.precision(17);
        const auto list = [&](const std::vector<double> &v) {
            std::ostringstream l;
            l.precision(17);
            l << "[";
            for (std::size_t i = 0; i < v.size(); ++i)
                l << (i ? ", " : "") << v[i];
            l << "]";
            return l.str();
        };
        s << R"({"schema": "loopsketch.design/1", "title": "invented follower", )" << extra
          << R"("parts": [{"id": "VS", "type": "vsource", "pos": "in", "neg": "0"},)"
          << R"({"id": "U1", "type": "gain_block", )"
          << (positive ? R"("in_p": "out", "in_n": "in")" : R"("in_p": "in", "in_n": "out")")
          << R"(, "out": "out", "gain": )" << gain << R"(, "poles_hz": )" << list(polesHz)
          << R"(, "zeros_hz": )" << list(zerosHz) << R"(, "r_out": )" << rOut << "},"
          << R"({"id": "RL", "type": "load", "a": "out", "b": "0", "r": "10k", "c": )" << loadC
          << "}],"
          << R"("input": "VS", "output": "voltage", "sweep": {"start": 1, "stop": )" << stop
          << R"(, "points_per_decade": )" << pointsPerDecade << "}}";
        return s.str();
    }
    Design design() const { return parseOrFail(text()); }
};

} // namespace loopsketch::test
