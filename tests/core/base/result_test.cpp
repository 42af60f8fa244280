#include "loopsketch/base/result.h"

#include <gmock/gmock.h>
#include <gtest/gtest.h>

#include <string>

using namespace loopsketch;
using testing::HasSubstr;

namespace {

Diagnostic diagnostic(std::string file, std::string part, std::string field, std::string message)
{
    Diagnostic d;
    d.file = std::move(file);
    d.part = std::move(part);
    d.field = std::move(field);
    d.message = std::move(message);
    return d;
}

} // namespace

TEST(Diagnostic, NamesFilePartAndField)
{
    EXPECT_EQ(diagnostic("bad.loopsketch", "RF", "value", "\"12kk\" is not a value").toString(),
              "bad.loopsketch: part RF, field value: \"12kk\" is not a value");
}

TEST(Diagnostic, LeavesOutEmptyPieces)
{
    EXPECT_EQ(diagnostic("", "RF", "value", "bad").toString(), "part RF, field value: bad");
    EXPECT_EQ(diagnostic("a.loopsketch", "", "value", "bad").toString(),
              "a.loopsketch: field value: bad");
    EXPECT_EQ(diagnostic("a.loopsketch", "RF", "", "bad").toString(), "a.loopsketch: part RF: bad");
    EXPECT_EQ(diagnostic("a.loopsketch", "", "", "bad").toString(), "a.loopsketch: bad");
    EXPECT_EQ(diagnostic("", "", "series", "bad").toString(), "field series: bad");
    EXPECT_EQ(diagnostic("", "", "", "bad").toString(), "bad");
    EXPECT_EQ(diagnostic("", "", "", "").toString(), "");
    EXPECT_EQ(diagnostic("a.loopsketch", "RF", "value", "").toString(),
              "a.loopsketch: part RF, field value");
}

TEST(Diagnostics, JoinOnePerLine)
{
    const Diagnostics list{diagnostic("a.loopsketch", "RF", "value", "first"),
                           diagnostic("a.loopsketch", "CF", "", "second"),
                           diagnostic("", "", "", "third")};
    EXPECT_EQ(toString(list),
              "a.loopsketch: part RF, field value: first\na.loopsketch: part CF: second\nthird");
    EXPECT_EQ(toString(Diagnostics{}), "");
    EXPECT_EQ(toString(Diagnostics{diagnostic("", "", "", "only")}), "only");
    // An empty diagnostic still takes its own line, so line counts match diagnostic counts.
    EXPECT_EQ(toString(Diagnostics{diagnostic("", "", "", ""), diagnostic("", "", "", "b")}),
              "\nb");
}

TEST(Result, HoldsValueOrDiagnostics)
{
    const Result<int> good(42);
    ASSERT_TRUE(good.ok());
    EXPECT_TRUE(static_cast<bool>(good));
    EXPECT_EQ(good.value(), 42);
    EXPECT_EQ(*good, 42);
    EXPECT_TRUE(good.diagnostics().empty());
    EXPECT_EQ(good.errorText(), "");

    const Result<int> bad(diagnostic("f.loopsketch", "R1", "value", "broken"));
    EXPECT_FALSE(bad.ok());
    EXPECT_FALSE(static_cast<bool>(bad));
    ASSERT_EQ(bad.diagnostics().size(), 1u);
    EXPECT_THAT(bad.errorText(), HasSubstr("part R1, field value: broken"));

    const Result<std::string> several(
        Diagnostics{diagnostic("", "", "", "one"), diagnostic("", "", "", "two")});
    EXPECT_FALSE(several.ok());
    EXPECT_EQ(several.errorText(), "one\ntwo");
}
