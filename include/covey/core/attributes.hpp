#pragma once
// Named scalar values stored with a file (a score table's parameters, a draws file's figures):
// a small typed map, so public headers need no JSON type. Files keep them as JSON text (the
// private core/h5.hpp writes and reads them); a NaN double is JSON null.
#include <map>
#include <optional>
#include <string>
#include <string_view>
#include <variant>

namespace covey {

using AttributeValue = std::variant<bool, long long, double, std::string>;
// Ordered by name, as the JSON text lists them.
using Attributes = std::map<std::string, AttributeValue, std::less<>>;

// The value under `name` if it has that type (a number for attribute_number: integer or not).
std::optional<std::string> attribute_string(const Attributes& attributes, std::string_view name);
std::optional<long long> attribute_integer(const Attributes& attributes, std::string_view name);
std::optional<double> attribute_number(const Attributes& attributes, std::string_view name);

}  // namespace covey
