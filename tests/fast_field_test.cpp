// The fast polyhedron field (fast multipole method) against the direct sum of Werner & Scheeres 1997 at
// accuracies 1e-6, 1e-10 and 1e-12, on a sphere, a cube-like body, a box and a torus (not star-shaped), at
// points on faces, edges and vertices, near the surface, inside and far away; Poisson's and Laplace's
// equations; Newton's shell theorem; the Stokes series outside the Brillouin sphere; thread independence.
#include "polystokes/field/fast_field.h"

#include <Eigen/Geometry>
#include <catch2/catch.hpp>
#include <cmath>
#include <vector>

#include "field/solid_harmonics.h"
#include "field/triangle_rule.h"
#include "polystokes/core/constants.h"
#include "polystokes/core/errors.h"
#include "polystokes/field/series.h"
#include "polystokes/harmonics/compute.h"
#include "polystokes/mesh/shapes.h"
#include "test_support.h"

using namespace polystokes;

namespace {

constexpr double kG = gravitational_constant;

// Failure messages show small relative errors instead of rounding them to 0 in fixed notation.
const bool kPrecision = (Catch::StringMaker<double>::precision = 20, true);

// Points that probe every regime: each vertex, edge midpoint and face centroid of a sample of faces, points
// just above and below them (1e-6 and 1e-3 of the face size along the normal), the body scaled down
// (inside), and points at 3 and 10^3 body radii.
Points probe_points(const Mesh& mesh, int stride) {
  std::vector<Eigen::Vector3d> out;
  const Eigen::Vector3d center = mesh.vertices.colwise().mean().transpose();
  double radius = 0;
  for (Eigen::Index v = 0; v < mesh.vertices.rows(); ++v)
    radius = std::max(radius, (mesh.vertices.row(v).transpose() - center).norm());
  for (Eigen::Index f = 0; f < mesh.faces.rows(); f += stride) {
    const Eigen::Vector3d a = mesh.vertices.row(mesh.faces(f, 0)).transpose(),
                          b = mesh.vertices.row(mesh.faces(f, 1)).transpose(),
                          c = mesh.vertices.row(mesh.faces(f, 2)).transpose();
    const Eigen::Vector3d n = (b - a).cross(c - a).normalized(), centroid = (a + b + c) / 3;
    const double size = (b - a).norm();
    out.insert(out.end(), {a, (a + b) / 2, centroid});
    for (const double h : {1e-6, 1e-3, -1e-3, 0.3}) out.push_back(centroid + h * size * n);
    out.push_back(center + 0.5 * (centroid - center));
    out.push_back(center + 3.0 * (centroid - center));
    out.push_back(center + 1e3 * (centroid - center));
  }
  Points points(long(out.size()), 3);
  for (size_t i = 0; i < out.size(); ++i) points.row(long(i)) = out[i].transpose();
  return points;
}

struct Errors {
  double potential = 0, acceleration = 0, gradient = 0;
};

// Largest errors of the fast field against the direct sum, relative to GM/R_B (potential), max(|a|,
// GM/R_B^2) (acceleration) and max(|T|, GM/R_B^3) (gradient, where finite).
Errors compare(const FastPolyhedronField& fast, const Points& points, FastFieldReport* report = nullptr) {
  const FastFieldResult result = fast.evaluate(points);
  if (report) *report = result.report;
  const std::vector<FieldValue> direct = fast.direct().evaluate(points);
  const double u_scale = result.report.potential_scale, a_scale = result.report.acceleration_scale;
  const double t_scale = a_scale * a_scale / u_scale;
  Errors e;
  for (size_t i = 0; i < direct.size(); ++i) {
    const FieldValue &x = result.values[i], &y = direct[i];
    e.potential = std::max(e.potential, std::abs(x.potential - y.potential) / u_scale);
    e.acceleration = std::max(
        e.acceleration, (x.acceleration - y.acceleration).norm() / std::max(y.acceleration.norm(), a_scale));
    if (y.gradient.allFinite())
      e.gradient =
          std::max(e.gradient, (x.gradient - y.gradient).norm() / std::max(y.gradient.norm(), t_scale));
  }
  return e;
}

}  // namespace

TEST_CASE("solid harmonic translations reproduce the sum of q/|x - y| (common practice)", "[fast_field]") {
  // The multipole of point charges, shifted to a parent centre, turned into a local expansion and shifted
  // again, against the plain sum of q/|x - y| and its gradient: every translation identity in one chain.
  const int p = 18;
  const ExpansionShape shape{p, 1};
  std::vector<Complex> scratch(size_t(harmonic_count(p + 2)));
  const Eigen::Vector3d child(0.3, 0.1, 0.0), parent(0.1, 0.2, -0.1), local(3.0, 1.0, 2.0),
      leaf(3.2, 0.9, 2.1);
  std::vector<Complex> m_child(size_t(shape.size())), m_parent(m_child.size()), l_cell(m_child.size()),
      l_leaf(m_child.size()), at(size_t(harmonic_count(1))), direct_at(at.size());
  std::vector<Eigen::Vector3d> sources;
  std::vector<double> charges;
  for (int i = 0; i < 20; ++i) {
    sources.push_back(child +
                      0.3 * Eigen::Vector3d(std::sin(1.3 * i), std::cos(2.1 * i), std::sin(0.7 * i + 1)));
    charges.push_back(std::cos(0.9 * i));
    add_point_multipole(shape, sources.back() - child, &charges.back(), m_child.data(), scratch.data());
  }
  translate_multipole(shape, child - parent, m_child.data(), m_parent.data(), scratch.data());
  std::vector<double> unfolded(size_t(2 * (p + 1) * (p + 1)));
  unfold_multipole(shape, m_parent.data(), unfolded.data());
  multipole_to_local(shape, local - parent, p, p, unfolded.data(), l_cell.data(), scratch.data());
  translate_local(shape, leaf - local, p, l_cell.data(), l_leaf.data(), scratch.data());
  const Eigen::Vector3d x = leaf + Eigen::Vector3d(0.05, -0.1, 0.08);
  translate_local(shape, x - leaf, 1, l_leaf.data(), at.data(), scratch.data());
  multipole_to_local(shape, x - parent, 1, p + 1, unfolded.data(), direct_at.data(), scratch.data());
  double sum = 0;
  Eigen::Vector3d gradient = Eigen::Vector3d::Zero();
  for (size_t i = 0; i < sources.size(); ++i) {
    const Eigen::Vector3d d = x - sources[i];
    sum += charges[i] / d.norm();
    gradient -= charges[i] * d / std::pow(d.norm(), 3);
  }
  for (const auto& expansion : {at, direct_at}) {
    double value;
    Eigen::Vector3d g;
    local_value_gradient(expansion.data(), value, g);
    CHECK(std::abs(value - sum) <= 1e-12 * std::abs(sum));
    CHECK((g - gradient).norm() <= 1e-11 * gradient.norm());
  }
}

TEST_CASE("triangle moments by the barycentric recursion equal a Gauss product rule exact to their degree",
          "[fast_field]") {
  // The collapsed Gauss-Legendre product rule integrates polynomials of degree 2q - 2 exactly (Stroud 1971,
  // Approximate Calculation of Multiple Integrals, the conical product rule): an independent way to the same
  // moments.
  const int p = 24;
  const ExpansionShape shape{p, 2};
  const Eigen::Vector3d vertex[3] = {Eigen::Vector3d(0.3, -0.2, 0.5), Eigen::Vector3d(-0.4, 0.1, 0.2),
                                     Eigen::Vector3d(0.1, 0.6, -0.3)};
  const double area = 0.5 * (vertex[1] - vertex[0]).cross(vertex[2] - vertex[0]).norm();
  const double densities[2] = {1.5, -0.7};
  std::vector<Complex> exact(size_t(shape.size())), quadrature(exact.size());
  std::vector<Complex> scratch(3 * exact.size(), Complex(1e300, -1e300));  // garbage must not matter
  add_triangle_multipole(shape, vertex, area, densities, exact.data(), scratch.data());
  for (const TriangleNode& node : collapsed_triangle_rule(p / 2 + 2)) {
    const double charges[2] = {densities[0] * node.weight * area, densities[1] * node.weight * area};
    add_point_multipole(shape,
                        vertex[0] + node.a * (vertex[1] - vertex[0]) + node.b * (vertex[2] - vertex[0]),
                        charges, quadrature.data(), scratch.data());
  }
  for (int c = 0; c < 2; ++c)
    for (int n = 0; n <= p; ++n)
      for (int m = 0; m <= n; ++m) {
        const size_t i = size_t(c * shape.count() + harmonic_index(n, m));
        CAPTURE(c, n, m);
        // Moments of degree n are of size |vertex|^n / n!; compare at that scale.
        double scale = std::abs(densities[c]) * area;
        for (int k = 1; k <= n; ++k) scale *= 0.8 / k;
        CHECK(std::abs(exact[i] - quadrature[i]) <= 1e-13 * scale);
      }
}

TEST_CASE("fast field equals the direct sum within the accuracy: sphere, cube-like body, box, torus",
          "[fast_field]") {
  const double rho = 2100.0;
  const Mesh sphere =
      transformed(make_icosphere(4), 700.0 * Eigen::Matrix3d::Identity(), Eigen::Vector3d(50, -20, 10));
  const Mesh cube_like = make_deformed_sphere(
      4, [](const Eigen::Vector3d& u) -> Eigen::Vector3d { return 500.0 * u / u.cwiseAbs().maxCoeff(); });
  const Mesh box = make_box(800.0, 500.0, 300.0);
  const Mesh ring = test::torus_mesh(1000.0, 300.0, 96, 32);
  for (const Mesh* mesh : {&sphere, &cube_like, &box, &ring}) {
    const Points points = probe_points(*mesh, mesh->faces.rows() > 100 ? 97 : 1);
    for (const double accuracy : {1e-6, 1e-10, 1e-12}) {
      FastFieldOptions options;
      options.accuracy = accuracy;
      const FastPolyhedronField fast({DensityRegion{*mesh, rho}}, options);
      FastFieldReport report;
      const Errors e = compare(fast, points, &report);
      CAPTURE(mesh->source, mesh->faces.rows(), points.rows(), accuracy, report.order,
              report.multipole_to_local, report.multipole_to_point, report.near_pairs, report.bound_potential,
              report.bound_acceleration, e.gradient);
      CHECK(e.potential <= accuracy);
      CHECK(e.acceleration <= accuracy);
      CHECK(report.bound_potential <= accuracy);
      CHECK(report.bound_acceleration <= accuracy);
      CHECK(report.checked_acceleration <= accuracy);
      WARN("gradient " << e.gradient << " order " << report.order << " m2l " << report.multipole_to_local
                       << " m2p " << report.multipole_to_point << " near " << report.near_pairs);
    }
  }
}

TEST_CASE(
    "fast field: Poisson inside (trace -4 pi G rho), Laplace outside, on the torus (Werner & Scheeres 1997)",
    "[fast_field]") {
  // The Laplacian of the potential of a homogeneous body is -4 pi G rho inside and 0 outside (Werner &
  // Scheeres 1997, sec. 2.5; Kellogg 1929, Foundations of Potential Theory, ch. VI). The gradient is not part
  // of the a-priori bound, so the check is at 1e-8 of G rho.
  const double rho = 1800.0;
  const Mesh ring = test::torus_mesh(1000.0, 300.0, 96, 32);
  FastFieldOptions options;
  options.accuracy = 1e-10;
  const FastPolyhedronField fast({DensityRegion{ring, rho}}, options);
  Points points(6, 3);
  points << 1000, 0, 0, -700, 700, 100, 0, -1100, -150,  // inside the tube
      0, 0, 0, 0, 0, 500, 2500, 300, -100;               // the hole's centre, above it, outside
  const FastFieldResult result = fast.evaluate(points);
  const double poisson = 4 * M_PI * kG * rho;
  for (int i = 0; i < 6; ++i) {
    CAPTURE(i);
    const double expected = i < 3 ? -poisson : 0.0;
    CHECK(std::abs(result.values[size_t(i)].gradient.trace() - expected) <= 1e-8 * poisson);
  }
}

TEST_CASE(
    "fast field of a fine sphere mesh obeys the shell theorem outside (Newton 1687, Principia I, prop. 71)",
    "[fast_field]") {
  // Outside a homogeneous sphere the field is that of its mass at the centre. The icosahedral mesh has no
  // harmonic of degree 1 to 5 (common practice), so with the mesh's own volume the point mass holds to about
  // (R/r)^6 times the mesh's degree-6 term: below 1e-6 at twice the radius.
  const double rho = 2500.0, radius = 800.0;
  const Mesh sphere =
      transformed(make_icosphere(5), radius * Eigen::Matrix3d::Identity(), Eigen::Vector3d::Zero());
  const double gm = kG * rho * test::volume_of(sphere);
  const FastPolyhedronField fast({DensityRegion{sphere, rho}});
  Points points(4, 3);
  points << 2 * radius, 0, 0, 0, -3 * radius, 0, 1000 * radius, 200 * radius, 0, -2 * radius, 2 * radius,
      radius;
  const FastFieldResult result = fast.evaluate(points);
  for (int i = 0; i < 4; ++i) {
    const Eigen::Vector3d x = points.row(i).transpose();
    const double r = x.norm();
    CAPTURE(i, r);
    CHECK(std::abs(result.values[size_t(i)].potential - gm / r) <= 1e-6 * gm / r);
    CHECK((result.values[size_t(i)].acceleration + gm * x / (r * r * r)).norm() <= 1e-6 * gm / (r * r));
  }
}

TEST_CASE("fast field agrees with the Stokes series outside the Brillouin sphere (series to degree 30)",
          "[fast_field]") {
  // The exterior series of the body's exact coefficients converges to the same field outside the Brillouin
  // sphere (Hobson 1931, The Theory of Spherical and Ellipsoidal Harmonics); at 2 R_B the degree-30
  // truncation is below 1e-9 for this smooth body.
  const double rho = 2000.0;
  const Mesh body = make_ellipsoid(4, 1000.0, 800.0, 600.0);
  const std::vector<DensityRegion> regions{{body, rho}};
  ComputeOptions compute;
  compute.degree = 30;
  const CoefficientSet set = compute_coefficients(regions, compute);
  const SeriesModel series(set);
  const FastPolyhedronField fast(regions);
  Points points(3, 3);
  points << 2000, 0, 0, 0, 1400, 1400, -900, 300, -1800;
  const FastFieldResult result = fast.evaluate(points);
  for (int i = 0; i < 3; ++i) {
    const Eigen::Vector3d x = points.row(i).transpose();
    const FieldValue s = series.evaluate(to_set_frame(set, x));
    const Eigen::Vector3d a = set.axes_in_mesh * result.values[size_t(i)].acceleration;
    CAPTURE(i);
    CHECK((s.acceleration - a).norm() <= 1e-9 * a.norm());
  }
}

TEST_CASE("fast field gives identical results for any thread count", "[fast_field]") {
  // Common practice for this library: every sum in a fixed order whatever the threads.
  const Mesh ring = test::torus_mesh(1000.0, 300.0, 64, 24);
  const Points points = probe_points(ring, 13);
  std::vector<std::vector<FieldValue>> runs;
  for (const int threads : {1, 2, 3}) {
    FastFieldOptions options;
    options.threads = threads;
    runs.push_back(FastPolyhedronField({DensityRegion{ring, 2000.0}}, options).evaluate(points).values);
  }
  for (size_t i = 0; i < runs[0].size(); ++i)
    for (size_t r = 1; r < runs.size(); ++r) {
      CHECK(runs[r][i].potential == runs[0][i].potential);
      CHECK(runs[r][i].acceleration == runs[0][i].acceleration);
      // At edges and vertices the gradient is infinite (NaN after the sum), in every run alike.
      for (int k = 0; k < 9; ++k) {
        const double a = runs[r][i].gradient(k), b = runs[0][i].gradient(k);
        CHECK((a == b || (std::isnan(a) && std::isnan(b))));
      }
    }
}

TEST_CASE("fast field refuses bad options and non-finite points", "[fast_field]") {
  const std::vector<DensityRegion> regions{{make_box(1, 2, 3), 1000.0}};
  for (const double accuracy : {0.0, 1.0, -1e-6, std::nan("")}) {
    FastFieldOptions options;
    options.accuracy = accuracy;
    CHECK_THROWS_AS(FastPolyhedronField(regions, options), ConventionError);
  }
  Points points(1, 3);
  points << 0, std::nan(""), 0;
  CHECK_THROWS_AS(FastPolyhedronField(regions).evaluate(points), ConventionError);
}

TEST_CASE(
    "exact_field: the direct sum below the pair threshold, the fast method above it, the same field within "
    "the accuracy",
    "[fast_field]") {
  Mesh ball = make_geodesic_sphere(8);
  ball.vertices *= 1000.0;
  const std::vector<DensityRegion> regions{{ball, 2000.0}};
  Points points(40, 3);
  for (Eigen::Index i = 0; i < points.rows(); ++i)
    points.row(i) = (1500.0 + 10.0 * double(i)) * Eigen::RowVector3d(0.6, 0.0, 0.8);
  FastFieldOptions options;
  options.accuracy = 1e-10;
  std::string direct_method, fast_method;
  const std::vector<FieldValue> direct = exact_field(regions, points, options, &direct_method);
  options.direct_pairs = 0;
  const std::vector<FieldValue> fast = exact_field(regions, points, options, &fast_method);
  CHECK(direct_method.rfind("direct sum", 0) == 0);
  CHECK(fast_method.rfind("fast multipole method", 0) == 0);
  const std::vector<FieldValue> reference = PolyhedronGravity(regions).evaluate(points, 1);
  const double scale =
      gravitational_constant * 2000.0 * polystokes::test::volume_of(ball) / (1000.0 * 1000.0);
  for (size_t i = 0; i < reference.size(); ++i) {
    CHECK(direct[i].acceleration == reference[i].acceleration);
    CHECK((fast[i].acceleration - reference[i].acceleration).norm() <
          1e-10 * std::max(scale, reference[i].acceleration.norm()));
  }
}
