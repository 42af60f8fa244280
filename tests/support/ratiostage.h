#pragma once

// An invented design the suggest tests of core and window share: a non-inverting stage
// 1 + R2/R1 around a 180 dB gain block with one pole at 1 Hz (loop gain error about 3e-9),
// both resistors in E12, written as design-file text.

#include <string>

namespace loopsketch::test {

/// The stage titled `title`; `r2Fields` are R2's JSON fields from "value" on (value,
/// tolerance ...), `r1Value` R1's value text and `specs` the specs object.
inline std::string nonInvertingStageText(const std::string &title, const std::string &r2Fields,
                                         const std::string &r1Value, const std::string &specs)
{
    return R"({"schema": "loopsketch.design/1", "title": ")" + title + R"(", "parts": [
      {"id": "VS", "type": "vsource", "pos": "in", "neg": "0"},
      {"id": "U1", "type": "gain_block", "in_p": "in", "in_n": "fb", "out": "out",
       "gain": "180dB", "poles_hz": ["1"]},
      {"id": "R2", "type": "resistor", "a": "out", "b": "fb", "series": "E12", )"
        + r2Fields + R"(},
      {"id": "R1", "type": "resistor", "a": "fb", "b": "0", "value": ")"
        + r1Value + R"(", "series": "E12"},
      {"id": "RL", "type": "load", "a": "out", "b": "0", "r": "1M"}],
      "input": "VS", "output": "voltage",
      "sweep": {"start": "1", "stop": "1G", "points_per_decade": 20},
      "specs": )"
        + specs + "}";
}

} // namespace loopsketch::test
