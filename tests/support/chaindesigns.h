#pragma once

// Generated designs for the speed benchmarks and the window's live-analysis tests: a
// transimpedance loop whose feedback network is a long chain (the 200-part resistor chain and
// the 50-part RC ladder of issue 15). Invented for the benchmarks.

#include "loopsketch/design/designfile.h"

#include <string>

namespace loopsketch::test {

/// A transimpedance loop (current source into the inverting input, gain block of 100 dB
/// with poles at 10 Hz, 1 MHz and 30 MHz, 10 kOhm || 20 pF load) whose feedback network is a
/// chain from the output to the input: `sections` series resistors RS0... (value
/// `seriesValue`) with a shunt part SH1... `shunt` (value `shuntValue`) from every node
/// between them to ground; 2 sections - 1 + 3 parts in all. The design file's text.
inline std::string chainDesignText(int sections, const char *shunt, const char *shuntValue,
                                   const char *seriesValue)
{
    std::string text = R"({"schema": "loopsketch.design/1", "title": "Generated chain",
  "parts": [
    {"id": "SIG", "type": "isource", "to": "in", "from": "0", "r_parallel": "100M", "c_parallel": "10p"},
    {"id": "U1", "type": "gain_block", "in_p": "0", "in_n": "in", "out": "out", "gain": "100dB",
     "poles_hz": ["10", "1M", "30M"], "r_out": "50"},
    {"id": "RL", "type": "load", "a": "out", "b": "0", "r": "10k", "c": "20p"})";
    const auto node = [&](int i) {
        return i == 0       ? std::string("out")
            : i == sections ? std::string("in")
                            : "n" + std::to_string(i);
    };
    for (int i = 0; i < sections; ++i) {
        text += ",\n    {\"id\": \"RS" + std::to_string(i) + "\", \"type\": \"resistor\", \"a\": \""
            + node(i) + "\", \"b\": \"" + node(i + 1) + "\", \"value\": \"" + seriesValue + "\"}";
        if (i > 0)
            text += ",\n    {\"id\": \"SH" + std::to_string(i) + "\", \"type\": \"" + shunt
                + "\", \"a\": \"" + node(i) + "\", \"b\": \"0\", \"value\": \"" + shuntValue
                + "\"}";
    }
    text += R"(],
  "input": "SIG", "output": "voltage",
  "sweep": {"start": "1", "stop": "1G", "points_per_decade": 100}})";
    return text;
}

/// 200 parts: 99 series resistors of 1 kOhm with 98 shunts of 1 MOhm.
inline std::string resistorChainText()
{
    return chainDesignText(99, "resistor", "1M", "1k");
}

/// 50 parts: 24 series resistors of 4.7 kOhm with 23 shunt capacitors of 1 pF (reduced
/// order about 29).
inline std::string rcLadderText()
{
    return chainDesignText(24, "capacitor", "1p", "4k7");
}

} // namespace loopsketch::test
