// Design files: every malformed file is rejected with a message naming file, part and field;
// the example designs load, validate and save back byte-identical; saves are atomic.
// The rules checked here are Loopsketch's own file format (core/README.md §6), so the expected
// texts come from that format's definition, not from an outside source.

#include "loopsketch/design/atomicfile.h"
#include "loopsketch/design/design.h"
#include "loopsketch/design/designfile.h"
#include "loopsketch/design/designvalidation.h"

#include "malformedcorpus.h"

#include "designs.h"
#include "faultinjection.h"
#include "files.h"

#include <gmock/gmock.h>
#include <gtest/gtest.h>

#include <cmath>
#include <filesystem>
#include <fstream>
#include <sstream>

#include <unistd.h>

using namespace loopsketch;
using namespace loopsketch::test;
using ::testing::HasSubstr;
using ::testing::Not;

namespace fs = std::filesystem;

namespace {

// The valid design every malformed file was derived from (one change per file).
constexpr std::string_view kBase = R"({
  "schema": "loopsketch.design/1",
  "title": "Malformed-file base: small transimpedance stage",
  "parts": [
    {"id": "SIG", "type": "isource", "to": "in", "from": "0", "r_parallel": "1G", "c_parallel": "10p"},
    {"id": "U1", "type": "gain_block", "in_p": "0", "in_n": "in", "out": "out", "gain": "100dB", "poles_hz": ["10", "30M"]},
    {"id": "RF", "type": "resistor", "a": "in", "b": "out", "value": "100k", "series": "E24", "tolerance": "1%"},
    {"id": "CF", "type": "capacitor", "a": "in", "b": "out", "value": "2.2p"},
    {"id": "RL", "type": "load", "a": "out", "b": "0", "r": "10k"}
  ],
  "input": "SIG",
  "output": "voltage",
  "sweep": {"start": "1", "stop": "1G", "points_per_decade": 100}
}
)";

std::string replaced(std::string text, std::string_view from, std::string_view to)
{
    const auto at = text.find(from);
    EXPECT_NE(at, std::string::npos) << from;
    if (at != std::string::npos)
        text.replace(at, from.size(), to);
    return text;
}

} // namespace

TEST(DesignFile, BaseOfMalformedFilesIsValid)
{
    const auto d = parseDesign(kBase, "base");
    ASSERT_TRUE(d.ok()) << d.errorText();
}

TEST(DesignFile, MalformedSetIsComplete)
{
    const auto cases = malformedCases(false);
    EXPECT_GE(cases.size(), 150u);
    std::size_t files = 0;
    for (const auto &e : fs::directory_iterator(kMalformedDir))
        files += e.path().extension() == ".loopsketch" ? 1 : 0;
    EXPECT_EQ(files, cases.size()) << "every malformed file needs a row in expected.tsv";
}

class MalformedFile : public ::testing::TestWithParam<MalformedCase>
{
};

TEST_P(MalformedFile, IsRejectedNamingWhere)
{
    const MalformedCase &c = GetParam();
    const std::string path = (kMalformedDir / c.file).string();
    ASSERT_TRUE(fs::exists(path)) << path;
    const auto loaded = loadDesign(path);
    ASSERT_FALSE(loaded.ok()) << c.file << " loaded although it is malformed";
    EXPECT_THAT(loaded.errorText(), HasSubstr(c.expected));
    EXPECT_THAT(loaded.errorText(), HasSubstr(c.file));
    const std::string text = readBytes(path);
    for (const Diagnostic &d : loaded.diagnostics()) {
        EXPECT_EQ(d.file, path);
        EXPECT_FALSE(d.message.empty());
        if (text.find("nan") == std::string::npos) {
            EXPECT_THAT(d.message, Not(HasSubstr("nan"))) << "a NaN leaked into the message";
        }
    }

    const auto parsed = parseDesign(text, c.file);
    ASSERT_FALSE(parsed.ok());
    EXPECT_THAT(parsed.errorText(), HasSubstr(c.expected));
}

INSTANTIATE_TEST_SUITE_P(Files, MalformedFile, ::testing::ValuesIn(malformedCases()),
                         [](const auto &row) { return test::caseName(row.param.file); });

// The corpus's hostile but valid files (limits reached exactly, numbers at the edge of double,
// an ideal source) load.
TEST(DesignFile, HostileButValidFilesLoad)
{
    std::size_t valid = 0;
    for (const MalformedCase &c : malformedCases(false)) {
        if (c.exitCode != 0)
            continue;
        ++valid;
        const auto loaded = loadDesign((kMalformedDir / c.file).string());
        EXPECT_TRUE(loaded.ok()) << c.file << ": " << loaded.errorText();
    }
    EXPECT_GE(valid, 10u);
}

class ExampleDesign : public ::testing::TestWithParam<std::string>
{
};

TEST_P(ExampleDesign, LoadsAndValidates)
{
    const auto d = loadDesign((kDesignsDir / GetParam()).string());
    ASSERT_TRUE(d.ok()) << d.errorText();
    EXPECT_TRUE(validateDesign(*d).empty());
    EXPECT_FALSE(d->title.empty());
    EXPECT_FALSE(d->notes.empty());
    EXPECT_NE(d->signalSource(), nullptr);
    EXPECT_NE(d->uniquePart(PartType::GainBlock), nullptr);
    EXPECT_NE(d->uniquePart(PartType::Load), nullptr);
    EXPECT_TRUE(d->specs.gainMin && d->specs.gainMax && d->specs.phaseMarginMinDeg);
}

TEST_P(ExampleDesign, RoundTripsEqualAndByteIdentical)
{
    const fs::path path = kDesignsDir / GetParam();
    const std::string text = readBytes(path);
    const auto d = parseDesign(text, GetParam());
    ASSERT_TRUE(d.ok()) << d.errorText();
    const std::string saved = serializeDesign(*d);
    EXPECT_EQ(saved, text) << "example is not in canonical form";
    const auto again = parseDesign(saved, "again");
    ASSERT_TRUE(again.ok()) << again.errorText();
    EXPECT_TRUE(*again == *d);

    TempDir dir;
    const std::string out = (dir.path() / GetParam()).string();
    const auto ok = saveDesign(*d, out);
    ASSERT_TRUE(ok.ok()) << ok.errorText();
    EXPECT_EQ(readBytes(out), text);
    EXPECT_EQ(dir.entryCount(), 1u) << "no temporary file may remain";
    const auto reloaded = loadDesign(out);
    ASSERT_TRUE(reloaded.ok()) << reloaded.errorText();
    EXPECT_TRUE(*reloaded == *d);
}

INSTANTIATE_TEST_SUITE_P(Resources, ExampleDesign, ::testing::ValuesIn(exampleDesigns()),
                         [](const auto &row) { return caseName(row.param); });

TEST(DesignFile, FourExamplesIncludingDemo)
{
    const auto files = exampleDesigns();
    EXPECT_GE(files.size(), 4u);
    EXPECT_NE(std::find(files.begin(), files.end(), "demo.loopsketch"), files.end());
    const auto demo = loadDesign((kDesignsDir / "demo.loopsketch").string());
    ASSERT_TRUE(demo.ok()) << demo.errorText();
    // shunt-shunt: a current source into the inverting input, feedback from the output
    const Part *src = demo->signalSource();
    ASSERT_NE(src, nullptr);
    EXPECT_EQ(src->type, PartType::ISource);
    EXPECT_EQ(src->node("to"), demo->uniquePart(PartType::GainBlock)->node("in_n"));
    EXPECT_EQ(demo->uniquePart(PartType::GainBlock)->node("in_p"), "0");
}

namespace {

/// The message refusing kBase with `from` replaced by `to`, read as the file `file`; empty
/// (and a test failure) when the changed text is accepted.
std::string refusalOf(const std::string &from, const std::string &to, const std::string &file)
{
    auto r = parseDesign(replaced(std::string(kBase), from, to), file);
    EXPECT_FALSE(r.ok()) << from << " -> " << to;
    return r.ok() ? std::string() : r.errorText();
}

} // namespace

TEST(DesignFile, UnknownKeysAreNamedWithTheirPlace)
{
    EXPECT_THAT(refusalOf("\"points_per_decade\": 100", "\"points_per_decade\": 100, \"step\": 2",
                          "k.loopsketch"),
                HasSubstr("k.loopsketch: field sweep: unknown key \"step\" in sweep"));

    EXPECT_THAT(refusalOf("\"r\": \"10k\"", "\"r\": \"10k\", \"rr\": 1", "k"),
                HasSubstr("k: part RL: unknown key \"rr\""));

    // a key that belongs to another part type is unknown here
    EXPECT_THAT(refusalOf("\"value\": \"2.2p\"", "\"value\": \"2.2p\", \"gain\": 1", "k"),
                HasSubstr("part CF: unknown key \"gain\""));
}

TEST(DesignFile, DuplicateKeysAreNamedAtAnyDepth)
{
    EXPECT_THAT(refusalOf("\"start\": \"1\"", "\"start\": \"1\", \"start\": \"2\"", "d"),
                HasSubstr("field sweep.start: duplicate key \"start\" in sweep"));

    EXPECT_THAT(refusalOf("\"input\": \"SIG\"", "\"input\": \"SIG\", \"input\": \"RF\"", "d"),
                HasSubstr("field input: duplicate key \"input\""));
}

TEST(DesignFile, InvalidUtf8GivesByteOffset)
{
    std::string text(kBase);
    const auto at = text.find("small");
    text[at] = '\xff';
    auto r = parseDesign(text, "u");
    ASSERT_FALSE(r.ok());
    EXPECT_THAT(r.errorText(), HasSubstr("invalid UTF-8 at byte offset " + std::to_string(at)));
    EXPECT_THAT(r.errorText(), HasSubstr("line 3"));

    // overlong "/" (C0 AF), a UTF-16 surrogate (ED A0 80), a cut-off sequence: RFC 3629
    for (std::string bad :
         {std::string("\xc0\xaf"), std::string("\xed\xa0\x80"), std::string("\xe2\x82")}) {
        std::string t(kBase);
        t.replace(at, 1, bad);
        r = parseDesign(t, "u");
        ASSERT_FALSE(r.ok());
        EXPECT_THAT(r.errorText(), HasSubstr("byte offset " + std::to_string(at)));
    }

    // well-formed multi-byte text passes: "µ" (2 bytes), "Ω" (2), "€" (3), "𝄞" (4)
    std::string good(kBase);
    good.replace(at, 5, "\xc2\xb5 \xce\xa9 \xe2\x82\xac \xf0\x9d\x84\x9e");
    const auto ok = parseDesign(good, "u");
    EXPECT_TRUE(ok.ok()) << ok.errorText();
}

TEST(DesignFile, TruncatedJsonGivesLineAndColumn)
{
    const std::string text(kBase.substr(0, kBase.find("\"input\"")));
    const auto r = parseDesign(text, "t.loopsketch");
    ASSERT_FALSE(r.ok());
    EXPECT_THAT(r.errorText(), HasSubstr("t.loopsketch"));
    EXPECT_THAT(r.errorText(), HasSubstr("invalid JSON"));
    EXPECT_THAT(r.errorText(), HasSubstr("line 11, column 3"));
}

TEST(DesignFile, NestingDepthLimit)
{
    // 64 levels (root object plus 63 arrays) are still read as JSON; the type check then
    // rejects the list where a string belongs. 65 levels are refused as too deep.
    auto nested = [](int arrays) {
        return replaced(std::string(kBase), "\"title\": ",
                        "\"notes\": " + std::string(arrays, '[') + std::string(arrays, ']')
                            + ",\n  \"title\": ");
    };
    auto r = parseDesign(nested(63), "n");
    ASSERT_FALSE(r.ok());
    EXPECT_THAT(r.errorText(), HasSubstr("field notes: expected a string, found array"));
    r = parseDesign(nested(64), "n");
    ASSERT_FALSE(r.ok());
    EXPECT_THAT(r.errorText(), HasSubstr("nested deeper than 64 levels"));
}

TEST(DesignFile, TextOverSizeLimitIsRejected)
{
    std::string text(kBase);
    text.insert(text.size() - 2, std::string(kMaxDesignFileBytes, ' '));
    const auto r = parseDesign(text, "big.loopsketch");
    ASSERT_FALSE(r.ok());
    EXPECT_THAT(r.errorText(), HasSubstr("big.loopsketch"));
    EXPECT_THAT(r.errorText(), HasSubstr("16 MiB"));

    // loadDesign checks the size before reading: a sparse 17 MiB file uses no disk space
    TempDir dir;
    const fs::path big = dir.path() / "big.loopsketch";
    {
        std::ofstream(big) << kBase;
    }
    fs::resize_file(big, 17u * 1024u * 1024u);
    const auto loaded = loadDesign(big.string());
    ASSERT_FALSE(loaded.ok());
    EXPECT_THAT(loaded.errorText(), HasSubstr("16 MiB"));
}

TEST(DesignFile, PartCountLimit)
{
    // base has 5 parts; extra resistors from "out" to ground keep every node grounded
    auto withParts = [](std::size_t total) {
        std::string extra;
        for (std::size_t i = 5; i < total; ++i)
            extra += ",\n    {\"id\": \"RX" + std::to_string(i)
                + "\", \"type\": \"resistor\", \"a\": \"out\", "
                  "\"b\": \"0\", \"value\": \"1M\"}";
        return replaced(std::string(kBase), "\"r\": \"10k\"}", "\"r\": \"10k\"}" + extra);
    };
    const auto atLimit = parseDesign(withParts(kMaxParts), "many");
    EXPECT_TRUE(atLimit.ok()) << atLimit.errorText().substr(0, 500);
    const auto over = parseDesign(withParts(kMaxParts + 1), "many");
    ASSERT_FALSE(over.ok());
    EXPECT_THAT(over.errorText(), HasSubstr("10001 parts; at most 10000"));

    // validateDesign holds the same limit for designs built in memory
    Design d = atLimit.ok() ? *atLimit : Design{};
    d.parts.push_back(d.parts.back());
    d.parts.back().id = "RX_extra";
    EXPECT_THAT(toString(validateDesign(d, "mem")), HasSubstr("at most 10000"));
}

TEST(DesignFile, CollectsSeveralProblems)
{
    std::string text = replaced(std::string(kBase), "\"value\": \"100k\"", "\"value\": \"100kk\"");
    text = replaced(text, "\"r\": \"10k\"", "\"r\": \"10k\", \"colour\": \"red\"");
    text = replaced(text, "\"output\": \"voltage\"", "\"output\": \"volts\"");
    const auto r = parseDesign(text, "m");
    ASSERT_FALSE(r.ok());
    EXPECT_GE(r.diagnostics().size(), 3u);
    EXPECT_THAT(r.errorText(), HasSubstr("part RF, field value"));
    EXPECT_THAT(r.errorText(), HasSubstr("part RL: unknown key \"colour\""));
    EXPECT_THAT(r.errorText(), HasSubstr("field output"));
}

TEST(DesignFile, ValuesKeepTheirWrittenForm)
{
    const std::string text
        = replaced(std::string(kBase), "\"value\": \"100k\"", "\"value\": 100000");
    const auto d = parseDesign(text, "v");
    ASSERT_TRUE(d.ok()) << d.errorText();
    const Part *rf = d->findPart("RF");
    ASSERT_NE(rf, nullptr);
    EXPECT_NEAR(rf->number("value"), 1e5, 1e-9);
    EXPECT_TRUE(rf->fields.at("value").text.empty());
    EXPECT_NEAR(d->findPart("CF")->number("value"), 2.2e-12, 1e-24);
    EXPECT_EQ(d->findPart("CF")->fields.at("value").text, "2.2p");
    EXPECT_EQ(serializeDesign(*d), text);
    ASSERT_TRUE(rf->tolerance.has_value());
    EXPECT_NEAR(rf->tolerance->si, 0.01, 1e-15);
    EXPECT_EQ(rf->series, ESeries::E24);
}

TEST(DesignFile, InMemoryDesignRoundTrips)
{
    auto base = parseDesign(kBase, "b");
    ASSERT_TRUE(base.ok()) << base.errorText();
    Design d = *base;
    // numbers without text are written in shortest round-trip form
    d.findPart("RF")->fields["value"] = Value{4.7e3, ""};
    d.findPart("CF")->fields["value"] = Value{1.0 / 3.0 * 1e-11, ""};
    d.notes = "Quotes \" and backslash \\ and a line break\nare escaped; µ stays UTF-8.";
    d.specs.gainMin = Value{-1.1e5, ""};
    d.specs.gainMax = Value{-9e4, "-90k"};
    d.specs.phaseMarginMinDeg = 55.5;
    d.candidates.push_back({"B", {{"RF", Value{1.2e5, "120k"}}, {"CF", Value{1e-12, "1p"}}}});
    SketchLayout sketch;
    sketch.parts["RF"] = {120.5, -40, 90};
    sketch.wires.push_back({{{0, 0}, {10.25, 0}, {10.25, -30}}});
    d.sketch = sketch;
    const std::string text = serializeDesign(d);
    EXPECT_THAT(text, HasSubstr("\"value\": 4700"));
    EXPECT_THAT(text,
                HasSubstr("\"candidates\": [\n    {\"name\": \"B\", \"values\": {\"CF\": \"1p\", "
                          "\"RF\": \"120k\"}}\n  ]"));
    EXPECT_EQ(text.back(), '\n');
    const auto back = parseDesign(text, "rt");
    ASSERT_TRUE(back.ok()) << back.errorText();
    EXPECT_TRUE(*back == d);
    EXPECT_EQ(serializeDesign(*back), text);
}

TEST(DesignFile, GroundSymbolsRoundTripAndAreCheckedWhereTheyStand)
{
    auto base = parseDesign(kBase, "b");
    ASSERT_TRUE(base.ok()) << base.errorText();
    Design d = *base;
    d.sketch = SketchLayout{};
    d.sketch->grounds = {{0, 120}, {-40.5, 260}};
    const std::string text = serializeDesign(d);
    EXPECT_THAT(text, HasSubstr("\"grounds\": [[0, 120], [-40.5, 260]]"));
    const auto back = parseDesign(text, "g");
    ASSERT_TRUE(back.ok()) << back.errorText();
    EXPECT_TRUE(*back == d);
    EXPECT_EQ(serializeDesign(*back), text);

    const auto bad = parseDesign(replaced(text, "[-40.5, 260]", "[-40.5]"), "g.loopsketch");
    ASSERT_FALSE(bad.ok());
    EXPECT_THAT(bad.errorText(), HasSubstr("sketch.grounds[1]"));
}

TEST(DesignFile, MirroredPlacementsRoundTripAndOthersKeepTheirText)
{
    auto base = parseDesign(kBase, "b");
    ASSERT_TRUE(base.ok()) << base.errorText();
    Design d = *base;
    d.sketch = SketchLayout{};
    d.sketch->parts["RF"] = {40, -80, 90, true};
    d.sketch->parts["CF"] = {40, -140, 0, false};
    const std::string text = serializeDesign(d);
    EXPECT_THAT(text,
                HasSubstr("\"RF\": {\"x\": 40, \"y\": -80, \"rotation\": 90, \"mirror\": true}"));
    // An unmirrored part is written as before mirroring existed.
    EXPECT_THAT(text, HasSubstr("\"CF\": {\"x\": 40, \"y\": -140, \"rotation\": 0}"));
    const auto back = parseDesign(text, "m");
    ASSERT_TRUE(back.ok()) << back.errorText();
    EXPECT_TRUE(back->sketch->parts.at("RF").mirror);
    EXPECT_FALSE(back->sketch->parts.at("CF").mirror);
    EXPECT_TRUE(*back == d);
    EXPECT_EQ(serializeDesign(*back), text);

    const auto bad
        = parseDesign(replaced(text, "\"mirror\": true", "\"mirror\": 1"), "m.loopsketch");
    ASSERT_FALSE(bad.ok());
    EXPECT_THAT(bad.errorText(), HasSubstr("part RF, field sketch.mirror: expected true or false"));
}

TEST(DesignFile, DraftRulesAcceptAnUnfinishedCircuitButNotBrokenReferences)
{
    // A design being drawn: no gain block, no load, a dangling node, a shorted part.
    const std::string draft = R"({
  "schema": "loopsketch.design/1",
  "title": "",
  "parts": [
    {"id": "R1", "type": "resistor", "a": "n1", "b": "0", "value": "1k"},
    {"id": "R2", "type": "resistor", "a": "n2", "b": "n2", "value": "10k"}
  ],
  "input": "",
  "output": "voltage",
  "sweep": {"start": "1", "stop": "1G", "points_per_decade": 100}
}
)";
    const auto strict = parseDesign(draft, "d.loopsketch");
    ASSERT_FALSE(strict.ok());
    EXPECT_THAT(strict.errorText(), HasSubstr("no gain block"));
    const auto relaxed = parseDesign(draft, DesignRules::Draft, "d.loopsketch");
    ASSERT_TRUE(relaxed.ok()) << relaxed.errorText();
    EXPECT_EQ(serializeDesign(*relaxed), draft);

    // What names a part must still name one that exists, and values must still parse.
    const auto ghostInput = parseDesign(replaced(draft, "\"input\": \"\"", "\"input\": \"VS7\""),
                                        DesignRules::Draft, "d.loopsketch");
    ASSERT_FALSE(ghostInput.ok());
    EXPECT_THAT(ghostInput.errorText(), HasSubstr("input names part \"VS7\""));
    const auto badValue
        = parseDesign(replaced(draft, "\"10k\"", "\"10kk\""), DesignRules::Draft, "d.loopsketch");
    ASSERT_FALSE(badValue.ok());
    EXPECT_THAT(badValue.errorText(), HasSubstr("part R2"));
}

TEST(DesignFile, OptionalSectionsAreOmitted)
{
    const auto d = parseDesign(kBase, "b");
    ASSERT_TRUE(d.ok()) << d.errorText();
    const std::string text = serializeDesign(*d);
    EXPECT_EQ(text, kBase);
    EXPECT_THAT(text, Not(HasSubstr("\"notes\"")));
    EXPECT_THAT(text, Not(HasSubstr("\"specs\"")));
    EXPECT_THAT(text, Not(HasSubstr("\"candidates\"")));
    EXPECT_THAT(text, Not(HasSubstr("\"sketch\"")));
}

TEST(DesignModel, DefaultsOfAbsentFields)
{
    const auto d = parseDesign(kBase, "b");
    ASSERT_TRUE(d.ok()) << d.errorText();
    const Part *u1 = d->findPart("U1");
    ASSERT_NE(u1, nullptr);
    EXPECT_TRUE(std::isinf(u1->number("r_in"))); // absent r_in: ideal, infinite
    EXPECT_NEAR(u1->number("r_out"), 0.0, 0.0);
    EXPECT_FALSE(u1->has("gbw"));
    EXPECT_NEAR(u1->number("gain"), 1e5, 1e-6); // 100 dB = 10^(100/20)
    EXPECT_EQ(u1->polesHz.size(), 2u);
    EXPECT_TRUE(u1->primaryField().empty());
    EXPECT_EQ(d->findPart("RL")->primaryField(), "r");
    EXPECT_EQ(d->findPart("RF")->primaryField(), "value");
    EXPECT_EQ(d->findPart("RF")->node("b"), "out");
    EXPECT_EQ(d->findPart("RF")->node("in_p"), "");
    EXPECT_EQ(d->signalSource(), d->findPart("SIG"));
    EXPECT_EQ(d->findPart("nothing"), nullptr);
}

TEST(DesignModel, SweepFrequenciesAreLogSpacedWithEnds)
{
    Sweep s; // 1 Hz .. 1 GHz, 100 points per decade
    const auto f = s.frequencies();
    ASSERT_EQ(f.size(), 901u); // round(9 * 100) + 1
    EXPECT_NEAR(f.front(), 1.0, 0.0);
    EXPECT_NEAR(f.back(), 1e9, 0.0);
    EXPECT_NEAR(f[100], 10.0, 1e-9);
    for (std::size_t i = 1; i < f.size(); ++i)
        EXPECT_NEAR(std::log10(f[i] / f[i - 1]), 0.01, 1e-9);

    s.start = {20, "20"};
    s.stop = {20e3, "20k"};
    s.pointsPerDecade = 10;
    EXPECT_EQ(s.frequencies().size(), 31u);
    s.stop = {50e3, "50k"}; // 3.398 decades * 10 = 33.98 -> 34 intervals
    const auto g = s.frequencies();
    ASSERT_EQ(g.size(), 35u);
    EXPECT_NEAR(g.back(), 50e3, 0.0);
}

TEST(DesignModel, SpecTableMatchesTheFileFormat)
{
    EXPECT_EQ(allPartSpecs().size(), 7u);
    const PartSpec &gb = partSpec(PartType::GainBlock);
    EXPECT_EQ(gb.terminals, (std::vector<std::string_view>{"in_p", "in_n", "out"}));
    EXPECT_TRUE(gb.hasFrequencyLists);
    ASSERT_NE(findFieldSpec(PartType::GainBlock, "gain"), nullptr);
    EXPECT_TRUE(findFieldSpec(PartType::GainBlock, "gain")->required);
    EXPECT_EQ(findFieldSpec(PartType::GainBlock, "gain")->range, ValueRange::Any);
    EXPECT_EQ(findFieldSpec(PartType::Resistor, "gain"), nullptr);
    EXPECT_TRUE(partSpec(PartType::ISource).isSignalSource);
    EXPECT_TRUE(partSpec(PartType::VSource).isSignalSource);
    EXPECT_EQ(parsePartType("gain_block"), PartType::GainBlock);
    EXPECT_EQ(parsePartType("opamp"), std::nullopt);
    for (const PartSpec &s : allPartSpecs())
        EXPECT_EQ(parsePartType(s.typeName), s.type);
    EXPECT_TRUE(isValidPartId("R_1-a"));
    EXPECT_FALSE(isValidPartId("R 1"));
    EXPECT_FALSE(isValidPartId(""));
}

TEST(AtomicSave, MissingDirectoryFailsCleanly)
{
    TempDir dir;
    const std::string path = (dir.path() / "no-such-dir" / "x.loopsketch").string();
    const auto d = parseDesign(kBase, "b");
    ASSERT_TRUE(d.ok());
    const auto r = saveDesign(*d, path);
    ASSERT_FALSE(r.ok());
    EXPECT_THAT(r.errorText(), HasSubstr(path));
    EXPECT_THAT(r.errorText(), HasSubstr("No such file or directory"));
    EXPECT_EQ(dir.entryCount(), 0u);

    // parent is a regular file (ENOTDIR); fails for root too
    const fs::path plain = dir.path() / "plain";
    {
        std::ofstream(plain) << "x";
    }
    const auto r2 = saveDesign(*d, (plain / "x.loopsketch").string());
    ASSERT_FALSE(r2.ok());
    EXPECT_THAT(r2.errorText(), HasSubstr("Not a directory"));
    EXPECT_EQ(dir.entryCount(), 1u);
    EXPECT_EQ(readBytes(plain), "x");
}

TEST(AtomicSave, UnwritableDirectoryLeavesNothing)
{
    if (::geteuid() == 0)
        GTEST_SKIP() << "root ignores directory permissions";
    TempDir dir;
    fs::permissions(dir.path(), fs::perms::owner_read | fs::perms::owner_exec);
    const std::string path = (dir.path() / "x.loopsketch").string();
    const auto d = parseDesign(kBase, "b");
    ASSERT_TRUE(d.ok());
    const auto r = saveDesign(*d, path);
    ASSERT_FALSE(r.ok());
    EXPECT_THAT(r.errorText(), HasSubstr(path));
    EXPECT_THAT(r.errorText(), HasSubstr("Permission denied"));
    fs::permissions(dir.path(), fs::perms::owner_all);
    EXPECT_EQ(dir.entryCount(), 0u);
}

TEST(AtomicSave, FailedWriteKeepsExistingFile)
{
    TempDir dir;
    const fs::path path = dir.path() / "keep.loopsketch";
    const std::string original = "previous contents\n";
    {
        std::ofstream(path, std::ios::binary) << original;
    }
    const auto d = parseDesign(kBase, "b");
    ASSERT_TRUE(d.ok());

    // a file-size limit below the design's length makes write() fail part-way (EFBIG)
    test::FileSizeLimit limit(64);
    ASSERT_TRUE(limit.ok());
    const auto r = saveDesign(*d, path.string());
    limit.lift();

    ASSERT_FALSE(r.ok());
    EXPECT_THAT(r.errorText(), HasSubstr(path.string()));
    EXPECT_THAT(r.errorText(), HasSubstr("write failed"));
    EXPECT_EQ(readBytes(path), original);
    EXPECT_EQ(dir.entryCount(), 1u) << "the temporary file must be removed";
}

TEST(AtomicSave, ReplacesExistingFileKeepingMode)
{
    TempDir dir;
    const fs::path path = dir.path() / "mode.txt";
    {
        std::ofstream(path) << "old";
    }
    fs::permissions(path, fs::perms::owner_read | fs::perms::owner_write | fs::perms::group_read);
    const auto r = writeFileAtomically(path.string(), "new text\n");
    ASSERT_TRUE(r.ok()) << r.errorText();
    EXPECT_EQ(readBytes(path), "new text\n");
    EXPECT_EQ(fs::status(path).permissions() & fs::perms::all,
              fs::perms::owner_read | fs::perms::owner_write | fs::perms::group_read);
    EXPECT_EQ(dir.entryCount(), 1u);
}

// `revision` is optional: kept as written (not derived from the title or the notes), written
// back after the title, and absent from a file that had none.
TEST(DesignFile, RevisionIsKeptAsWrittenAndOptional)
{
    auto base = parseDesign(kBase, "b");
    ASSERT_TRUE(base.ok()) << base.errorText();
    EXPECT_TRUE(base->revision.empty());
    EXPECT_THAT(serializeDesign(*base), Not(HasSubstr("\"revision\"")));
    Design d = *base;
    d.notes = "rev Q in the notes is not the revision";
    d.revision = "C.2 (after the bench run)";
    const std::string text = serializeDesign(d);
    EXPECT_THAT(text, HasSubstr("\"revision\": \"C.2 (after the bench run)\""));
    const auto back = parseDesign(text, "rt");
    ASSERT_TRUE(back.ok()) << back.errorText();
    EXPECT_EQ(back->revision, "C.2 (after the bench run)");
    EXPECT_EQ(serializeDesign(*back), text);
    const auto wrongType = parseDesign(
        replaced(text, "\"revision\": \"C.2 (after the bench run)\"", "\"revision\": 3"), "bad");
    ASSERT_FALSE(wrongType.ok());
    EXPECT_THAT(wrongType.errorText(), HasSubstr("revision"));
}
