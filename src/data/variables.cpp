#include "covey/data/variables.hpp"

#include "covey/core/enum_names.hpp"
#include "covey/core/error.hpp"

namespace covey {

namespace {
constexpr EnumName<VariableKind> kVariableKindNames[] = {{VariableKind::kDiscrete, "discrete"},
                                                         {VariableKind::kGaussian, "gaussian"}};
}  // namespace

const char* to_string(VariableKind kind) {
  return enum_name(kVariableKindNames, kind, "gaussian");
}

VariableKind variable_kind_from_string(const std::string& text) {
  if (const auto kind = enum_from_name(kVariableKindNames, text)) return *kind;
  throw InputError("unknown variable kind '" + text + "' (expected " +
                   enum_name_list(kVariableKindNames) + ")");
}

std::vector<std::string> variable_names(const std::vector<Variable>& variables) {
  std::vector<std::string> names;
  names.reserve(variables.size());
  for (const Variable& v : variables) names.push_back(v.name);
  return names;
}

int find_variable(const std::vector<Variable>& variables, const std::string& name,
                  const std::string& context) {
  for (std::size_t i = 0; i < variables.size(); ++i)
    if (variables[i].name == name) return static_cast<int>(i);
  throw InputError(context + ": unknown variable '" + name + "'");
}

}  // namespace covey
