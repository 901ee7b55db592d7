#include "covey/core/attributes.hpp"

#include <limits>
#include <variant>

#include "core/attributes_json.hpp"
#include "covey/core/error.hpp"

namespace covey {

namespace {

template <class T>
const T* find_as(const Attributes& attributes, std::string_view name) {
  const auto it = attributes.find(name);
  return it == attributes.end() ? nullptr : std::get_if<T>(&it->second);
}

}  // namespace

std::optional<std::string> attribute_string(const Attributes& attributes, std::string_view name) {
  if (const auto* s = find_as<std::string>(attributes, name)) return *s;
  return std::nullopt;
}

std::optional<long long> attribute_integer(const Attributes& attributes, std::string_view name) {
  if (const auto* i = find_as<long long>(attributes, name)) return *i;
  return std::nullopt;
}

std::optional<double> attribute_number(const Attributes& attributes, std::string_view name) {
  if (const auto* d = find_as<double>(attributes, name)) return *d;
  if (const auto* i = find_as<long long>(attributes, name)) return static_cast<double>(*i);
  return std::nullopt;
}

nlohmann::json attributes_to_json(const Attributes& attributes) {
  nlohmann::json out = nlohmann::json::object();
  // A named loop variable, not a structured binding: clang before 16 cannot capture bindings.
  for (const auto& entry : attributes) {
    const std::string& key = entry.first;
    std::visit([&out, &key](const auto& v) { out[key] = v; }, entry.second);
  }
  return out;
}

Attributes attributes_from_json(const nlohmann::json& json, const std::string& name) {
  if (!json.is_object()) throw InputError("attribute '" + name + "' is not a JSON object");
  Attributes out;
  for (const auto& [key, value] : json.items()) {
    if (value.is_string())
      out[key] = value.get<std::string>();
    else if (value.is_boolean())
      out[key] = value.get<bool>();
    else if (value.is_number_integer())
      out[key] = value.get<long long>();
    else if (value.is_number_float())
      out[key] = value.get<double>();
    else if (value.is_null())  // JSON's spelling of a NaN or infinite number
      out[key] = std::numeric_limits<double>::quiet_NaN();
    else
      throw InputError("attribute '" + name + "': '" + key +
                       "' is not a number, string or boolean");
  }
  return out;
}

}  // namespace covey
