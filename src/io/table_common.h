// Helpers shared by the plain-table reader and the table vocabulary (internal to io).
#pragma once

#include <cctype>
#include <string>

namespace polystokes::table_io {

/// `text` without leading and trailing white space (std::isspace).
inline std::string trim(const std::string& text) {
  size_t begin = 0, end = text.size();
  while (begin < end && std::isspace(static_cast<unsigned char>(text[begin]))) ++begin;
  while (end > begin && std::isspace(static_cast<unsigned char>(text[end - 1]))) --end;
  return text.substr(begin, end - begin);
}

}  // namespace polystokes::table_io
