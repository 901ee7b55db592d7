#pragma once
// Variables of a problem: names, kinds and (for discrete ones) their levels.
#include <string>
#include <vector>

namespace covey {

enum class VariableKind { kDiscrete, kGaussian };

const char* to_string(VariableKind kind);
VariableKind variable_kind_from_string(const std::string& text);  // throws InputError

struct Variable {
  std::string name;
  VariableKind kind = VariableKind::kDiscrete;
  std::vector<std::string> levels;  // discrete only, in code order
};

// The names, in order.
std::vector<std::string> variable_names(const std::vector<Variable>& variables);

// Index of the variable with this name; throws InputError naming `context` when unknown.
int find_variable(const std::vector<Variable>& variables, const std::string& name,
                  const std::string& context);

}  // namespace covey
