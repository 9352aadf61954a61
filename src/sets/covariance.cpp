#include "polystokes/sets/covariance.h"

#include <fmt/format.h>

#include <cmath>

#include "polystokes/core/errors.h"

namespace polystokes {

namespace {

// A copy of the set's metadata cut at `degree`, all coefficients and sigmas zero.
CoefficientSet zero_set_like(const CoefficientSet& set, int degree) {
  CoefficientSet out = set;
  out.degree = degree;
  for (Eigen::MatrixXd* matrix : {&out.C, &out.S, &out.sigma_C, &out.sigma_S})
    matrix->setZero(degree + 1, degree + 1);
  out.history.clear();
  out.notes.clear();
  return out;
}

double parameter_value(const CoefficientSet& set, const CoefficientParameter& p) {
  return (p.sine ? set.S : set.C)(p.n, p.m);
}

}  // namespace

std::vector<CoefficientParameter> covariance_parameters(int degree) {
  std::vector<CoefficientParameter> out;
  out.reserve(size_t(covariance_parameter_count(std::max(degree, 0))));
  for (int n = 0; n <= degree; ++n)
    for (int m = 0; m <= n; ++m) {
      out.push_back({n, m, false});
      if (m > 0) out.push_back({n, m, true});
    }
  return out;
}

double covariance_bytes(int degree) {
  const double parameters = double(covariance_parameter_count(degree));
  return parameters * parameters * double(sizeof(double));
}

void check_covariance_degree(int degree) {
  if (degree < 0) throw ConventionError(fmt::format("covariance degree must be >= 0, got {}", degree));
  if (covariance_bytes(degree) > kCovarianceByteLimit)
    throw ResourceError(fmt::format(
        "a covariance of degrees 0..{} has {} parameters and needs {:.4g} MB, above the limit of {:.4g} MB",
        degree, covariance_parameter_count(degree), covariance_bytes(degree) / 1e6,
        kCovarianceByteLimit / 1e6));
}

void check_covariance_matches(const CoefficientSet& set, const CoefficientCovariance& covariance,
                              const std::string& what) {
  const Eigen::Index size = covariance_parameter_count(covariance.degree);
  if (covariance.values.rows() != size || covariance.values.cols() != size)
    throw ConventionError(fmt::format("{}: degree {} needs a {} x {} matrix, it holds {} x {}", what,
                                      covariance.degree, size, size, covariance.values.rows(),
                                      covariance.values.cols()));
  if (covariance.degree > set.degree)
    throw ConventionError(
        fmt::format("{} has degree {}, above the set's degree {}", what, covariance.degree, set.degree));
  if (covariance.convention != set.convention)
    throw ConventionError(fmt::format("{} is in the convention {}, the set in {}", what,
                                      describe(covariance.convention), describe(set.convention)));
  if (covariance.reference_radius != set.reference_radius || covariance.gm != set.gm)
    throw ConventionError(
        fmt::format("{} refers to reference radius {} m and GM {} m^3 s^-2, the set to {} m and {} m^3 s^-2",
                    what, covariance.reference_radius, covariance.gm, set.reference_radius, set.gm));
}

void apply_covariance_sigmas(CoefficientSet& set, const CoefficientCovariance& covariance) {
  check_covariance_matches(set, covariance, "the covariance");
  const auto parameters = covariance_parameters(covariance.degree);
  for (size_t i = 0; i < parameters.size(); ++i) {
    const CoefficientParameter& p = parameters[i];
    (p.sine ? set.sigma_S : set.sigma_C)(p.n, p.m) =
        std::sqrt(covariance.values(Eigen::Index(i), Eigen::Index(i)));
  }
}

CoefficientCovariance transform_covariance(const CoefficientCovariance& covariance, const CoefficientSet& set,
                                           const CoefficientMap& map) {
  const int degree = covariance.degree;
  const auto inputs = covariance_parameters(degree);
  const CoefficientSet zero = zero_set_like(set, degree);
  const CoefficientSet zero_image = map(zero);
  if (zero_image.degree > degree)
    throw ConventionError(
        fmt::format("a covariance of degree {} cannot follow a map to degree {}", degree, zero_image.degree));
  if (!zero_image.C.isZero(0) || !zero_image.S.isZero(0))
    throw ConventionError("the covariance can follow linear maps of the coefficients only");
  const auto outputs = covariance_parameters(zero_image.degree);
  // Column j of T: the map applied to the unit set e_j.
  Eigen::MatrixXd T(Eigen::Index(outputs.size()), Eigen::Index(inputs.size()));
  for (size_t j = 0; j < inputs.size(); ++j) {
    CoefficientSet unit = zero;
    (inputs[j].sine ? unit.S : unit.C)(inputs[j].n, inputs[j].m) = 1.0;
    const CoefficientSet image = map(unit);
    for (size_t i = 0; i < outputs.size(); ++i)
      T(Eigen::Index(i), Eigen::Index(j)) = parameter_value(image, outputs[i]);
  }
  CoefficientCovariance out = covariance;
  out.degree = zero_image.degree;
  out.body = zero_image.body;
  out.convention = zero_image.convention;
  out.reference_radius = zero_image.reference_radius;
  out.gm = zero_image.gm;
  // The lower triangle of T C T^T mirrored: the product is symmetric only up to rounding.
  const Eigen::MatrixXd product = T * covariance.values * T.transpose();
  out.values = product.triangularView<Eigen::Lower>();
  out.values.triangularView<Eigen::StrictlyUpper>() = out.values.transpose();
  return out;
}

}  // namespace polystokes
