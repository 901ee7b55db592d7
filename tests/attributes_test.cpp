// Attributes: the typed name -> scalar map of score parameters and draws files, and its JSON text.
#include <gtest/gtest.h>

#include <cmath>
#include <limits>
#include <nlohmann/json.hpp>
#include <string>

#include "core/attributes_json.hpp"
#include "covey/core/attributes.hpp"
#include "covey/core/error.hpp"

namespace covey {
namespace {

TEST(Attributes, TypedLookupsSeeOnlyTheirType) {
  const Attributes a = {{"name", std::string("bdeu")}, {"count", 3LL}, {"ess", 1.5}, {"on", true}};
  EXPECT_EQ(attribute_string(a, "name"), "bdeu");
  EXPECT_FALSE(attribute_string(a, "count").has_value());
  EXPECT_EQ(attribute_integer(a, "count"), 3);
  EXPECT_FALSE(attribute_integer(a, "ess").has_value());
  EXPECT_EQ(attribute_number(a, "count"), 3.0);  // an integer is a number
  EXPECT_EQ(attribute_number(a, "ess"), 1.5);
  EXPECT_FALSE(attribute_number(a, "on").has_value());
  EXPECT_FALSE(attribute_number(a, "missing").has_value());
}

TEST(Attributes, JsonTextIsTheSortedObjectNlohmannWrites) {
  // The text score tables and draws files held before the typed map: keys sorted, integers
  // without a decimal point, NaN as null.
  const Attributes a = {{"t", 0.5},
                        {"candidates", std::string("all")},
                        {"rows_dropped", 0LL},
                        {"standardized", false},
                        {"undefined", std::numeric_limits<double>::quiet_NaN()}};
  EXPECT_EQ(
      attributes_to_json(a).dump(),
      R"({"candidates":"all","rows_dropped":0,"standardized":false,"t":0.5,"undefined":null})");
  const Attributes back = attributes_from_json(attributes_to_json(a), "parameters");
  EXPECT_EQ(back.size(), a.size());
  EXPECT_EQ(back.at("candidates"), a.at("candidates"));
  EXPECT_EQ(back.at("rows_dropped"), a.at("rows_dropped"));
  EXPECT_EQ(back.at("standardized"), a.at("standardized"));
  EXPECT_EQ(back.at("t"), a.at("t"));
  EXPECT_TRUE(std::isnan(attribute_number(back, "undefined").value_or(0)));
}

TEST(Attributes, NonScalarJsonIsAnInputErrorNamingTheAttribute) {
  try {
    attributes_from_json(nlohmann::json::parse(R"({"nested":{"a":1}})"), "parameters");
    ADD_FAILURE() << "expected an InputError";
  } catch (const InputError& e) {
    EXPECT_NE(std::string(e.what()).find("attribute 'parameters': 'nested'"), std::string::npos)
        << e.what();
  }
  EXPECT_THROW(attributes_from_json(nlohmann::json::array(), "attributes"), InputError);
}

}  // namespace
}  // namespace covey
