#pragma once

// The design model: the one source of truth that the Sketch edits, the loader fills and
// every analysis reads. Field names follow the design file schema loopsketch.design/1.

#include "loopsketch/base/eseries.h"
#include "loopsketch/base/value.h"

#include <map>
#include <optional>
#include <span>
#include <string>
#include <string_view>
#include <vector>

namespace loopsketch {

inline constexpr std::string_view kDesignSchema = "loopsketch.design/1";
inline constexpr std::string_view kGroundNode = "0";
/// Temperature of every resistor when the design gives none: 25 °C, in kelvin.
inline constexpr double kDefaultTemperatureK = 298.15;
/// The step-settling band (fraction of the final value) when the design gives none.
inline constexpr double kDefaultSettlingBand = 0.01;
/// Spot-noise frequency when the design gives no `noise_spot_hz`, Hz: 1 kHz, where amplifier
/// data quote their white noise (common practice).
inline constexpr double kDefaultNoiseSpotHz = 1e3;

enum class PartType { Resistor, Capacitor, Inductor, VSource, ISource, GainBlock, Load };

/// Static description of one numeric field of a part type.
struct FieldSpec
{
    std::string_view name; ///< JSON key, e.g. "value", "r_out"
    ValueKind kind;
    ValueRange range;
    bool required;
    double defaultValue; ///< SI value used when the field is absent and not required
    std::string_view label; ///< what a reviewer reads, e.g. "output resistance"
    std::string_view unit; ///< unit symbol shown with the value: "Ω", "F", "V/√Hz", "V/V"
};

/// Static description of a part type: its JSON name, terminals and fields, in file order.
struct PartSpec
{
    PartType type;
    std::string_view typeName; ///< "resistor", "gain_block", ...
    std::vector<std::string_view> terminals; ///< node keys, e.g. {"a", "b"}
    std::vector<FieldSpec> fields; ///< numeric fields
    bool hasFrequencyLists = false; ///< poles_hz / zeros_hz (gain block)
    bool isSignalSource = false;
};

/// The spec of a type; every PartType has one.
const PartSpec &partSpec(PartType type);

/// The type whose JSON name is `typeName`, nullopt when unknown.
std::optional<PartType> parsePartType(std::string_view typeName);

/// All specs, in the order the palette shows them.
std::span<const PartSpec> allPartSpecs();

/// The spec of field `field` of a type, nullptr when the type has no such field.
const FieldSpec *findFieldSpec(PartType type, std::string_view field);

/// One field of a part as a reviewer reads it: the review sheet's Parts table, the
/// `analyze` text and the Inspector all show these rows, so they agree.
struct PartFieldText
{
    std::string field; ///< design-file key: "r_in", "poles_hz", "series", "tolerance" ...
    std::string label; ///< "input resistance (differential)"
    std::string value; ///< engineering notation with unit: "10 MΩ", "316.2 kV/V (110 dB)"
    std::string rkm; ///< IEC 60062 RKM code of a finite resistance or capacitance, else empty
    /// Why the value reads as it does when it is not simply the file's: "not given: ideal",
    /// "first pole at gbw / |gain| = 3.162 Hz". Empty otherwise.
    std::string note;
    bool given = true; ///< false: absent from the file, `value` is what the analysis uses
};

/// Characters allowed in a part id: letters, digits, '_' and '-'.
bool isValidPartId(std::string_view id);

struct Part
{
    std::string id;
    PartType type = PartType::Resistor;
    std::vector<std::string> nodes; ///< one per partSpec(type).terminals, same order
    std::map<std::string, Value> fields; ///< only the fields present in the file
    /// Gain block only, Hz. When the gain block has `gbw`, the first pole sits at
    /// gbw / |gain| and polesHz lists the remaining poles only (giving both would double it).
    std::vector<Value> polesHz;
    std::vector<Value> zerosHz; ///< gain block only
    std::optional<ESeries> series;
    std::optional<Value> tolerance; ///< fraction, e.g. 0.01 for "1%"

    /// The node on terminal `terminal` ("a", "in_n" ...); empty when the type has no such
    /// terminal.
    std::string node(std::string_view terminal) const;

    /// The SI value of a field, or the spec's default when absent (r_parallel and r_in:
    /// +infinity, i.e. ideal; gbw: 0, i.e. not given; parasitics: 0).
    double number(std::string_view field) const;

    /// True when the field is present in the file.
    bool has(std::string_view field) const { return fields.count(std::string(field)) != 0; }

    /// The field that an E-series step changes: "value" for R/C/L, "r" for a load,
    /// empty for types without one.
    std::string_view primaryField() const;

    bool operator==(const Part &) const = default;
};

/// Every field of `part` that enters the analysis, in partSpec() order (absent fields with
/// the default the analysis uses; the tolerance fields only when given), then the gain block's
/// poles and zeros, then the E-series and tolerance when given. Values in engineering notation with
/// units (4 significant digits), infinite values as "∞ <unit>".
std::vector<PartFieldText> partFieldTexts(const Part &part);

enum class OutputKind { Voltage, Current };

struct Sweep
{
    Value start{1.0, "1"};
    Value stop{1e9, "1G"};
    int pointsPerDecade = 100;

    /// Frequencies in Hz, logarithmically spaced, start and stop included.
    std::vector<double> frequencies() const;
    bool operator==(const Sweep &) const = default;
};

struct Specs
{
    std::optional<Value> gainMin; ///< closed-loop gain window (signed, gain units)
    std::optional<Value> gainMax;
    std::optional<Value> bandwidthMin; ///< Hz
    std::optional<double> phaseMarginMinDeg;
    /// Largest output noise rms over the noise band, V (A for a current output); design-file
    /// key `output_noise_max`.
    std::optional<Value> outputNoiseMax;
    /// Smallest signal-to-noise ratio, dB, of a full-scale sine (the design's signal_level)
    /// against the output noise rms; design-file key `snr_min_db`.
    std::optional<double> snrMinDb;
    bool operator==(const Specs &) const = default;
};

/// The band over which the noise is integrated, Hz (design-file key `noise_band`).
struct NoiseBand
{
    Value low;
    Value high;
    bool operator==(const NoiseBand &) const = default;
};

struct Candidate
{
    std::string name;
    std::map<std::string, Value> values; ///< part id -> primary-field value
    bool operator==(const Candidate &) const = default;
};

struct SketchPlacement
{
    double x = 0;
    double y = 0;
    int rotation = 0; ///< degrees, multiple of 90
    /// Mirrored left to right in the symbol's own coordinates, before the rotation
    /// (design-file key `mirror`, written only when true).
    bool mirror = false;
    bool operator==(const SketchPlacement &) const = default;
};

struct SketchWire
{
    std::vector<std::pair<double, double>> points;
    bool operator==(const SketchWire &) const = default;
};

/// A free-standing ground symbol on the Sketch (design-file key `sketch.grounds`): pins
/// wired to it sit on node "0". Scene units, like placements.
struct SketchGround
{
    double x = 0;
    double y = 0;
    bool operator==(const SketchGround &) const = default;
};

struct SketchLayout
{
    std::map<std::string, SketchPlacement> parts;
    std::vector<SketchWire> wires;
    std::vector<SketchGround> grounds;
    bool operator==(const SketchLayout &) const = default;
};

struct Design
{
    std::string title;
    /// The design's revision as written in the file (`revision`, optional); empty when the
    /// file gives none. Shown as written, never derived from the title or the notes.
    std::string revision;
    std::string notes;
    std::vector<Part> parts;
    std::string input; ///< id of the signal source
    OutputKind output = OutputKind::Voltage;
    Sweep sweep;
    Specs specs;
    std::vector<Candidate> candidates;
    std::optional<SketchLayout> sketch;
    /// Kelvin; written as a number of kelvin or a text such as "300 K" or "25 °C".
    /// Absent: kDefaultTemperatureK.
    std::optional<Value> temperature;
    /// Fraction of the final value within which the step counts as settled; written as a
    /// fraction or a percentage ("0.1%"). Absent: kDefaultSettlingBand.
    std::optional<Value> settlingBand;
    /// The band the noise rms is integrated over, [f1, f2] Hz. Absent: from the sweep start
    /// until the integral has converged (see analyzeNoise()).
    std::optional<NoiseBand> noiseBand;
    /// Peak of a full-scale sine at the signal source, V for a voltage source, A for a current
    /// source (design-file key `signal_level`): the signal of the SNR, the output peak and the
    /// slew rate. Absent: no SNR.
    std::optional<Value> signalLevel;
    /// Frequency of the spot noise figures, Hz (design-file key `noise_spot_hz`). Absent:
    /// kDefaultNoiseSpotHz.
    std::optional<Value> noiseSpotHz;

    /// The spot-noise frequency in Hz (the default when the file gives none).
    double noiseSpotFrequencyHz() const;

    /// The resistors' temperature in kelvin (the default when the file gives none).
    double temperatureK() const;
    /// The settling band as a fraction (the default when the file gives none).
    double settlingBandFraction() const;

    const Part *findPart(std::string_view id) const;
    Part *findPart(std::string_view id);

    /// The unique part of a type (gain block, load); nullptr when absent or ambiguous.
    const Part *uniquePart(PartType type) const;
    /// The signal source named by `input`; nullptr when absent.
    const Part *signalSource() const;

    bool operator==(const Design &) const = default;
};

/// The unit of every closed-loop gain of a design, output over the signal source's value:
/// "V/V", "V/A", "A/A" or "A/V".
std::string gainUnit(const Design &design);

} // namespace loopsketch
