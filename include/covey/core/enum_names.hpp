#pragma once
// One way to name an enum's values: a constexpr table of {value, name} pairs per enum, read by
// enum_name() (value -> text) and enum_from_name() (text -> value), so each name is written once.
#include <cstddef>
#include <optional>
#include <string>
#include <string_view>

namespace covey {

template <class E>
struct EnumName {
  E value;
  const char* name;
};

// The name of `value` in `table`, or `fallback` for a value the table lacks.
template <class E, std::size_t N>
constexpr const char* enum_name(const EnumName<E> (&table)[N], E value,
                                const char* fallback = "?") {
  for (const EnumName<E>& entry : table)
    if (entry.value == value) return entry.name;
  return fallback;
}

// The value named `text` in `table`, or nothing.
template <class E, std::size_t N>
constexpr std::optional<E> enum_from_name(const EnumName<E> (&table)[N], std::string_view text) {
  for (const EnumName<E>& entry : table)
    if (text == entry.name) return entry.value;
  return std::nullopt;
}

// The table's names for a message: "a, b or c".
template <class E, std::size_t N>
std::string enum_name_list(const EnumName<E> (&table)[N]) {
  std::string out;
  for (std::size_t i = 0; i < N; ++i) {
    if (i > 0) out += i + 1 == N ? " or " : ", ";
    out += table[i].name;
  }
  return out;
}

}  // namespace covey
