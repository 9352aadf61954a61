// A strict XML 1.0 well-formedness check for the report tests (W3C 2008, Extensible Markup Language 1.0,
// fifth edition): one root element, properly nested and closed tags, unique quoted attributes, only the
// predefined and numeric entity references, legal characters in well-formed UTF-8. No DTD processing.
#pragma once

#include <cctype>
#include <set>
#include <string>
#include <vector>

namespace polystokes::test {

/// Empty if `text` is a well-formed XML document, else the first problem and its byte offset.
inline std::string xml_problem(const std::string& text) {
  size_t i = 0;
  const size_t size = text.size();
  const auto fail = [&](const std::string& what) { return what + " at byte " + std::to_string(i); };
  const auto starts = [&](const char* s) {
    return text.compare(i, std::char_traits<char>::length(s), s) == 0;
  };
  const auto is_name_start = [](unsigned char c) {
    return (c >= 'A' && c <= 'Z') || (c >= 'a' && c <= 'z') || c == '_' || c == ':' || c >= 0x80;
  };
  const auto is_name_char = [&](unsigned char c) {
    return is_name_start(c) || (c >= '0' && c <= '9') || c == '-' || c == '.';
  };
  const auto is_space = [](char c) { return c == ' ' || c == '\t' || c == '\n' || c == '\r'; };

  // Characters (production [2] Char) in well-formed UTF-8.
  for (size_t k = 0; k < size;) {
    const unsigned char c = static_cast<unsigned char>(text[k]);
    if (c < 0x80) {
      if (c < 0x20 && c != '\t' && c != '\n' && c != '\r') {
        i = k;
        return fail("control character");
      }
      ++k;
      continue;
    }
    const size_t length = c >= 0xc2 && c <= 0xdf   ? 2
                          : c >= 0xe0 && c <= 0xef ? 3
                          : c >= 0xf0 && c <= 0xf4 ? 4
                                                   : 0;
    unsigned long code = length == 2 ? c & 0x1f : length == 3 ? c & 0x0f : c & 0x07;
    bool ok = length > 0 && k + length <= size;
    for (size_t j = 1; ok && j < length; ++j) {
      ok = (static_cast<unsigned char>(text[k + j]) & 0xc0) == 0x80;
      code = (code << 6) | (static_cast<unsigned char>(text[k + j]) & 0x3f);
    }
    ok = ok && !(length == 3 && code < 0x800) && !(length == 4 && (code < 0x10000 || code > 0x10ffff)) &&
         !(code >= 0xd800 && code <= 0xdfff) && code != 0xfffe && code != 0xffff;
    if (!ok) {
      i = k;
      return fail("invalid UTF-8 or non-XML character");
    }
    k += length;
  }

  const auto read_name = [&](std::string& name) {
    if (i >= size || !is_name_start(static_cast<unsigned char>(text[i]))) return false;
    const size_t start = i;
    while (i < size && is_name_char(static_cast<unsigned char>(text[i]))) ++i;
    name = text.substr(start, i - start);
    return true;
  };
  // A reference after '&': predefined entity or character reference.
  const auto read_reference = [&]() {
    const size_t end = text.find(';', i);
    if (end == std::string::npos || end - i > 12) return false;
    const std::string body = text.substr(i + 1, end - i - 1);
    static const std::set<std::string> predefined{"amp", "lt", "gt", "quot", "apos"};
    bool ok = predefined.count(body) > 0;
    if (!ok && body.size() >= 2 && body[0] == '#') {
      const bool hex = body[1] == 'x';
      const std::string digits = body.substr(hex ? 2 : 1);
      ok = !digits.empty();
      for (char c : digits)
        ok = ok && (hex ? std::isxdigit(static_cast<unsigned char>(c))
                        : std::isdigit(static_cast<unsigned char>(c)));
    }
    if (ok) i = end + 1;
    return ok;
  };

  std::vector<std::string> open;
  bool root_seen = false;
  while (i < size) {
    if (text[i] != '<') {
      if (text[i] == '&') {
        if (!read_reference()) return fail("bad entity reference");
        continue;
      }
      if (starts("]]>")) return fail("']]>' in text");
      if (open.empty() && !is_space(text[i])) return fail("text outside the root element");
      ++i;
      continue;
    }
    if (starts("<!--")) {
      const size_t end = text.find("--", i + 4);
      if (end == std::string::npos || text.compare(end, 3, "-->") != 0) return fail("bad comment");
      i = end + 3;
      continue;
    }
    if (starts("<![CDATA[")) {
      if (open.empty()) return fail("CDATA outside the root element");
      const size_t end = text.find("]]>", i);
      if (end == std::string::npos) return fail("unterminated CDATA");
      i = end + 3;
      continue;
    }
    if (starts("<?")) {
      const size_t end = text.find("?>", i);
      if (end == std::string::npos) return fail("unterminated processing instruction");
      i = end + 2;
      continue;
    }
    if (starts("<!DOCTYPE")) {
      if (root_seen || !open.empty()) return fail("DOCTYPE after the root element");
      const size_t end = text.find('>', i);
      if (end == std::string::npos || text.find('[', i) < end) return fail("unsupported DOCTYPE");
      i = end + 1;
      continue;
    }
    if (starts("</")) {
      i += 2;
      std::string name;
      if (!read_name(name)) return fail("bad end-tag name");
      while (i < size && is_space(text[i])) ++i;
      if (i >= size || text[i] != '>') return fail("bad end tag");
      if (open.empty() || open.back() != name)
        return fail("end tag </" + name + "> does not match <" +
                    (open.empty() ? std::string() : open.back()) + ">");
      open.pop_back();
      ++i;
      continue;
    }
    ++i;  // start tag
    std::string name;
    if (!read_name(name)) return fail("bad tag name");
    if (open.empty() && root_seen) return fail("second root element <" + name + ">");
    std::set<std::string> attributes;
    bool empty_element = false;
    for (;;) {
      const size_t before = i;
      while (i < size && is_space(text[i])) ++i;
      if (i >= size) return fail("unterminated tag <" + name + ">");
      if (text[i] == '>') {
        ++i;
        break;
      }
      if (starts("/>")) {
        i += 2;
        empty_element = true;
        break;
      }
      if (i == before) return fail("missing space before attribute in <" + name + ">");
      std::string attribute;
      if (!read_name(attribute)) return fail("bad attribute name in <" + name + ">");
      if (!attributes.insert(attribute).second) return fail("repeated attribute " + attribute);
      while (i < size && is_space(text[i])) ++i;
      if (i >= size || text[i] != '=') return fail("attribute " + attribute + " without value");
      ++i;
      while (i < size && is_space(text[i])) ++i;
      if (i >= size || (text[i] != '"' && text[i] != '\'')) return fail("unquoted attribute " + attribute);
      const char quote = text[i++];
      while (i < size && text[i] != quote) {
        if (text[i] == '<') return fail("'<' in attribute " + attribute);
        if (text[i] == '&') {
          if (!read_reference()) return fail("bad entity reference in attribute " + attribute);
          continue;
        }
        ++i;
      }
      if (i >= size) return fail("unterminated attribute " + attribute);
      ++i;
    }
    root_seen = true;
    if (!empty_element) open.push_back(name);
  }
  if (!open.empty()) return fail("unclosed element <" + open.back() + ">");
  if (!root_seen) return fail("no root element");
  return {};
}

}  // namespace polystokes::test
