#include "coefficient_set.h"

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

}  // namespace polystokes
