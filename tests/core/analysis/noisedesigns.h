#pragma once

// The invented designs the noise tests share, written as design-file text: the design around
// a list of parts, and a transimpedance stage for a photodiode.

#include <string>

namespace loopsketch::test {

/// A design-file text with `parts` (JSON objects), `input` the signal source, `extra` more
/// top-level keys (each starting with a comma) and `sweep` the sweep object.
inline std::string designText(const std::string &parts, const std::string &input,
                              const std::string &extra = {},
                              const std::string &sweep = R"({"start": "1", "stop": "1M",
                                                          "points_per_decade": 20})")
{
    return R"({"schema": "loopsketch.design/1", "title": "t", "parts": [)" + parts
        + R"(], "input": ")" + input + R"(", "output": "voltage", "sweep": )" + sweep + extra + "}";
}

/// A transimpedance stage: a 15 pF photodiode with 1 GOhm shunt into the inverting input of
/// a generic FET-input gain block (120 dB, 10 MHz gain-bandwidth, second pole 60 MHz), RF
/// 200 kOhm with CF 4.7 pF, load 2 kOhm || 100 pF. `gainBlockExtra` and `sourceExtra` add
/// fields (noise, r_in, c_in ...).
inline std::string tiaParts(const std::string &gainBlockExtra, const std::string &sourceExtra = {},
                            const std::string &rOut = "50")
{
    return R"({"id": "PD1", "type": "isource", "to": "in", "from": "0", "r_parallel": "1G",
               "c_parallel": "15p")"
        + sourceExtra + R"(},
            {"id": "U1", "type": "gain_block", "in_p": "0", "in_n": "in", "out": "out",
             "gain": "120dB", "gbw": "10M", "poles_hz": ["60M"], "r_out": ")"
        + rOut + "\"" + gainBlockExtra + R"(},
            {"id": "RF", "type": "resistor", "a": "in", "b": "out", "value": "200k"},
            {"id": "CF", "type": "capacitor", "a": "in", "b": "out", "value": "4.7p"},
            {"id": "RL", "type": "load", "a": "out", "b": "0", "r": "2k", "c": "100p"})";
}

} // namespace loopsketch::test
