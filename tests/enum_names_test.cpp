// enum_names.hpp: one {value, name} table per enum, read both ways.
#include <gtest/gtest.h>

#include <string_view>

#include "covey/core/enum_names.hpp"
#include "covey/core/error.hpp"
#include "covey/exact/exact_posterior.hpp"
#include "covey/scores/scores.hpp"

namespace covey {
namespace {

enum class Colour { kRed, kGreen, kBlue, kUnnamed };
constexpr EnumName<Colour> kColourNames[] = {
    {Colour::kRed, "red"}, {Colour::kGreen, "green"}, {Colour::kBlue, "blue"}};

TEST(EnumNames, NameAndValueRoundTrip) {
  static_assert(std::string_view(enum_name(kColourNames, Colour::kGreen)) == "green");
  for (const auto& entry : kColourNames)
    EXPECT_EQ(enum_from_name(kColourNames, enum_name(kColourNames, entry.value)), entry.value);
}

TEST(EnumNames, UnknownValueAndUnknownText) {
  EXPECT_STREQ(enum_name(kColourNames, Colour::kUnnamed), "?");
  EXPECT_STREQ(enum_name(kColourNames, Colour::kUnnamed, "none"), "none");
  EXPECT_FALSE(enum_from_name(kColourNames, "Red").has_value());
  EXPECT_EQ(enum_name_list(kColourNames), "red, green or blue");
}

TEST(EnumNames, LibraryEnumsReadBackTheirOwnNames) {
  for (const PriorKind k : {PriorKind::kUniform, PriorKind::kEdgePenalty, PriorKind::kParentCount})
    EXPECT_EQ(prior_kind_from_string(to_string(k)), k);
  for (const ExactRoute r : {ExactRoute::kAuto, ExactRoute::kLayered, ExactRoute::kSigned})
    EXPECT_EQ(exact_route_from_string(to_string(r)), r);
  try {
    exact_route_from_string("nonsense");
    ADD_FAILURE() << "expected an OptionError";
  } catch (const OptionError& e) {
    EXPECT_STREQ(e.what(), "route: expected auto, layered or signed, got 'nonsense'");
  }
}

}  // namespace
}  // namespace covey
