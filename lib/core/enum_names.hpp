// Internal: the one mechanism for the names of gridtruth's enums. Each enum has a table of {value, name}; its
// to_string() and parse_*() read that table, so a name is written once and both directions agree.
#pragma once

#include <array>
#include <cstddef>
#include <string>
#include <string_view>

#include "gridtruth/error.hpp"

namespace gridtruth::detail {

template <class E>
struct EnumName {
  E value;
  std::string_view name;
};

/// The name of `value` in `table`; "" for a value the table lacks (a value outside the enum).
template <class E, std::size_t N>
constexpr std::string_view name_of(const std::array<EnumName<E>, N>& table, E value) noexcept {
  for (const EnumName<E>& entry : table)
    if (entry.value == value) return entry.name;
  return {};
}

/// "a, b or c": the table's names, for messages.
template <class E, std::size_t N>
std::string name_list(const std::array<EnumName<E>, N>& table) {
  std::string list;
  for (std::size_t k = 0; k < N; ++k) {
    if (k > 0) list += k + 1 == N ? " or " : ", ";
    list += table[k].name;
  }
  return list;
}

/// The value named exactly `name`; otherwise Error(invalid_argument) "unknown <what> '<name>': use a, b or c".
template <class E, std::size_t N>
E value_named(const std::array<EnumName<E>, N>& table, std::string_view name, std::string_view what) {
  for (const EnumName<E>& entry : table)
    if (entry.name == name) return entry.value;
  throw Error(ErrorCode::invalid_argument, "unknown " + std::string(what) + " '" + std::string(name) +
                                               "': use " + name_list(table));
}

}  // namespace gridtruth::detail
