// Test helper: a small XML 1.0 well-formedness check for the SVG figures (no DTDs, no PIs).
#pragma once

#include <cctype>
#include <set>
#include <string>
#include <string_view>
#include <vector>

namespace qamsight::test {

/// Empty if `doc` is one well-formed XML element (with optional comments and whitespace
/// around it), else a description with the byte offset. Checks what SVG output can get wrong
/// (W3C XML 1.0, 5th ed.): balanced and matching tags, quoted attributes without '<' and
/// without duplicates, only the predefined and numeric entity references, no bare '&' or '<',
/// no control characters other than tab, newline and carriage return.
inline std::string xml_problem(std::string_view d) {
  std::size_t i = 0;
  std::vector<std::string> open;
  int roots = 0;
  const auto fail = [&](const std::string& what) { return what + " at byte " + std::to_string(i); };
  const auto name_char = [](char c) {
    return std::isalnum(static_cast<unsigned char>(c)) || c == '-' || c == '_' || c == ':' || c == '.' ||
           (static_cast<unsigned char>(c) >= 0x80);
  };
  const auto reference = [&](std::size_t& j) -> bool {  // at '&'
    const std::size_t end = d.find(';', j);
    if (end == std::string_view::npos || end - j > 10) return false;
    const std::string_view ref = d.substr(j + 1, end - j - 1);
    static const std::set<std::string_view> named = {"amp", "lt", "gt", "quot", "apos"};
    bool ok = named.count(ref) > 0;
    if (!ok && ref.size() >= 2 && ref[0] == '#') {
      const bool hex = ref[1] == 'x';
      const std::string_view digits = ref.substr(hex ? 2 : 1);
      ok = !digits.empty();
      for (char c : digits)
        ok = ok && (hex ? std::isxdigit(static_cast<unsigned char>(c))
                        : std::isdigit(static_cast<unsigned char>(c)));
    }
    j = end + 1;
    return ok;
  };
  while (i < d.size()) {
    const char c = d[i];
    if (static_cast<unsigned char>(c) < 0x20 && c != '\t' && c != '\n' && c != '\r')
      return fail("control character");
    if (c == '<') {
      if (d.compare(i, 4, "<!--") == 0) {
        const std::size_t end = d.find("-->", i + 4);
        if (end == std::string_view::npos) return fail("unterminated comment");
        i = end + 3;
        continue;
      }
      const bool closing = i + 1 < d.size() && d[i + 1] == '/';
      std::size_t j = i + (closing ? 2 : 1);
      const std::size_t name_start = j;
      while (j < d.size() && name_char(d[j])) ++j;
      const std::string name(d.substr(name_start, j - name_start));
      if (name.empty() || std::isdigit(static_cast<unsigned char>(name[0]))) return fail("bad tag name");
      if (closing) {
        while (j < d.size() && std::isspace(static_cast<unsigned char>(d[j]))) ++j;
        if (j >= d.size() || d[j] != '>') return fail("bad closing tag");
        if (open.empty() || open.back() != name) return fail("mismatched </" + name + ">");
        open.pop_back();
        i = j + 1;
        continue;
      }
      if (open.empty() && ++roots > 1) return fail("second root element");
      std::set<std::string> attrs;
      bool self_closing = false;
      for (;;) {
        const std::size_t before = j;
        while (j < d.size() && std::isspace(static_cast<unsigned char>(d[j]))) ++j;
        if (j >= d.size()) return fail("unterminated tag");
        if (d[j] == '>') break;
        if (d[j] == '/') {
          if (j + 1 >= d.size() || d[j + 1] != '>') return fail("bad '/' in tag");
          self_closing = true;
          ++j;
          break;
        }
        if (j == before) return fail("attributes must be separated by space");
        const std::size_t a0 = j;
        while (j < d.size() && name_char(d[j])) ++j;
        const std::string attr(d.substr(a0, j - a0));
        if (attr.empty()) return fail("bad attribute name");
        if (!attrs.insert(attr).second) return fail("duplicate attribute " + attr);
        if (j >= d.size() || d[j] != '=') return fail("attribute without value");
        ++j;
        if (j >= d.size() || (d[j] != '"' && d[j] != '\'')) return fail("unquoted attribute");
        const char q = d[j++];
        while (j < d.size() && d[j] != q) {
          if (d[j] == '<') return fail("'<' in attribute");
          if (d[j] == '&') {
            if (!reference(j)) return fail("bad reference in attribute");
          } else {
            ++j;
          }
        }
        if (j >= d.size()) return fail("unterminated attribute");
        ++j;
      }
      if (!self_closing) open.push_back(name);
      i = j + 1;
      continue;
    }
    if (c == '&') {
      std::size_t j = i;
      if (!reference(j)) return fail("bad reference");
      i = j;
      continue;
    }
    if (open.empty() && !std::isspace(static_cast<unsigned char>(c))) return fail("text outside the root");
    ++i;
  }
  if (!open.empty()) return "unclosed <" + open.back() + ">";
  if (roots != 1) return "no root element";
  return {};
}

}  // namespace qamsight::test
