#include "loopsketch/base/value.h"

#include <gmock/gmock.h>
#include <gtest/gtest.h>

#include <cctype>
#include <cmath>
#include <limits>
#include <ostream>
#include <string>
#include <vector>

using namespace loopsketch;
using testing::HasSubstr;

namespace {

constexpr double kTight = 1e-12;

void expectRelativeNear(double actual, double expected, double relative)
{
    EXPECT_NEAR(actual, expected, relative * std::fabs(expected))
        << "actual " << actual << ", expected " << expected;
}

double parsed(std::string_view text, ValueKind kind, ValueRange range = ValueRange::Positive)
{
    const Result<double> result = parseValue(text, kind, range);
    EXPECT_TRUE(result.ok()) << "\"" << text << "\": " << result.errorText();
    return result.ok() ? result.value() : std::nan("");
}

std::string errorOf(std::string_view text, ValueKind kind, ValueRange range = ValueRange::Positive)
{
    const Result<double> result = parseValue(text, kind, range);
    EXPECT_FALSE(result.ok()) << "\"" << text << "\" was accepted";
    if (result.ok())
        return {};
    EXPECT_EQ(result.diagnostics().size(), 1u);
    EXPECT_TRUE(result.diagnostics().front().file.empty());
    EXPECT_TRUE(result.diagnostics().front().part.empty());
    EXPECT_TRUE(result.diagnostics().front().field.empty());
    return result.errorText();
}

const std::string kEmDash = "\u2014";

} // namespace

// ---- RKM code -------------------------------------------------------------------------

struct RkmCase
{
    const char *code;
    double value;
    ValueKind kind;
};

void PrintTo(const RkmCase &c, std::ostream *os)
{
    *os << '"' << c.code << '"';
}

class RkmCode : public testing::TestWithParam<RkmCase>
{
};

TEST_P(RkmCode, ParsesToValue)
{
    const RkmCase &c = GetParam();
    expectRelativeNear(parsed(c.code, c.kind), c.value, kTight);
}

// IEC 60062 RKM examples as listed in reference-values.md §2.1.
INSTANTIATE_TEST_SUITE_P(
    Iec60062Examples, RkmCode,
    testing::Values(
        // English Wikipedia "RKM code" and KenKundert/rkm_codes README (same list)
        RkmCase{"R47", 0.47, ValueKind::Resistance}, RkmCase{"4R7", 4.7, ValueKind::Resistance},
        RkmCase{"470R", 470.0, ValueKind::Resistance}, RkmCase{"4K7", 4.7e3, ValueKind::Resistance},
        RkmCase{"47K", 47e3, ValueKind::Resistance}, RkmCase{"47K3", 47.3e3, ValueKind::Resistance},
        RkmCase{"470K", 470e3, ValueKind::Resistance}, RkmCase{"4M7", 4.7e6, ValueKind::Resistance},
        // probsee.com/p/RKM_code
        RkmCase{"R10", 0.1, ValueKind::Resistance}, RkmCase{"R300", 0.3, ValueKind::Resistance},
        RkmCase{"1K0", 1e3, ValueKind::Resistance}, RkmCase{"2M2", 2.2e6, ValueKind::Resistance},
        // grokipedia.com/page/RKM_code
        RkmCase{"1R0", 1.0, ValueKind::Resistance}, RkmCase{"2K2", 2.2e3, ValueKind::Resistance},
        // Wikipedia mirror tickerdossier.com/wiki/din-40825
        RkmCase{"8K2", 8.2e3, ValueKind::Resistance}, RkmCase{"1R2", 1.2, ValueKind::Resistance},
        RkmCase{"18R", 18.0, ValueKind::Resistance}, RkmCase{"15M0", 15e6, ValueKind::Resistance},
        // KenKundert/rkm_codes README: from_rkm('6K8') = 6.8k, '6k8' -> 6.8 kOhm
        RkmCase{"6K8", 6.8e3, ValueKind::Resistance}, RkmCase{"6k8", 6.8e3, ValueKind::Resistance},
        // electrostudy.com (BS 1852): 33K, 2k2
        RkmCase{"33K", 33e3, ValueKind::Resistance}, RkmCase{"2k2", 2.2e3, ValueKind::Resistance},
        // probsee.com/p/RKM_code, capacitors
        RkmCase{"10p", 10e-12, ValueKind::Capacitance},
        RkmCase{"4n7", 4.7e-9, ValueKind::Capacitance},
        RkmCase{"1\u00B50", 1e-6, ValueKind::Capacitance},
        // common practice: u for µ, p as the point in 2p2
        RkmCase{"1u0", 1e-6, ValueKind::Capacitance},
        RkmCase{"2p2", 2.2e-12, ValueKind::Capacitance},
        RkmCase{"4u7", 4.7e-6, ValueKind::Capacitance}));

// ---- Engineering notation, units, prefixes ---------------------------------------------

struct ParseCase
{
    const char *text;
    double value;
    ValueKind kind;
    ValueRange range = ValueRange::Positive;
};

void PrintTo(const ParseCase &c, std::ostream *os)
{
    *os << '"' << c.text << '"';
}

class ValueText : public testing::TestWithParam<ParseCase>
{
};

TEST_P(ValueText, ParsesToValue)
{
    const ParseCase &c = GetParam();
    expectRelativeNear(parsed(c.text, c.kind, c.range), c.value, kTight);
}

INSTANTIATE_TEST_SUITE_P(
    EngineeringNotationAndUnits, ValueText,
    testing::Values(
        // SI prefixes (BIPM SI Brochure, from memory): f 1e-15 ... T 1e12; engineering and
        // plain notation, signs and surrounding space (common practice)
        ParseCase{"10k", 10e3, ValueKind::Resistance},
        ParseCase{"2.2p", 2.2e-12, ValueKind::Capacitance},
        ParseCase{"1f", 1e-15, ValueKind::Capacitance},
        ParseCase{"3n", 3e-9, ValueKind::Capacitance}, ParseCase{"1m", 1e-3, ValueKind::Inductance},
        ParseCase{"1M", 1e6, ValueKind::Resistance}, ParseCase{"1G", 1e9, ValueKind::Frequency},
        ParseCase{"1T", 1e12, ValueKind::Plain}, ParseCase{"4.7K", 4.7e3, ValueKind::Resistance},
        ParseCase{"1e3", 1e3, ValueKind::Resistance},
        ParseCase{"2.2e-12", 2.2e-12, ValueKind::Capacitance},
        ParseCase{"1E+3", 1e3, ValueKind::Resistance},
        ParseCase{"1.5e3k", 1.5e6, ValueKind::Resistance}, ParseCase{".5", 0.5, ValueKind::Plain},
        ParseCase{"5.", 5.0, ValueKind::Plain}, ParseCase{"+220k", 220e3, ValueKind::Resistance},
        ParseCase{"-230k", -230e3, ValueKind::Gain, ValueRange::Any},
        ParseCase{"-4k7", -4.7e3, ValueKind::Gain, ValueRange::Any},
        ParseCase{"  47k  ", 47e3, ValueKind::Resistance},
        // a space between number, prefix and unit (common practice)
        ParseCase{"10 k\u03A9", 10e3, ValueKind::Resistance},
        ParseCase{"10 k \u03A9", 10e3, ValueKind::Resistance},
        ParseCase{"1.5 MHz", 1.5e6, ValueKind::Frequency},
        ParseCase{"4.7 \u00B5F", 4.7e-6, ValueKind::Capacitance},
        ParseCase{"100 Hz", 100.0, ValueKind::Frequency},
        ParseCase{"-220k V/V", -220e3, ValueKind::Gain, ValueRange::Any},
        // the unit symbols of each kind (SI Brochure, from memory; Ω as Greek Omega U+03A9 and as
        // OHM SIGN U+2126, ohm spelt out, R as in RKM)
        ParseCase{"10k\u03A9", 10e3, ValueKind::Resistance},
        ParseCase{"10k\u2126", 10e3, ValueKind::Resistance},
        ParseCase{"10kohm", 10e3, ValueKind::Resistance},
        ParseCase{"10 kohms", 10e3, ValueKind::Resistance},
        ParseCase{"10 Ohm", 10.0, ValueKind::Resistance},
        ParseCase{"100R", 100.0, ValueKind::Resistance},
        ParseCase{"1.5pF", 1.5e-12, ValueKind::Capacitance},
        ParseCase{"1 F", 1.0, ValueKind::Capacitance},
        ParseCase{"10mH", 10e-3, ValueKind::Inductance},
        ParseCase{"30MHz", 30e6, ValueKind::Frequency},
        ParseCase{"1kHz", 1e3, ValueKind::Frequency}, ParseCase{"100V/V", 100.0, ValueKind::Gain},
        ParseCase{"4.7k\u03A9", 4.7e3, ValueKind::Resistance}));

TEST(Value, KeepsDecimalValuesExact)
{
    // The prefix is applied to the decimal digits, so "4k7" is the double nearest 4700.
    EXPECT_DOUBLE_EQ(parsed("4k7", ValueKind::Resistance), 4700.0);
    EXPECT_DOUBLE_EQ(parsed("4.7n", ValueKind::Capacitance), 4.7e-9);
    EXPECT_DOUBLE_EQ(parsed("1%", ValueKind::Tolerance), 0.01);
}

TEST(Value, UnitBelongsToItsKindOnly)
{
    // A unit belongs to its kind only.
    EXPECT_THAT(errorOf("1F", ValueKind::Resistance), HasSubstr("unexpected text \"F\""));
    EXPECT_THAT(errorOf("1Hz", ValueKind::Capacitance), HasSubstr("unexpected text \"Hz\""));
    EXPECT_THAT(errorOf("1H", ValueKind::Frequency), HasSubstr("unexpected text \"H\""));
    EXPECT_THAT(errorOf("10\u03A9", ValueKind::Capacitance), HasSubstr("unexpected text"));
    EXPECT_THAT(errorOf("100dB", ValueKind::Resistance), HasSubstr("unexpected text \"dB\""));
    EXPECT_THAT(errorOf("1%", ValueKind::Resistance), HasSubstr("unexpected text \"%\""));
    EXPECT_THAT(errorOf("1V/V", ValueKind::Plain), HasSubstr("unexpected text \"V/V\""));
}

TEST(Value, AcceptsMicroAsMicroSignGreekMuAndU)
{
    expectRelativeNear(parsed("4.7u", ValueKind::Capacitance), 4.7e-6, kTight);
    expectRelativeNear(parsed("4.7\u00B5", ValueKind::Capacitance), 4.7e-6, kTight); // µ MICRO SIGN
    expectRelativeNear(parsed("4.7\u03BC", ValueKind::Capacitance), 4.7e-6, kTight); // μ GREEK MU
    expectRelativeNear(parsed("4u7", ValueKind::Capacitance), 4.7e-6, kTight);
    expectRelativeNear(parsed("4\u00B57", ValueKind::Capacitance), 4.7e-6, kTight);
    expectRelativeNear(parsed("10uH", ValueKind::Inductance), 10e-6, kTight);
}

TEST(Value, TakesRAsDecimalPointForResistanceOnly)
{
    expectRelativeNear(parsed("4R7", ValueKind::Resistance), 4.7, kTight);
    EXPECT_THAT(errorOf("4R7", ValueKind::Capacitance), HasSubstr("unexpected text \"R7\""));
    EXPECT_THAT(errorOf("R47", ValueKind::Capacitance), HasSubstr("\"R47\" is not a value"));
    EXPECT_THAT(errorOf("1R0", ValueKind::Plain), HasSubstr("\"1R0\" is not a value"));
}

// Gain in dB: 20 log10 of the magnitude (voltage ratio; IEC 60027-3, from memory).
TEST(Value, ParsesDecibelGains)
{
    expectRelativeNear(parsed("100dB", ValueKind::Gain), 1e5, kTight);
    expectRelativeNear(parsed("-6dB", ValueKind::Gain), 0.501187233627, 1e-9);
    expectRelativeNear(parsed("20 dB", ValueKind::Gain), 10.0, kTight);
    expectRelativeNear(parsed("0dB", ValueKind::Gain), 1.0, kTight);
    expectRelativeNear(parsed("6.0206dB", ValueKind::Gain), 2.0, 1e-5);
    EXPECT_THAT(errorOf("1kdB", ValueKind::Gain), HasSubstr("prefix cannot be combined with dB"));
    EXPECT_THAT(errorOf("100000dB", ValueKind::Gain), HasSubstr("\"100000dB\" is not a value"));
}

TEST(Value, ParsesPercentAndBareFractionTolerances)
{
    EXPECT_NEAR(parsed("1%", ValueKind::Tolerance), 0.01, 1e-15);
    EXPECT_NEAR(parsed("5 %", ValueKind::Tolerance), 0.05, 1e-15);
    EXPECT_NEAR(parsed("0.1%", ValueKind::Tolerance), 0.001, 1e-15);
    EXPECT_NEAR(parsed("0.05", ValueKind::Tolerance), 0.05, 1e-15);
    EXPECT_NEAR(parsed("0%", ValueKind::Tolerance, ValueRange::NonNegative), 0.0, 1e-15);
    EXPECT_THAT(errorOf("1k%", ValueKind::Tolerance),
                HasSubstr("prefix cannot be combined with %"));
}

TEST(Value, AppliesRanges)
{
    EXPECT_NEAR(parsed("0", ValueKind::Capacitance, ValueRange::NonNegative), 0.0, 1e-300);
    EXPECT_NEAR(parsed("-0", ValueKind::Capacitance, ValueRange::NonNegative), 0.0, 1e-300);
    EXPECT_FALSE(std::signbit(parsed("-0", ValueKind::Plain, ValueRange::Any)));
    expectRelativeNear(parsed("-5k", ValueKind::Plain, ValueRange::Any), -5e3, kTight);

    EXPECT_THAT(errorOf("-5k", ValueKind::Resistance), HasSubstr("\"-5k\""));
    EXPECT_THAT(errorOf("-5k", ValueKind::Resistance), HasSubstr("must be greater than zero"));
    EXPECT_THAT(errorOf("0", ValueKind::Resistance), HasSubstr("\"0\""));
    EXPECT_THAT(errorOf("0", ValueKind::Resistance), HasSubstr("must be greater than zero"));
    EXPECT_THAT(errorOf("0R", ValueKind::Resistance), HasSubstr("must be greater than zero"));
    EXPECT_THAT(errorOf("-1p", ValueKind::Capacitance, ValueRange::NonNegative),
                HasSubstr("\"-1p\""));
    EXPECT_THAT(errorOf("-1p", ValueKind::Capacitance, ValueRange::NonNegative),
                HasSubstr("must not be negative"));
    EXPECT_THAT(errorOf("1e-400", ValueKind::Resistance), HasSubstr("\"1e-400\""));
}

// ---- Rejections ------------------------------------------------------------------------

struct RejectCase
{
    const char *text;
    const char *reason;
};

void PrintTo(const RejectCase &c, std::ostream *os)
{
    *os << '"' << c.text << '"';
}

class ValueRejection : public testing::TestWithParam<RejectCase>
{
};

TEST_P(ValueRejection, QuotesTextAndSaysWhatIsWrong)
{
    const RejectCase &c = GetParam();
    const std::string message = errorOf(c.text, ValueKind::Resistance);
    EXPECT_THAT(message, HasSubstr("\"" + std::string(c.text) + "\" is not a value"));
    EXPECT_THAT(message, HasSubstr(c.reason));
}

INSTANTIATE_TEST_SUITE_P(
    BadText, ValueRejection,
    testing::Values(RejectCase{"", "empty"}, RejectCase{"   ", "empty"},
                    RejectCase{"12kk", "unexpected text \"k\" after \"12k\""},
                    RejectCase{"k", "does not start with a number"},
                    RejectCase{"1e400", "too large (not finite)"},
                    RejectCase{"1e307T", "too large (not finite)"}, RejectCase{"nan", "finite"},
                    RejectCase{"NaN", "finite"}, RejectCase{"inf", "finite"},
                    RejectCase{"-inf", "finite"}, RejectCase{"abc", "does not start with a number"},
                    RejectCase{"4k7k", "unexpected text \"k\" after \"4k7\""},
                    RejectCase{"1..2", "unexpected text \".2\" after \"1.\""},
                    RejectCase{"1.5k7", "unexpected text \"7\" after \"1.5k\""},
                    RejectCase{"4 k7", "unexpected text \"7\" after \"4 k\""},
                    RejectCase{"1e", "unexpected text \"e\" after \"1\""},
                    RejectCase{"--5", "does not start with a number"},
                    RejectCase{".", "does not start with a number"},
                    RejectCase{"1,5k", "unexpected text \",5k\" after \"1\""},
                    RejectCase{"10 k\u03A9 x", "unexpected text \"x\""}));

TEST(Value, RejectionMessageReadsWhole)
{
    EXPECT_EQ(errorOf("12kk", ValueKind::Resistance),
              "\"12kk\" is not a value: unexpected text \"k\" after \"12k\"");
}

// ---- Formatting ------------------------------------------------------------------------

TEST(Value, FormatsEngineeringNotation)
{
    const std::string ohm = unitSymbol(ValueKind::Resistance);
    EXPECT_EQ(formatEngineering(4700.0, 3, ohm), "4.7 k\u03A9");
    EXPECT_EQ(formatEngineering(220e3, 3, ohm), "220 k\u03A9");
    EXPECT_EQ(formatEngineering(1.5e-12, 3, "F"), "1.5 pF");
    EXPECT_EQ(formatEngineering(30e6, 3, "Hz"), "30 MHz");
    EXPECT_EQ(formatEngineering(4.7e-6, 3, "F"), "4.7 \u00B5F");
    EXPECT_EQ(formatEngineering(4700.0), "4.7k");
    EXPECT_EQ(formatEngineering(47.0), "47");
    EXPECT_EQ(formatEngineering(1e-15), "1f");
    EXPECT_EQ(formatEngineering(999e12), "999T");
    EXPECT_EQ(formatEngineering(4.7123e3, 2), "4.7k");
    EXPECT_EQ(formatEngineering(4.7123e3, 5), "4.7123k");
    EXPECT_EQ(formatEngineering(4.7123e3, 1), "5k");
    EXPECT_EQ(formatEngineering(470e3, 2), "470k");
}

TEST(Value, EngineeringNotationRoundsAtDecadeEdges)
{
    EXPECT_EQ(formatEngineering(999.96, 3), "1k");
    EXPECT_EQ(formatEngineering(999.5, 3), "1k");
    EXPECT_EQ(formatEngineering(999.4, 3), "999");
    EXPECT_EQ(formatEngineering(0.99996, 3), "1");
    EXPECT_EQ(formatEngineering(9.9996e-10, 3, "F"), "1 nF");
    EXPECT_EQ(formatEngineering(99.96, 3), "100");
    EXPECT_EQ(formatEngineering(999.96e3, 3, "Hz"), "1 MHz");
}

TEST(Value, EngineeringNotationKeepsSignZeroAndHidesNonFinite)
{
    EXPECT_EQ(formatEngineering(-4700.0), "-4.7k");
    EXPECT_EQ(formatEngineering(-220e3, 3, "V/V"), "-220 kV/V");
    EXPECT_EQ(formatEngineering(-999.96), "-1k");
    EXPECT_EQ(formatEngineering(0.0), "0");
    EXPECT_EQ(formatEngineering(-0.0), "0");
    EXPECT_EQ(formatEngineering(0.0, 3, "F"), "0 F");
    EXPECT_EQ(formatEngineering(std::nan("")), kEmDash);
    EXPECT_EQ(formatEngineering(std::nan(""), 3, "F"), kEmDash);
    // an infinite quantity (an open input) is shown as one, never as a printf "inf"
    EXPECT_EQ(formatEngineering(HUGE_VAL), "\u221E");
    EXPECT_EQ(formatEngineering(-HUGE_VAL, 3, "Ω"), "-\u221E Ω");
    EXPECT_EQ(formatPlain(std::nan("")), kEmDash);
    EXPECT_EQ(formatPlain(-HUGE_VAL), "-\u221E");
    EXPECT_EQ(formatPlain(12.5, 3), "12.5");
    EXPECT_EQ(formatFixed(-std::nan(""), 3), kEmDash);
    EXPECT_EQ(formatFixed(HUGE_VAL, 1), "\u221E");
    EXPECT_EQ(formatFixed(-0.5, 3), "-0.500");
    // a value that rounds to zero carries no sign (-0.0009 dB of |T| = 0.9999 is 0.00 dB)
    EXPECT_EQ(formatFixed(-0.0009, 2), "0.00");
    EXPECT_EQ(formatFixed(-0.0, 1), "0.0");
    EXPECT_EQ(formatFixed(-0.006, 2), "-0.01");
}

TEST(Value, EngineeringNotationOutsidePrefixRangeFallsBackToExponent)
{
    EXPECT_EQ(formatEngineering(1.5e15), "1.5e15");
    EXPECT_EQ(formatEngineering(2e-18, 3, "F"), "2e-18 F");
    expectRelativeNear(parsed(formatEngineering(1.5e15), ValueKind::Plain), 1.5e15, kTight);
}

// 1 to 3 digits before the point for every value between 1 f and 900 T (the digit-count
// rule of engineering notation, common practice).
TEST(Value, EngineeringNotationHasOneToThreeIntegerDigits)
{
    for (double x = 1.234e-15; x < 9e14; x *= 1.37) {
        for (int digits = 1; digits <= 6; ++digits) {
            const std::string text = formatEngineering(x, digits);
            std::size_t integerDigits = 0;
            while (integerDigits < text.size()
                   && std::isdigit(static_cast<unsigned char>(text[integerDigits])))
                ++integerDigits;
            EXPECT_GE(integerDigits, 1u) << text;
            EXPECT_LE(integerDigits, 3u) << text;
            EXPECT_EQ(text.find('e'), std::string::npos) << text;
        }
    }
}

TEST(Value, FormatsValuesOfEachKind)
{
    EXPECT_EQ(formatValue(4700.0, ValueKind::Resistance), "4.7 k\u03A9");
    EXPECT_EQ(formatValue(1.5e-12, ValueKind::Capacitance), "1.5 pF");
    EXPECT_EQ(formatValue(10e-6, ValueKind::Inductance), "10 \u00B5H");
    EXPECT_EQ(formatValue(30e6, ValueKind::Frequency), "30 MHz");
    EXPECT_EQ(formatValue(-220e3, ValueKind::Gain), "-220k V/V");
    EXPECT_EQ(formatValue(0.0, ValueKind::Gain), "0 V/V");
    EXPECT_EQ(formatValue(4700.0, ValueKind::Plain), "4.7k");
    EXPECT_EQ(formatValue(0.01, ValueKind::Tolerance), "1%");
    EXPECT_EQ(formatValue(0.05, ValueKind::Tolerance), "5%");
    EXPECT_EQ(formatValue(0.005, ValueKind::Tolerance), "0.5%");
    EXPECT_EQ(formatValue(0.0025, ValueKind::Tolerance), "0.25%");
    EXPECT_EQ(formatValue(0.07, ValueKind::Tolerance), "7%");
    EXPECT_EQ(formatValue(0.0, ValueKind::Tolerance), "0%");
    EXPECT_EQ(formatValue(std::nan(""), ValueKind::Tolerance), kEmDash);
    EXPECT_EQ(formatValue(std::nan(""), ValueKind::Gain), kEmDash);
    EXPECT_EQ(formatValue(HUGE_VAL, ValueKind::Resistance), "\u221E Ω");
}

TEST(Value, UnitSymbols)
{
    EXPECT_EQ(unitSymbol(ValueKind::Resistance), "\u03A9");
    EXPECT_EQ(unitSymbol(ValueKind::Capacitance), "F");
    EXPECT_EQ(unitSymbol(ValueKind::Inductance), "H");
    EXPECT_EQ(unitSymbol(ValueKind::Frequency), "Hz");
    EXPECT_EQ(unitSymbol(ValueKind::Gain), "V/V");
    EXPECT_EQ(unitSymbol(ValueKind::Tolerance), "%");
    EXPECT_EQ(unitSymbol(ValueKind::Plain), "");
}

// IEC 60062 forms as in reference-values.md §2.1: 1R0 (grokipedia), R47, 4M7 (Wikipedia),
// 2M2, 4n7, 1µ0 written 1u0 (probsee), 18R (Wikipedia mirror); lower-case k as commonly
// written (electrostudy, 2k2); 220k, 10R, 100p follow the 18R / 47K pattern.
TEST(Value, FormatsRkmCode)
{
    EXPECT_EQ(formatRkm(1.0, ValueKind::Resistance), "1R0");
    EXPECT_EQ(formatRkm(4700.0, ValueKind::Resistance), "4k7");
    EXPECT_EQ(formatRkm(0.47, ValueKind::Resistance), "R47");
    EXPECT_EQ(formatRkm(220e3, ValueKind::Resistance), "220k");
    EXPECT_EQ(formatRkm(2.2e6, ValueKind::Resistance), "2M2");
    EXPECT_EQ(formatRkm(4.7e6, ValueKind::Resistance), "4M7");
    EXPECT_EQ(formatRkm(10.0, ValueKind::Resistance), "10R");
    EXPECT_EQ(formatRkm(18.0, ValueKind::Resistance), "18R");
    EXPECT_EQ(formatRkm(47.3e3, ValueKind::Resistance), "47k3");
    EXPECT_EQ(formatRkm(1e3, ValueKind::Resistance), "1k0");
    EXPECT_EQ(formatRkm(0.047, ValueKind::Resistance), "R047");
    EXPECT_EQ(formatRkm(4.7e-9, ValueKind::Capacitance), "4n7");
    EXPECT_EQ(formatRkm(1e-6, ValueKind::Capacitance), "1u0");
    EXPECT_EQ(formatRkm(100e-12, ValueKind::Capacitance), "100p");
    EXPECT_EQ(formatRkm(10e-12, ValueKind::Capacitance), "10p");
    EXPECT_EQ(formatRkm(2.2e-12, ValueKind::Capacitance), "2p2");
    EXPECT_EQ(formatRkm(4.7123e3, ValueKind::Resistance, 2), "4k7");
    EXPECT_EQ(formatRkm(4.7123e3, ValueKind::Resistance, 4), "4k712");
    EXPECT_EQ(formatRkm(999.96, ValueKind::Resistance), "1k0");
    EXPECT_EQ(formatRkm(std::nan(""), ValueKind::Resistance), kEmDash);
}

// Every E24 value over the resistor and capacitor ranges reads back from its RKM code.
TEST(Value, RkmCodeRoundTrips)
{
    const std::vector<double> e24{1.0, 1.1, 1.2, 1.3, 1.5, 1.6, 1.8, 2.0, 2.2, 2.4, 2.7, 3.0,
                                  3.3, 3.6, 3.9, 4.3, 4.7, 5.1, 5.6, 6.2, 6.8, 7.5, 8.2, 9.1};
    for (double mantissa : e24) {
        for (int decade = -2; decade <= 9; ++decade) {
            const double ohms = mantissa * std::pow(10.0, decade);
            const std::string code = formatRkm(ohms, ValueKind::Resistance);
            expectRelativeNear(parsed(code, ValueKind::Resistance), ohms, 1e-12);
        }
        for (int decade = -13; decade <= -1; ++decade) {
            const double farads = mantissa * std::pow(10.0, decade);
            const std::string code = formatRkm(farads, ValueKind::Capacitance);
            expectRelativeNear(parsed(code, ValueKind::Capacitance), farads, 1e-12);
        }
    }
}

// ---- Round trips over the prefix range -------------------------------------------------

class EngineeringRoundTrip : public testing::TestWithParam<double>
{
};

TEST_P(EngineeringRoundTrip, ParsesWhatItFormatsFromFemtoToTera)
{
    const double mantissa = GetParam();
    for (int exponent = -15; exponent <= 12; exponent += 3) {
        const double value = mantissa * std::pow(10.0, exponent);
        for (ValueKind kind : {ValueKind::Resistance, ValueKind::Capacitance, ValueKind::Inductance,
                               ValueKind::Frequency, ValueKind::Plain}) {
            const std::string text = formatValue(value, kind, 3);
            SCOPED_TRACE(text);
            expectRelativeNear(parsed(text, kind), value, 1e-12);
        }
        const std::string bare = formatEngineering(-value, 3);
        expectRelativeNear(parsed(bare, ValueKind::Gain, ValueRange::Any), -value, 1e-12);
        const std::string gain = formatValue(-value, ValueKind::Gain, 3);
        expectRelativeNear(parsed(gain, ValueKind::Gain, ValueRange::Any), -value, 1e-12);
    }
}

INSTANTIATE_TEST_SUITE_P(Mantissas, EngineeringRoundTrip,
                         testing::Values(1.0, 1.5, 2.2, 3.3, 4.7, 6.8, 9.99, 10.0, 47.0, 100.0,
                                         330.0, 999.0));

TEST(Value, ToleranceRoundTrips)
{
    for (double tolerance : {0.001, 0.0025, 0.005, 0.01, 0.02, 0.05, 0.1, 0.2, 0.4}) {
        const std::string text = formatValue(tolerance, ValueKind::Tolerance);
        expectRelativeNear(parsed(text, ValueKind::Tolerance), tolerance, 1e-12);
    }
}

// 20 log10 |g| (voltage-ratio decibels, handbook relation).
TEST(Value, ConvertsToDecibels)
{
    EXPECT_NEAR(toDecibels(1e5), 100.0, 1e-12);
    EXPECT_NEAR(toDecibels(1.0), 0.0, 1e-12);
    EXPECT_NEAR(toDecibels(0.5), -6.020599913, 1e-9);
    EXPECT_NEAR(toDecibels(10.0), 20.0, 1e-12);
    EXPECT_TRUE(std::isinf(toDecibels(0.0)) && toDecibels(0.0) < 0);
    EXPECT_TRUE(std::isinf(toDecibels(-1.0)) && toDecibels(-1.0) < 0);
    EXPECT_TRUE(std::isnan(toDecibels(std::nan(""))));
    expectRelativeNear(parsed("100dB", ValueKind::Gain), 1e5, kTight);
    EXPECT_NEAR(toDecibels(parsed("-6dB", ValueKind::Gain)), -6.0, 1e-12);
}
