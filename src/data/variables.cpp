#include "covey/data/variables.hpp"

#include "covey/core/error.hpp"

namespace covey {

const char* to_string(VariableKind kind) {
  return kind == VariableKind::kDiscrete ? "discrete" : "gaussian";
}

VariableKind variable_kind_from_string(const std::string& text) {
  if (text == "discrete") return VariableKind::kDiscrete;
  if (text == "gaussian") return VariableKind::kGaussian;
  throw InputError("unknown variable kind '" + text + "' (expected discrete or gaussian)");
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
