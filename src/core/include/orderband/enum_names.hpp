// The names of enums that appear in files and outputs: one table per enum, written next to the
// enum as a specialisation of EnumNames, and these functions to read and write them.
#pragma once

#include <array>
#include <optional>
#include <string>
#include <string_view>
#include <utility>

#include "orderband/error.hpp"

namespace orderband {

/// Specialised next to each enum with
///   static constexpr std::array<std::pair<E, std::string_view>, N> names{...};
template <class E>
struct EnumNames;

/// The name of a value (every value has one; a missing one is a programming error).
template <class E>
std::string_view name_of(E value) {
  for (const auto& [v, n] : EnumNames<E>::names)
    if (v == value) return n;
  fail("internal: an enum value without a name");
}

/// The value of a name, if it is one.
template <class E>
std::optional<E> enum_from_name(std::string_view name) {
  for (const auto& [v, n] : EnumNames<E>::names)
    if (n == name) return v;
  return std::nullopt;
}

/// The names for a message: "\"a\", \"b\" or \"c\"".
template <class E>
std::string enum_name_list() {
  std::string out;
  const auto& names = EnumNames<E>::names;
  for (size_t k = 0; k < names.size(); ++k) {
    if (k) out += k + 1 == names.size() ? " or " : ", ";
    out += '"' + std::string(names[k].second) + '"';
  }
  return out;
}

}  // namespace orderband
