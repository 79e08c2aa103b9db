// toml_names: what the TOML readers (link scenarios, EVM line-ups) share: how a value's type is
// named in messages, and how a number is read.
#pragma once

#include <string>
#include <toml++/toml.h>

namespace qamsight::detail {

/// "a string", "an integer", "a float", "a boolean", "an array", "a table", "a date", "a time" or "a date-time".
inline std::string toml_type_name(const toml::node& n) {
  switch (n.type()) {
    case toml::node_type::string:
      return "a string";
    case toml::node_type::integer:
      return "an integer";
    case toml::node_type::floating_point:
      return "a float";
    case toml::node_type::boolean:
      return "a boolean";
    case toml::node_type::array:
      return "an array";
    case toml::node_type::table:
      return "a table";
    case toml::node_type::date:
      return "a date";
    case toml::node_type::time:
      return "a time";
    case toml::node_type::date_time:
      return "a date-time";
    default:
      return "nothing";
  }
}

/// The value of a number node (integer or float; the caller has checked is_number()). An integer
/// is converted to the nearest double: toml++'s own value<double>() refuses integers that a double
/// cannot hold exactly (beyond 2^53) and returns nothing.
inline double toml_number(const toml::node& n) {
  if (const auto* i = n.as_integer()) return static_cast<double>(i->get());
  return n.as_floating_point()->get();
}

}  // namespace qamsight::detail
