// Tests of the degree-variance spectrum: degree variances and RMS per coefficient follow their definitions on
// sets with hand-computed coefficients, the power-law fit recovers exact laws and agrees with GSL.
#include "polystokes/sets/spectrum.h"

#include <gsl/gsl_fit.h>

#include <catch2/catch.hpp>
#include <cmath>

#include "polystokes/core/errors.h"
#include "polystokes/sets/conventions.h"
#include "test_support.h"

using namespace polystokes;
using Catch::Matchers::WithinRel;
using polystokes::test::power_law_set;

TEST_CASE("degree variance and RMS per coefficient of hand-written coefficients (Kaula 1966, sec. 1.4)",
          "[spectrum]") {
  // Degree 2: C20 = 3, C21 = 1, S21 = 2, C22 = 0, S22 = 1 -> variance 9 + 1 + 4 + 0 + 1 = 15, over the
  // 2n + 1 = 5 coefficients RMS sqrt(3). Degree 1: C10 = 0.5, C11 = 0, S11 = -0.5 -> 0.5, RMS sqrt(1/6).
  CoefficientSet set = make_empty_set(2);
  set.C(0, 0) = 1;
  set.C(1, 0) = 0.5;
  set.S(1, 1) = -0.5;
  set.C(2, 0) = 3;
  set.C(2, 1) = 1;
  set.S(2, 1) = 2;
  set.S(2, 2) = 1;
  CHECK(degree_variance(set.C, set.S, 0) == 1.0);
  CHECK(degree_variance(set.C, set.S, 1) == 0.5);
  CHECK(degree_variance(set.C, set.S, 2) == 15.0);
  CHECK(degree_rms(set.C, set.S, 0) == 1.0);
  CHECK_THAT(degree_rms(set.C, set.S, 1), WithinRel(std::sqrt(1.0 / 6.0), 1e-15));
  CHECK_THAT(degree_rms(set.C, set.S, 2), WithinRel(std::sqrt(3.0), 1e-15));
  // The set is fully normalized, so degree_spectrum sees the same numbers.
  const DegreeSpectrum spectrum = degree_spectrum(set);
  CHECK(spectrum.variance == std::vector<double>{1.0, 0.5, 15.0});
  CHECK(!spectrum.has_sigmas);
}

TEST_CASE("the RMS per coefficient of an exact power-law set is sqrt(K n^-beta / (2n + 1)) (common practice)",
          "[spectrum]") {
  const double k = 2e-4, beta = 3.3;
  const CoefficientSet set = power_law_set(12, k, beta);
  for (int n = 2; n <= 12; ++n) {
    CAPTURE(n);
    CHECK_THAT(degree_rms(set.C, set.S, n),
               WithinRel(std::sqrt(k * std::pow(n, -beta) / (2 * n + 1)), 1e-13));
  }
}

TEST_CASE(
    "degree variances are sums of squared fully normalized coefficients in any stored convention "
    "(IERS Conventions 2010, ch. 6 normalization)",
    "[spectrum]") {
  // A set stored unnormalized: the fully normalized value is C / N with
  // N = sqrt((2 - delta_m0)(2n + 1)(n - m)!/(n + m)!), the 4pi normalization factor.
  CoefficientSet set = make_empty_set(4);
  set.gm = 1e5;
  set.reference_radius = 700;
  set.convention.normalization = Normalization::unnormalized;
  set.C(0, 0) = 1;
  std::vector<double> expected(5, 0.0);
  expected[0] = 1;
  for (int n = 1; n <= 4; ++n) {
    for (int m = 0; m <= n; ++m) {
      set.C(n, m) = 0.01 * (n + 1) - 0.003 * m;
      set.S(n, m) = m == 0 ? 0 : 0.002 * m * n;
      set.sigma_C(n, m) = 1e-4 * (n + m + 1);
      const double norm =
          std::sqrt((m == 0 ? 1.0 : 2.0) * (2 * n + 1) * std::tgamma(n - m + 1.0) / std::tgamma(n + m + 1.0));
      expected[size_t(n)] += std::pow(set.C(n, m) / norm, 2) + std::pow(set.S(n, m) / norm, 2);
    }
  }
  const DegreeSpectrum spectrum = degree_spectrum(set);
  REQUIRE(spectrum.variance.size() == 5);
  CHECK(spectrum.has_sigmas);
  for (int n = 0; n <= 4; ++n) {
    CAPTURE(n);
    CHECK_THAT(spectrum.variance[size_t(n)], WithinRel(expected[size_t(n)], 1e-13));
  }
  CHECK(spectrum.sigma_variance[0] == 0);
  CHECK(spectrum.sigma_variance[1] > 0);
  CHECK(!degree_spectrum(make_empty_set(3)).has_sigmas);
}

TEST_CASE(
    "the fitted power law recovers K and beta of an exact law sigma_n^2 = K n^-beta "
    "(least-squares line through exact points, common practice)",
    "[spectrum]") {
  for (const auto& [k, beta] :
       std::vector<std::pair<double, double>>{{1e-3, 2.0}, {7.2e-5, 3.7}, {0.31, 4.5}}) {
    CAPTURE(k, beta);
    const CoefficientSet set = power_law_set(30, k, beta);
    const DegreeSpectrum spectrum = degree_spectrum(set);
    for (int n = 2; n <= 30; ++n)
      CHECK_THAT(spectrum.variance[size_t(n)], WithinRel(k * std::pow(n, -beta), 1e-13));
    const PowerLaw law = fit_power_law(spectrum.variance, 2);
    CHECK(std::abs(law.beta - beta) <= 1e-10);
    CHECK_THAT(law.k, WithinRel(k, 1e-10));
    CHECK(law.points == 29);
    CHECK(law.first_degree == 2);
    CHECK(law.last_degree == 30);
    CHECK(law.rms_residual < 1e-12);
  }
}

TEST_CASE("the power-law fit equals GSL's linear least squares on scattered data (gsl_fit_linear)",
          "[spectrum]") {
  std::vector<double> variance(41, 0.0);
  std::vector<double> x, y;
  for (int n = 2; n <= 40; ++n) {
    if (n == 7) continue;  // a zero degree is skipped by the fit
    variance[size_t(n)] = 3e-4 * std::pow(n, -3.1) * std::exp(0.4 * std::sin(1.7 * n));
    x.push_back(std::log(double(n)));
    y.push_back(std::log(variance[size_t(n)]));
  }
  double c0, c1, cov00, cov01, cov11, sumsq;
  gsl_fit_linear(x.data(), 1, y.data(), 1, x.size(), &c0, &c1, &cov00, &cov01, &cov11, &sumsq);
  const PowerLaw law = fit_power_law(variance, 2);
  CHECK_THAT(law.beta, WithinRel(-c1, 1e-12));
  CHECK_THAT(law.k, WithinRel(std::exp(c0), 1e-12));
  CHECK_THAT(law.rms_residual, WithinRel(std::sqrt(sumsq / double(x.size())) / std::log(10.0), 1e-10));
  CHECK(law.points == int(x.size()));
  CHECK_THROWS_AS(fit_power_law({1.0, 0.0, 1e-3}, 2), ConventionError);
}
