// OptionError: library messages name fields; a caller spells them its own way (the CLI as flags).
#include <gtest/gtest.h>

#include <string>

#include "covey/core/error.hpp"

namespace covey {
namespace {

TEST(OptionError, WhatShowsTheBareFieldNames) {
  const OptionError e("{max_indegree} must be 0 or more, got " + std::to_string(-1));
  EXPECT_STREQ(e.what(), "max_indegree must be 0 or more, got -1");
  EXPECT_EQ(e.message_template(), "{max_indegree} must be 0 or more, got -1");
}

TEST(OptionError, RenderSpellsEveryFieldThroughTheCallersMapping) {
  const OptionError e("{bge.alpha_w} must exceed {n} + 1");
  const auto flag = [](const std::string& field) { return "--" + field + "!"; };
  EXPECT_EQ(e.render(flag), "--bge.alpha_w! must exceed --n! + 1");
}

TEST(OptionError, AnUnclosedBraceStaysAsWritten) {
  const OptionError e("{k} bad {tail");
  EXPECT_STREQ(e.what(), "k bad {tail");
}

TEST(OptionError, IsAnInputError) {
  try {
    throw OptionError("{route}: expected auto");
  } catch (const InputError& e) {
    EXPECT_STREQ(e.what(), "route: expected auto");
  }
}

}  // namespace
}  // namespace covey
