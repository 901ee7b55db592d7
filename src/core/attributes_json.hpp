#pragma once
// Attributes (covey/core/attributes.hpp) as a JSON object, for files and the CLI's JSON output.
// Private to covey: public headers carry no JSON type.
#include <nlohmann/json.hpp>
#include <string>

#include "covey/core/attributes.hpp"

namespace covey {

// A NaN or infinite double becomes null (JSON has no such numbers).
nlohmann::json attributes_to_json(const Attributes& attributes);
// Throws InputError naming `name` unless `json` is an object of numbers, strings, booleans and
// nulls (read back as NaN).
Attributes attributes_from_json(const nlohmann::json& json, const std::string& name);

}  // namespace covey
