// The one Gauss-Legendre rule (harmonics/quadrature.h) against GSL's tabulated fixed-order rules.
#include "harmonics/quadrature.h"

#include <gsl/gsl_integration.h>

#include <catch2/catch.hpp>
#include <cmath>

using namespace polystokes;
using Catch::Matchers::WithinAbs;
using Catch::Matchers::WithinRel;

TEST_CASE(
    "Gauss-Legendre nodes and weights on [0, 1] match GSL gsl_integration_glfixed_table for 1..32 points",
    "[quadrature]") {
  for (int q = 1; q <= 32; ++q) {
    const GaussRule rule = gauss_legendre_unit(q);
    REQUIRE(rule.nodes.size() == size_t(q));
    REQUIRE(rule.weights.size() == size_t(q));
    gsl_integration_glfixed_table* table = gsl_integration_glfixed_table_alloc(size_t(q));
    REQUIRE(table != nullptr);
    // GSL lists its points in its own order; both rules are sets of q (node, weight) pairs. The eigenvector
    // weights agree with GSL's to 1e-12 relative.
    std::vector<std::pair<double, double>> expected(static_cast<size_t>(q));
    for (int i = 0; i < q; ++i)
      REQUIRE(gsl_integration_glfixed_point(0.0, 1.0, size_t(i), &expected[size_t(i)].first,
                                            &expected[size_t(i)].second, table) == 0);
    gsl_integration_glfixed_table_free(table);
    std::sort(expected.begin(), expected.end());
    for (int i = 0; i < q; ++i) {
      CAPTURE(q, i);
      CHECK_THAT(rule.nodes[size_t(i)], WithinAbs(expected[size_t(i)].first, 2e-15));
      CHECK_THAT(rule.weights[size_t(i)], WithinRel(expected[size_t(i)].second, 1e-12));
    }
  }
}

TEST_CASE("a q-point rule integrates x^k exactly for k <= 2q - 1, and x^2q with the closed-form error",
          "[quadrature]") {
  // Remainder of q-point Gauss-Legendre on [0, 1] for f = x^(2q): (q!)^4 / ((2q+1) ((2q)!)^2)
  // (Abramowitz & Stegun 1964, Handbook of Mathematical Functions, 25.4.30, with f^(2q) = (2q)!).
  for (int q = 1; q <= 8; ++q) {
    const GaussRule rule = gauss_legendre_unit(q);
    for (int k = 0; k <= 2 * q; ++k) {
      double sum = 0;
      for (int i = 0; i < q; ++i) sum += rule.weights[size_t(i)] * std::pow(rule.nodes[size_t(i)], k);
      CAPTURE(q, k);
      if (k <= 2 * q - 1) {
        CHECK_THAT(sum, WithinAbs(1.0 / (k + 1), 1e-14));
      } else {
        const double factorial = std::tgamma(q + 1.0), even = std::tgamma(2.0 * q + 1.0);
        const double remainder = std::pow(factorial, 4) / ((2.0 * q + 1.0) * even * even);
        CHECK_THAT(1.0 / (k + 1) - sum, WithinRel(remainder, 1e-5));
      }
    }
  }
}
