// The one Legendre recursion (legendre.h) against GSL and Boost.Math, and its factors against the published
// closed forms.
#include "polystokes/harmonics/legendre.h"

#include <gsl/gsl_sf_legendre.h>

#include <boost/math/special_functions/legendre.hpp>
#include <catch2/catch.hpp>
#include <cmath>

using namespace polystokes;
using Catch::Matchers::WithinAbs;

namespace {

// 4pi full normalization factor straight from factorials: N_nm = sqrt((2 - delta_m0)(2n+1)(n-m)!/(n+m)!),
// IERS Conventions 2010, ch. 6, eq. 6.3.
double full_norm(int n, int m) {
  return std::sqrt((m == 0 ? 1.0 : 2.0) * (2 * n + 1) * std::tgamma(n - m + 1.0) / std::tgamma(n + m + 1.0));
}

}  // namespace

TEST_CASE(
    "fully normalized Legendre functions match GSL gsl_sf_legendre_array (FULL, no phase) to degree 200",
    "[legendre]") {
  // GSL's GSL_SF_LEGENDRE_FULL has integral over [-1,1] of P^2 = 1; the geodesy 4pi functions are
  // sqrt(2 (2 - delta_m0)) times larger (GSL manual, "Associated Legendre Polynomials and Spherical
  // Harmonics").
  const int lmax = 200;
  std::vector<double> gsl(gsl_sf_legendre_array_n(lmax));
  for (double t : {-0.93, -0.4, 0.0, 0.25, 0.7071, 0.999}) {
    REQUIRE(gsl_sf_legendre_array_e(GSL_SF_LEGENDRE_FULL, lmax, t, 1.0, gsl.data()) == 0);
    const Eigen::MatrixXd p = fully_normalized_legendre(lmax, t);
    for (int n : {0, 1, 2, 7, 31, 150, 151, 200}) {
      for (int m = 0; m <= n; m += (n > 40 ? 7 : 1)) {
        CAPTURE(t, n, m);
        const double expected =
            std::sqrt(2.0 * (m == 0 ? 1.0 : 2.0)) * gsl[gsl_sf_legendre_array_index(n, m)];
        CHECK_THAT(p(n, m), WithinAbs(expected, 1e-12 * std::max(1.0, std::abs(expected))));
      }
    }
  }
}

TEST_CASE("Legendre functions match Boost.Math legendre_p (Condon-Shortley phase removed) to degree 30",
          "[legendre]") {
  // boost::math::legendre_p(l, m, x) includes the (-1)^m phase (Boost.Math documentation, Legendre).
  for (double t : {-0.6, 0.1, 0.85}) {
    const Eigen::MatrixXd p = fully_normalized_legendre(30, t);
    for (int n = 0; n <= 30; ++n)
      for (int m = 0; m <= n; ++m) {
        CAPTURE(t, n, m);
        const double boost_value = boost::math::legendre_p(n, m, t) * (m % 2 ? -1.0 : 1.0) * full_norm(n, m);
        CHECK_THAT(p(n, m), WithinAbs(boost_value, 1e-12 * std::max(1.0, std::abs(boost_value))));
      }
  }
}

TEST_CASE(
    "the sectorial factors multiply to N_mm (2m-1)!!, the closed form of P_mm (Heiskanen & Moritz 1967)",
    "[legendre]") {
  // Heiskanen & Moritz 1967, Physical Geodesy, eq. 1-62 with the 4pi norm: Pbar_mm(t) = N_mm (2m-1)!! u^m,
  // so the product of the sectorial factors up to m is N_mm (2m-1)!!.
  const LegendreRecursion recursion(40);
  double product = 1, double_factorial = 1;
  for (int m = 1; m <= 40; ++m) {
    product *= recursion.sectorial(m);
    double_factorial *= 2.0 * m - 1.0;
    CAPTURE(m);
    CHECK_THAT(product, WithinAbs(full_norm(m, m) * double_factorial, 1e-12 * product));
  }
}
