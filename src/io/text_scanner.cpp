#include "io/text_scanner.h"

#include <fmt/format.h>

#include <cmath>

#include "polystokes/core/quantity.h"

namespace polystokes {

bool TextScanner::next_line() {
  if (next_ >= text_.size()) {
    line_ = {};
    cursor_ = 0;
    return false;
  }
  const char* begin = text_.data() + next_;
  const char* end = text_.data() + text_.size();
  const char* p = begin;
  while (p < end && *p != '\n' && *p != '\r') ++p;
  line_ = std::string_view(begin, static_cast<size_t>(p - begin));
  if (p < end && *p == '\r') {
    ++p;
    if (p < end && *p == '\n') ++p;
  } else if (p < end) {
    ++p;
  }
  next_ = static_cast<size_t>(p - text_.data());
  cursor_ = 0;
  ++line_number_;
  return true;
}

void TextScanner::cut_comment(char marker) {
  const size_t at = line_.find(marker, cursor_);
  if (at != std::string_view::npos) line_ = line_.substr(0, at);
}

std::string_view TextScanner::token() {
  const size_t size = line_.size();
  size_t i = cursor_;
  while (i < size && is_blank(line_[i])) ++i;
  const size_t start = i;
  while (i < size && !is_blank(line_[i])) ++i;
  cursor_ = i;
  return line_.substr(start, i - start);
}

bool TextScanner::at_line_end() {
  while (cursor_ < line_.size() && is_blank(line_[cursor_])) ++cursor_;
  return cursor_ == line_.size();
}

long TextScanner::tokens_left() const {
  long count = 0;
  bool in_token = false;
  for (size_t i = cursor_; i < line_.size(); ++i) {
    const bool blank = is_blank(line_[i]);
    if (!blank && !in_token) ++count;
    in_token = !blank;
  }
  return count;
}

double TextScanner::number(const char* what) {
  const std::string_view text = token();
  if (text.empty()) fail(fmt::format("{} is missing", what));
  double value = 0;
  switch (read_strict_number(text, value)) {
    case NumberStatus::ok:
      return value;
    case NumberStatus::out_of_range:
      fail(fmt::format("{} '{}' is out of the range of double", what, text));
    case NumberStatus::not_finite:
    case NumberStatus::malformed:
      break;
  }
  fail(fmt::format("{} '{}' is not a number", what, text));
}

std::int64_t TextScanner::integer(const char* what, std::int64_t low, std::int64_t high) {
  const std::string_view text = token();
  if (text.empty()) fail(fmt::format("{} is missing", what));
  std::int64_t value = 0;
  if (parse_integer_token(text, value) && value >= low && value <= high) return value;
  fail(fmt::format("{} '{}' is not a whole number from {} to {}", what, text, low, high));
}

void TextScanner::expect_line_end(const char* what) {
  if (at_line_end()) return;
  fail(fmt::format("extra text '{}' after {}", token(), what));
}

void TextScanner::fail(const std::string& problem) const { throw format_error(path_, line_number_, problem); }

}  // namespace polystokes
