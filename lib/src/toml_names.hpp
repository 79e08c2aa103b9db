// toml_names: how the TOML readers (link scenarios, EVM line-ups) name a value's type in messages.
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

}  // namespace qamsight::detail
