// What the text and JSON forms of a coefficient set share: the checks a writer makes, how numbers and text
// are spelled, how table rows become matrices, and the reading of degree 0 in old J-form files.
#pragma once

#include <fmt/format.h>

#include <Eigen/Core>
#include <string>
#include <string_view>
#include <unordered_map>
#include <vector>

#include "polystokes/core/coefficient_set.h"
#include "polystokes/core/errors.h"

namespace polystokes::coefficient_io {

/// Throws ConventionError for mis-sized matrices and OutputError for a non-finite number or a negative
/// sigma: both writers refuse the same sets, so a set that one form holds the other holds too.
void check_writable(const CoefficientSet& set);

/// Shortest decimal that reads back to the same double (fmt's default presentation, Dragonbox).
std::string number(double value);

/// Length of the well-formed UTF-8 sequence starting at s[i] (Unicode Standard, ch. 3, table 3-7
/// "Well-Formed UTF-8 Byte Sequences"), or 0 when the bytes there are not one.
size_t utf8_sequence_length(std::string_view s, size_t i);
bool is_utf8(std::string_view s);

/// A token as shown in a message: quoted and cut short so one bad line cannot flood the terminal.
std::string shown(std::string_view token);

/// Degree 0 is C00 = +1 in every zonal form; J-form sets written by earlier versions stored it as -1
/// (J_0 = -C00), which is the only reading a negative C00 can have there.
CoefficientSet with_positive_degree_zero(CoefficientSet set, const std::string& source_name);

struct Row {
  long line;
  long long n, m;
  double c, s, sigma_c, sigma_s;
};

// Collects table rows, checking each on arrival, and allocates the matrices only once every row of the
// declared degree is present: a header claiming a huge degree then costs nothing.
class TableBuilder {
 public:
  TableBuilder(const std::string& source, int degree) : source_(source), degree_(degree) {}

  void add(const Row& row) {
    if (row.n < 0 || row.m < 0)
      throw format_error(source_, row.line, fmt::format("negative degree or order n={} m={}", row.n, row.m));
    if (row.m > row.n)
      throw format_error(source_, row.line, fmt::format("order m={} exceeds degree n={}", row.m, row.n));
    if (row.n > degree_) {
      throw format_error(source_, row.line,
                         fmt::format("degree n={} exceeds the set's degree {}", row.n, degree_));
    }
    if (row.sigma_c < 0 || row.sigma_s < 0)
      throw format_error(source_, row.line, "sigma_C and sigma_S must not be negative");
    const auto [first, inserted] = first_line_.emplace(key(row.n, row.m), row.line);
    if (!inserted) {
      throw format_error(
          source_, row.line,
          fmt::format("duplicate row n={} m={} (first on line {})", row.n, row.m, first->second));
    }
    rows_.push_back(row);
  }

  /// Fills C, S, sigma_C, sigma_S of set; end_line is where a missing row is reported.
  void finish(CoefficientSet& set, long end_line) const {
    const long long expected = (static_cast<long long>(degree_) + 1) * (degree_ + 2) / 2;
    if (static_cast<long long>(rows_.size()) != expected) {
      // Rows are unique and in range, so a gap exists and lies within the first rows_.size() + 1 keys.
      for (long long n = 0; n <= degree_; ++n) {
        for (long long m = 0; m <= n; ++m) {
          if (!first_line_.count(key(n, m))) {
            throw format_error(
                source_, end_line,
                fmt::format("coefficient table lacks the row n={} m={} ({} of {} rows for degree {})", n, m,
                            rows_.size(), expected, degree_));
          }
        }
      }
    }
    const Eigen::Index size = degree_ + 1;
    set.degree = degree_;
    set.C = Eigen::MatrixXd::Zero(size, size);
    set.S = Eigen::MatrixXd::Zero(size, size);
    set.sigma_C = Eigen::MatrixXd::Zero(size, size);
    set.sigma_S = Eigen::MatrixXd::Zero(size, size);
    for (const Row& row : rows_) {
      set.C(row.n, row.m) = row.c;
      set.S(row.n, row.m) = row.s;
      set.sigma_C(row.n, row.m) = row.sigma_c;
      set.sigma_S(row.n, row.m) = row.sigma_s;
    }
  }

 private:
  static long long key(long long n, long long m) { return n * (n + 1) / 2 + m; }

  const std::string& source_;
  int degree_;
  std::vector<Row> rows_;
  std::unordered_map<long long, long> first_line_;
};

}  // namespace polystokes::coefficient_io
