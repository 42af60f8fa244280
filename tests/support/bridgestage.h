#pragma once

// An invented design the suggest tests and benchmark share: a non-inverting gain-of-11 stage
// for a strain-gauge bridge (feedback RF over RG, CF across RF for the bandwidth, a gain block
// with a 20 MHz second pole into a cable), every searched part in E96 and starting off target,
// written as design-file text.

#include <string>

namespace loopsketch::test {

/// The stage with the specs object `specs` (default: gain 11 +- 2 %, 200 kHz, 55 deg) and
/// `u1Extra` appended to the gain block's fields (noise densities ...).
inline std::string bridgeStageText(
    const std::string &specs
    = R"({"gain": ["10.78", "11.22"], "bandwidth_min": "200k", "phase_margin_min_deg": 55})",
    const std::string &u1Extra = {})
{
    return R"({"schema": "loopsketch.design/1", "title": "Bridge amplifier, gain 11", "parts": [
      {"id": "VB", "type": "vsource", "pos": "in", "neg": "0", "r_series": "350"},
      {"id": "U1", "type": "gain_block", "in_p": "in", "in_n": "fb", "out": "out",
       "gain": "114dB", "r_in": "10M", "c_in": "3p", "r_out": "40", "poles_hz": ["12", "20M"])"
        + u1Extra + R"(},
      {"id": "RF", "type": "resistor", "a": "out", "b": "fb", "value": "33k", "series": "E96",
       "tolerance": "1%"},
      {"id": "RG", "type": "resistor", "a": "fb", "b": "0", "value": "3.3k", "series": "E96",
       "tolerance": "1%"},
      {"id": "CF", "type": "capacitor", "a": "out", "b": "fb", "value": "3.3p", "series": "E96",
       "tolerance": "5%"},
      {"id": "RL", "type": "load", "a": "out", "b": "0", "r": "5k", "c": "330p"}],
      "input": "VB", "output": "voltage",
      "sweep": {"start": "1", "stop": "1G", "points_per_decade": 50},
      "specs": )"
        + specs + "}";
}

} // namespace loopsketch::test
