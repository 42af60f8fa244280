#pragma once

// Checks on text the program writes (JSON, text reports, CSV headers, messages).

#include <gmock/gmock.h>
#include <gtest/gtest.h>

#include <initializer_list>
#include <string>
#include <string_view>

namespace loopsketch::test {

/// Expects `text` to contain each of `parts`; each one missing is a failure of its own.
inline void expectContainsEach(const std::string &text,
                               std::initializer_list<std::string_view> parts)
{
    for (std::string_view part : parts)
        EXPECT_THAT(text, ::testing::HasSubstr(std::string(part)));
}

} // namespace loopsketch::test
