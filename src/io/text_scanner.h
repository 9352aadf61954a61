// The one text scanner of polystokes' readers: lines and blank-separated tokens of a whole-file buffer, the
// strict number rule (read_strict_number), and errors in the one shape "FILE:LINE: problem".
#pragma once

#include <charconv>
#include <cstdint>
#include <string>
#include <string_view>

#include "polystokes/core/errors.h"

namespace polystokes {

/// Reads `text` (the bytes of file `path`, which must outlive the scanner) line by line. A line ends at
/// "\n", "\r\n" or a lone "\r"; tokens are separated by blanks (space, tab, vertical tab, form feed).
/// Nothing is allocated; lines and tokens are views into `text`. Typical use:
///
///   TextScanner in(bytes, path);
///   while (in.next_line()) {
///     in.cut_comment('#');
///     if (in.at_line_end()) continue;
///     const std::string_view word = in.token();
///     const double x = in.number("x coordinate");   // throws FormatError "path:LINE: ..." if not a number
///   }
class TextScanner {
 public:
  TextScanner(std::string_view text, const std::string& path) : text_(text), path_(path) {}

  /// Moves to the next line; false (and no current line) at the end of the text.
  bool next_line();
  /// The current line without its line end, as far as not yet consumed by token() and the like.
  std::string_view rest() const { return line_.substr(cursor_); }
  /// The current line's number, 1-based (0 before the first next_line()).
  long line_number() const { return line_number_; }
  /// Drops the current line from the first `marker` on (a comment).
  void cut_comment(char marker);
  /// The next token of the current line; empty when only blanks are left.
  std::string_view token();
  /// True when only blanks are left on the current line.
  bool at_line_end();
  /// Number of tokens left on the current line (does not consume them).
  long tokens_left() const;
  /// The next token read by the strict number rule; throws FormatError "path:LINE: WHAT is missing",
  /// "WHAT 'TOKEN' is not a number" or "WHAT 'TOKEN' is out of the range of double".
  double number(const char* what);
  /// The next token as a whole number in [low, high] (strict number rule, then the range); throws
  /// FormatError naming `what` otherwise.
  std::int64_t integer(const char* what, std::int64_t low, std::int64_t high);
  /// Throws FormatError "path:LINE: extra text 'TOKEN' after WHAT" unless the line is used up.
  void expect_line_end(const char* what);

  /// Byte offset just past the current line's end (where the next line starts), for binary data after a
  /// text header.
  size_t next_offset() const { return next_; }
  /// Bytes of the text not yet reached by next_line().
  size_t remaining_bytes() const { return text_.size() - next_; }

  const std::string& path() const { return path_; }
  /// The first byte of the text (offsets of views into it are taken from here).
  const char* text_start() const { return text_.data(); }
  /// FormatError "path:LINE: problem" for the current line.
  [[noreturn]] void fail(const std::string& problem) const;

 private:
  std::string_view text_;
  const std::string& path_;
  std::string_view line_;
  size_t cursor_ = 0;  ///< into line_
  size_t next_ = 0;    ///< into text_
  long line_number_ = 0;
};

/// True for the blanks that separate tokens.
inline bool is_blank(char c) { return c == ' ' || c == '\t' || c == '\v' || c == '\f'; }

/// std::from_chars for an integer token with an optional leading '+'; false unless the whole token is a
/// decimal integer within the range of T.
template <class T>
bool parse_integer_token(std::string_view token, T& value) {
  if (token.size() > 1 && token[0] == '+' && token[1] != '-') token.remove_prefix(1);
  const auto [end, ec] = std::from_chars(token.data(), token.data() + token.size(), value);
  return !token.empty() && ec == std::errc() && end == token.data() + token.size();
}

}  // namespace polystokes
