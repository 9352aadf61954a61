// Surface environment and equilibrium points of rotating homogeneous bodies against closed forms.
#include "polystokes/field/surface_environment.h"

#include <Eigen/Geometry>
#include <boost/math/special_functions/ellint_rd.hpp>
#include <catch2/catch.hpp>
#include <cmath>

#include "polystokes/core/constants.h"
#include "polystokes/field/equilibrium_points.h"
#include "polystokes/field/polyhedron_gravity.h"
#include "polystokes/mesh/mass_properties.h"
#include "polystokes/mesh/shapes.h"

using namespace polystokes;

namespace {

constexpr double kDensity = 2000.0;

Mesh sphere_mesh(int frequency, double radius) {
  Mesh mesh = make_geodesic_sphere(frequency);
  mesh.vertices *= radius;
  return mesh;
}

SurfaceEnvironment environment_of(const Mesh& mesh, const Spin& spin) {
  const PolyhedronGravity gravity({{mesh, kDensity}});
  return surface_environment(mesh, gravity.evaluate(facet_centroids(mesh), 0), spin);
}

/// Largest slope errors (degrees) of a rotating homogeneous sphere mesh against the closed form of gravity
/// plus centrifugal acceleration (common practice): gravity -GM x / r^3 (shell theorem, with the mesh's own
/// mass), centrifugal omega^2 times the distance from the axis. `latitude`: against the sphere's slope at the
/// facet's latitude phi, tan(slope) = omega^2 r cos(phi) sin(phi) / (GM/r^2 - omega^2 r cos^2(phi)), which
/// also counts the facet's tilt from the sphere's normal (first order in the facet size); `facet`: the
/// closed-form acceleration against the facet's own normal, which leaves only the gravity's discretisation
/// error (second order).
struct SlopeErrors {
  double latitude = 0, facet = 0;
};

SlopeErrors sphere_slope_errors(int frequency, double radius, double period) {
  const Mesh mesh = sphere_mesh(frequency, radius);
  Spin spin;
  spin.period = period;
  const SurfaceEnvironment env = environment_of(mesh, spin);
  const double gm = gravitational_constant * kDensity * mass_properties({{mesh, 1.0}}).volume;
  const double w2 = std::pow(2 * M_PI / period, 2);
  SlopeErrors worst;
  for (Eigen::Index f = 0; f < mesh.faces.rows(); ++f) {
    const Eigen::Vector3d x = env.facets.centroid.row(f).transpose();
    const double r = x.norm(), s = x.z() / r, c = std::sqrt(1 - s * s);
    const double at_latitude =
        std::atan2(w2 * r * c * std::abs(s), gm / (r * r) - w2 * r * c * c) * 180 / M_PI;
    const Eigen::Vector3d total = -gm * x / (r * r * r) + w2 * Eigen::Vector3d(x.x(), x.y(), 0);
    const Eigen::Vector3d down = -env.facets.normal.row(f).transpose();
    const double at_facet = std::atan2(total.cross(down).norm(), total.dot(down)) * 180 / M_PI;
    worst.latitude = std::max(worst.latitude, std::abs(env.facets.slope[f] - at_latitude));
    worst.facet = std::max(worst.facet, std::abs(env.facets.slope[f] - at_facet));
  }
  return worst;
}

/// Acceleration of a homogeneous triaxial ellipsoid (semi-axes a, b, c; m) at an exterior point, from its
/// closed-form potential (MacMillan 1930, The Theory of the Potential, ch. 2; Chandrasekhar 1969, Ellipsoidal
/// Figures of Equilibrium, ch. 3): g_i = -2 pi G rho a b c x_i int_lambda^inf du / ((a_i^2 + u) Delta(u)),
/// Delta(u) = sqrt((a^2+u)(b^2+u)(c^2+u)), lambda the largest root of sum x_i^2 / (a_i^2 + lambda) = 1; with
/// Carlson's R_D (Carlson 1995, Numer. Algorithms 10; Boost.Math ellint_rd) the integral is
/// (2/3) R_D(a_j^2 + lambda, a_k^2 + lambda, a_i^2 + lambda).
Eigen::Vector3d ellipsoid_acceleration(const Eigen::Vector3d& x, const Eigen::Vector3d& axes) {
  const Eigen::Vector3d a2 = axes.cwiseProduct(axes);
  auto level = [&](double lambda) {
    return x.x() * x.x() / (a2.x() + lambda) + x.y() * x.y() / (a2.y() + lambda) +
           x.z() * x.z() / (a2.z() + lambda) - 1.0;
  };
  double lo = 0, hi = x.squaredNorm();
  for (int k = 0; k < 200; ++k) {
    const double mid = 0.5 * (lo + hi);
    (level(mid) > 0 ? lo : hi) = mid;
  }
  const double lambda = 0.5 * (lo + hi);
  const double scale = -2 * M_PI * gravitational_constant * kDensity * axes.prod() * 2.0 / 3.0;
  using boost::math::ellint_rd;
  return scale * Eigen::Vector3d(x.x() * ellint_rd(a2.y() + lambda, a2.z() + lambda, a2.x() + lambda),
                                 x.y() * ellint_rd(a2.x() + lambda, a2.z() + lambda, a2.y() + lambda),
                                 x.z() * ellint_rd(a2.x() + lambda, a2.y() + lambda, a2.z() + lambda));
}

}  // namespace

TEST_CASE(
    "area statistics: weighted mean, extremes and a histogram whose shares sum to one (common practice)",
    "[surface_environment]") {
  Eigen::VectorXd values(4), area(4);
  values << 1, 2, 3, 10;
  area << 1, 1, 2, 4;
  const AreaStatistics stats = area_statistics(values, area, 0, 10, 5);
  CHECK(stats.mean == Approx((1 + 2 + 6 + 40) / 8.0).epsilon(1e-15));
  CHECK(stats.minimum == 1);
  CHECK(stats.maximum == 10);
  REQUIRE(stats.area_fraction.size() == 5);
  CHECK(stats.area_fraction[0] == Approx(1 / 8.0));  // 1
  CHECK(stats.area_fraction[1] == Approx(3 / 8.0));  // 2, 3
  CHECK(stats.area_fraction[4] == Approx(4 / 8.0));  // 10 goes to the last bin
}

TEST_CASE(
    "rotating homogeneous sphere: slope at each latitude against the closed form, shrinking with "
    "refinement",
    "[surface_environment]") {
  // omega^2 R / g about 0.3: a fast rotator, slopes up to about 9 degrees at mid-latitudes.
  const double radius = 1000, gm = gravitational_constant * kDensity * 4 * M_PI / 3 * std::pow(radius, 3);
  const double period = 2 * M_PI / std::sqrt(0.3 * gm / std::pow(radius, 3));
  const SlopeErrors coarse = sphere_slope_errors(4, radius, period),
                    middle = sphere_slope_errors(8, radius, period),
                    fine = sphere_slope_errors(16, radius, period);
  CAPTURE(coarse.latitude, middle.latitude, fine.latitude, coarse.facet, middle.facet, fine.facet);
  // Measured: latitude 0.91, 0.49, 0.25 degrees; facet 0.24, 0.070, 0.019 degrees.
  CHECK(fine.latitude < 0.6 * middle.latitude);
  CHECK(middle.latitude < 0.6 * coarse.latitude);
  CHECK(fine.facet < 0.35 * middle.facet);
  CHECK(middle.facet < 0.35 * coarse.facet);
  CHECK(fine.facet < 0.03);
}

TEST_CASE(
    "sphere: launch speed is the escape speed sqrt(2 GM / r) without rotation and sqrt(2 GM/r - omega^2 "
    "r^2) at the equator of a rotating one; dynamic heights follow W = -GM/r - omega^2 d^2 / 2",
    "[surface_environment]") {
  // Escape speed and the potential GM/r of a homogeneous sphere outside it: shell theorem (common practice).
  const double radius = 800;
  const Mesh mesh = sphere_mesh(12, radius);
  const double gm = gravitational_constant * kDensity * mass_properties({{mesh, 1.0}}).volume;
  Spin slow;
  slow.period = 1e15;
  const SurfaceEnvironment still = environment_of(mesh, slow);
  for (Eigen::Index f = 0; f < mesh.faces.rows(); f += 37) {
    const double r = still.facets.centroid.row(f).norm();
    CHECK(still.facets.launch_speed[f] == Approx(std::sqrt(2 * gm / r)).epsilon(3e-3));
  }
  Spin spin;
  spin.period = 6 * 3600;
  const SurfaceEnvironment env = environment_of(mesh, spin);
  const double w = 2 * M_PI / spin.period;
  int equator = 0;
  Eigen::VectorXd closed(mesh.faces.rows());
  for (Eigen::Index f = 0; f < mesh.faces.rows(); ++f) {
    const Eigen::Vector3d x = env.facets.centroid.row(f).transpose();
    closed[f] = (-gm / x.norm() - 0.5 * w * w * x.head<2>().squaredNorm() - env.reference_potential) /
                env.reference_gravity;
    if (std::abs(x.z()) < 0.02 * x.norm()) {
      ++equator;
      CHECK(env.facets.launch_speed[f] ==
            Approx(std::sqrt(2 * gm / x.norm() - w * w * x.squaredNorm())).epsilon(3e-3));
    }
  }
  REQUIRE(equator > 0);
  const double range = closed.maxCoeff() - closed.minCoeff();
  CAPTURE(range, (env.facets.height - closed).cwiseAbs().maxCoeff());
  CHECK((env.facets.height - closed).cwiseAbs().maxCoeff() < 0.05 * range);
  CHECK(env.height.maximum - env.height.minimum == Approx(range).epsilon(0.05));
}

TEST_CASE(
    "linear stability: a potential minimum without rotation oscillates, a saddle departs (common "
    "practice)",
    "[surface_environment]") {
  const LinearStability bowl = linear_stability(-Eigen::Matrix3d::Identity(), Eigen::Vector3d::Zero());
  CHECK(bowl.stable());
  CHECK(bowl.imaginary_pairs == 3);
  const LinearStability saddle =
      linear_stability(Eigen::Vector3d(1, -1, -1).asDiagonal(), Eigen::Vector3d::Zero());
  CHECK_FALSE(saddle.stable());
  CHECK(saddle.real_pairs == 1);
  CHECK(saddle.describe() == "unstable (1 real pair, 2 imaginary pairs)");
}

TEST_CASE(
    "rotating homogeneous triaxial ellipsoid: equilibrium points on the long and intermediate axes and "
    "their stability, against the closed-form potential (Carlson R_D via Boost.Math)",
    "[surface_environment]") {
  const Eigen::Vector3d axes(1000, 700, 500);
  const Mesh mesh = make_ellipsoid(5, axes.x(), axes.y(), axes.z());
  // The spin rate that puts the long-axis point of the exact ellipsoid at x = 1500 m.
  const double x_long = 1500;
  const double omega = std::sqrt(-ellipsoid_acceleration(Eigen::Vector3d(x_long, 0, 0), axes).x() / x_long);
  // The intermediate-axis point of the exact ellipsoid, by bisection on g_y + omega^2 y = 0.
  double lo = axes.y() * 1.0001, hi = 5 * axes.x();
  for (int k = 0; k < 200; ++k) {
    const double mid = 0.5 * (lo + hi);
    const double net = ellipsoid_acceleration(Eigen::Vector3d(0, mid, 0), axes).y() + omega * omega * mid;
    (net < 0 ? lo : hi) = mid;
  }
  const double y_mid = 0.5 * (lo + hi);

  Spin spin;
  spin.period = 2 * M_PI / omega;
  const std::vector<DensityRegion> regions{{mesh, kDensity}};
  const PolyhedronGravity gravity(regions);
  const FieldFunction field = [&](const Points& points) { return gravity.evaluate(points, 0); };
  EquilibriumSearch search;
  search.azimuths = 24;
  search.radii = 12;
  const double gm = gravitational_constant * mass_properties(regions).mass;
  const EquilibriumResult result = equilibrium_points(mesh, field, gm, spin, search);
  REQUIRE(result.points.size() == 4);

  // The closed-form Hessian of the effective potential by central differences of the closed-form
  // acceleration, for the stability type of the exact ellipsoid's points.
  auto closed_hessian = [&](const Eigen::Vector3d& x) {
    Eigen::Matrix3d h;
    const double step = 1e-3;
    for (int k = 0; k < 3; ++k) {
      const Eigen::Vector3d dx = step * Eigen::Vector3d::Unit(k);
      h.col(k) = (ellipsoid_acceleration(x + dx, axes) - ellipsoid_acceleration(x - dx, axes)) / (2 * step);
    }
    const Eigen::Vector3d w(0, 0, omega);
    return Eigen::Matrix3d(h + w.squaredNorm() * Eigen::Matrix3d::Identity() - w * w.transpose());
  };
  for (const EquilibriumPoint& p : result.points) {
    CAPTURE(p.position.transpose(), x_long, y_mid);
    CHECK(std::abs(p.position.z()) < 1e-6 * x_long);
    const bool on_long_axis = std::abs(p.position.x()) > std::abs(p.position.y());
    const Eigen::Vector3d expected = on_long_axis
                                         ? Eigen::Vector3d(std::copysign(x_long, p.position.x()), 0, 0)
                                         : Eigen::Vector3d(0, std::copysign(y_mid, p.position.y()), 0);
    // The mesh of 20 480 facets is inscribed in the ellipsoid: a volume deficit of about 1e-3.
    CHECK((p.position - expected).norm() < 2e-3 * x_long);
    const LinearStability exact = linear_stability(closed_hessian(expected), Eigen::Vector3d(0, 0, omega));
    CHECK(p.stability.real_pairs == exact.real_pairs);
    CHECK(p.stability.complex_quartets == exact.complex_quartets);
    CHECK(p.stability.imaginary_pairs == exact.imaginary_pairs);
    // Jacobi constant -U - 1/2 omega^2 d^2 with the mesh's own potential at the point.
    Points one(1, 3);
    one.row(0) = p.position.transpose();
    CHECK(p.jacobi == Approx(-gravity.evaluate(one, 1)[0].potential -
                             0.5 * omega * omega * p.position.head<2>().squaredNorm())
                          .epsilon(1e-12));
  }
  // The long-axis points of an elongated body are saddles of the effective potential: always unstable.
  for (const EquilibriumPoint& p : result.points)
    if (std::abs(p.position.x()) > std::abs(p.position.y())) CHECK_FALSE(p.stability.stable());
}
