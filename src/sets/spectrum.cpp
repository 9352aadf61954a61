#include "polystokes/sets/spectrum.h"

#include <fmt/format.h>

#include <algorithm>
#include <cmath>

#include "polystokes/core/errors.h"
#include "polystokes/sets/conventions.h"

namespace polystokes {

double degree_variance(const Eigen::MatrixXd& C, const Eigen::MatrixXd& S, int n) {
  double sum = 0;
  for (int m = 0; m <= n; ++m) sum += C(n, m) * C(n, m) + S(n, m) * S(n, m);
  return sum;
}

double degree_rms(const Eigen::MatrixXd& C, const Eigen::MatrixXd& S, int n) {
  return std::sqrt(degree_variance(C, S, n) / (2.0 * n + 1.0));
}

DegreeSpectrum degree_spectrum(const CoefficientSet& set) {
  const CoefficientSet fully = expressed_in(set, Convention{});
  DegreeSpectrum out;
  out.variance.assign(size_t(set.degree + 1), 0.0);
  out.sigma_variance.assign(size_t(set.degree + 1), 0.0);
  for (int n = 0; n <= set.degree; ++n) {
    out.variance[size_t(n)] = degree_variance(fully.C, fully.S, n);
    out.sigma_variance[size_t(n)] = degree_variance(fully.sigma_C, fully.sigma_S, n);
    if (out.sigma_variance[size_t(n)] > 0) out.has_sigmas = true;
  }
  return out;
}

PowerLaw fit_power_law(const std::vector<double>& variance, int min_degree) {
  std::vector<double> x, y;
  PowerLaw law;
  for (size_t n = size_t(std::max(1, min_degree)); n < variance.size(); ++n) {
    if (!(variance[n] > 0) || !std::isfinite(variance[n])) continue;
    if (x.empty()) law.first_degree = int(n);
    law.last_degree = int(n);
    x.push_back(std::log(double(n)));
    y.push_back(std::log(variance[n]));
  }
  if (x.size() < 2)
    throw ConventionError(
        fmt::format("power-law fit needs at least two degrees n >= {} with a positive degree "
                    "variance, found {}",
                    min_degree, x.size()));
  // Least squares line y = a + b x through centred data (normal equations of simple linear regression).
  const double count = double(x.size());
  double mean_x = 0, mean_y = 0;
  for (size_t i = 0; i < x.size(); ++i) {
    mean_x += x[i];
    mean_y += y[i];
  }
  mean_x /= count;
  mean_y /= count;
  double sxx = 0, sxy = 0;
  for (size_t i = 0; i < x.size(); ++i) {
    sxx += (x[i] - mean_x) * (x[i] - mean_x);
    sxy += (x[i] - mean_x) * (y[i] - mean_y);
  }
  const double slope = sxy / sxx;
  const double intercept = mean_y - slope * mean_x;
  double residual2 = 0;
  for (size_t i = 0; i < x.size(); ++i) {
    const double r = y[i] - (intercept + slope * x[i]);
    residual2 += r * r;
  }
  law.beta = -slope;
  law.k = std::exp(intercept);
  law.points = int(x.size());
  law.rms_residual = std::sqrt(residual2 / count) / std::log(10.0);
  return law;
}

}  // namespace polystokes
