#include "coefficient_set.h"

#include <ctime>

#include "errors.h"

namespace polystokes {

std::string to_string(Normalization normalization) {
  switch (normalization) {
    case Normalization::fully: return "fully";
    case Normalization::unnormalized: return "unnormalized";
    case Normalization::schmidt: return "schmidt";
    case Normalization::orthonormal: return "orthonormal";
  }
  return "fully";
}

Normalization parse_normalization(const std::string& text) {
  if (text == "fully") return Normalization::fully;
  if (text == "unnormalized") return Normalization::unnormalized;
  if (text == "schmidt") return Normalization::schmidt;
  if (text == "orthonormal") return Normalization::orthonormal;
  throw ConventionError("unknown normalization '" + text +
                        "' (expected fully, unnormalized, schmidt or orthonormal)");
}

CoefficientSet make_empty_set(int degree) {
  if (degree < 0) throw ConventionError("degree must be >= 0, got " + std::to_string(degree));
  CoefficientSet set;
  set.degree = degree;
  const int size = degree + 1;
  set.C = Eigen::MatrixXd::Zero(size, size);
  set.S = Eigen::MatrixXd::Zero(size, size);
  set.sigma_C = Eigen::MatrixXd::Zero(size, size);
  set.sigma_S = Eigen::MatrixXd::Zero(size, size);
  return set;
}

std::string utc_timestamp() {
  const std::time_t now = std::time(nullptr);
  std::tm tm{};
  gmtime_r(&now, &tm);  // the reentrant form: std::gmtime shares one buffer between threads
  char buffer[32];
  std::strftime(buffer, sizeof buffer, "%Y-%m-%dT%H:%M:%SZ", &tm);
  return buffer;
}

}  // namespace polystokes
