// Exact polyhedron gravity: rectangular prisms against the closed form of Nagy, Papp & Benedek 2000, the far
// field against the point mass and MacCullagh's formula, Poisson's equation inside and Laplace's outside,
// continuity and the known jump of the gradient across the surface, edges and vertices, superposed regions.
#include "polystokes/field/polyhedron_gravity.h"

#include <Eigen/Geometry>
#include <catch2/catch.hpp>
#include <cmath>
#include <ctime>

#include "polystokes/core/errors.h"
#include "polystokes/core/constants.h"
#include "polystokes/mesh/shapes.h"

using namespace polystokes;

namespace {

constexpr double kG = gravitational_constant;

// Failure messages show small relative errors instead of rounding them to 0 in fixed notation.
const bool kPrecision = (Catch::StringMaker<double>::precision = 20, true);

// Right rectangular prism [x1,x2]x[y1,y2]x[z1,z2] of density rho, closed form of Nagy, Papp & Benedek 2000
// (J. Geodesy 74, 552-560; from memory): with X, Y, Z the corner coordinates relative to the field point and
// r = |(X, Y, Z)|,
//   V   = G rho |||  XY ln(Z + r) + YZ ln(X + r) + ZX ln(Y + r)
//                  - X^2/2 atan(YZ/(X r)) - Y^2/2 atan(ZX/(Y r)) - Z^2/2 atan(XY/(Z r)) |||,
//   V_x = -G rho ||| Y ln(Z + r) + Z ln(Y + r) - X atan(YZ/(X r)) |||  (and cyclically for y, z),
// where ||| f ||| = sum over the 8 corners of (-1)^(i+j+k) f. Terms whose factor vanishes are taken as 0.
struct PrismField {
  double potential = 0;
  Eigen::Vector3d acceleration = Eigen::Vector3d::Zero();
};

// The corner sum cancels strongly away from the prism (terms ~ r^2 ln r, sum ~ volume / r), so it is
// evaluated in long double (64-bit mantissa on x86-64, 113-bit where long double is quadruple).
using Wide = long double;

Wide log_plus(Wide a, Wide r, Wide rest2) {
  // ln(a + r) written as ln(rest2 / (r - a)) when a < 0 to avoid cancellation (rest2 = r^2 - a^2).
  return a >= 0 ? std::log(a + r) : std::log(rest2 / (r - a));
}

Wide atan_term(Wide p, Wide q, Wide s, Wide r) {  // atan(q s / (p r)), 0 when p = 0 (then multiplied by 0)
  return p == 0 ? Wide(0) : std::atan(q * s / (p * r));
}

PrismField prism(const Eigen::Vector3d& lo, const Eigen::Vector3d& hi, double rho, const Eigen::Vector3d& p) {
  Wide potential = 0, acceleration[3] = {0, 0, 0};
  for (int corner = 0; corner < 8; ++corner) {
    const Wide X = Wide((corner & 1) ? hi.x() : lo.x()) - Wide(p.x());
    const Wide Y = Wide((corner & 2) ? hi.y() : lo.y()) - Wide(p.y());
    const Wide Z = Wide((corner & 4) ? hi.z() : lo.z()) - Wide(p.z());
    const int uppers = ((corner & 1) ? 1 : 0) + ((corner & 2) ? 1 : 0) + ((corner & 4) ? 1 : 0);
    const Wide sign = ((3 - uppers) % 2 == 0) ? 1 : -1;  // (-1)^(number of lower bounds): + at (hi, hi, hi)
    const Wide r = std::sqrt(X * X + Y * Y + Z * Z);
    const Wide lx = (Y == 0 && Z == 0) ? Wide(0) : log_plus(X, r, Y * Y + Z * Z);
    const Wide ly = (Z == 0 && X == 0) ? Wide(0) : log_plus(Y, r, Z * Z + X * X);
    const Wide lz = (X == 0 && Y == 0) ? Wide(0) : log_plus(Z, r, X * X + Y * Y);
    const Wide ax = atan_term(X, Y, Z, r), ay = atan_term(Y, Z, X, r), az = atan_term(Z, X, Y, r);
    potential +=
        sign * (X * Y * lz + Y * Z * lx + Z * X * ly - X * X / 2 * ax - Y * Y / 2 * ay - Z * Z / 2 * az);
    acceleration[0] -= sign * (Y * lz + Z * ly - X * ax);
    acceleration[1] -= sign * (Z * lx + X * lz - Y * ay);
    acceleration[2] -= sign * (X * ly + Y * lx - Z * az);
  }
  const Wide scale = Wide(kG) * Wide(rho);
  PrismField out;
  out.potential = double(scale * potential);
  out.acceleration = Eigen::Vector3d(double(scale * acceleration[0]), double(scale * acceleration[1]),
                                     double(scale * acceleration[2]));
  return out;
}

Mesh box_mesh(const Eigen::Vector3d& lo, const Eigen::Vector3d& hi) {
  const Eigen::Vector3d size = hi - lo;
  return transformed(make_box(size.x(), size.y(), size.z()), Eigen::Matrix3d::Identity(), (lo + hi) / 2);
}

double relative(double a, double b) { return std::abs(a - b) / std::abs(b); }
double relative(const Eigen::Vector3d& a, const Eigen::Vector3d& b) { return (a - b).norm() / b.norm(); }

Mesh lumpy_body(int subdivisions) {
  return make_deformed_sphere(subdivisions, [](const Eigen::Vector3d& u) {
    const double r = 800.0 * (1.0 + 0.25 * u.x() * u.y() + 0.15 * std::sin(3.0 * u.z()) + 0.1 * u.x());
    return Eigen::Vector3d(1.4 * r * u.x(), r * u.y(), 0.8 * r * u.z());
  });
}

}  // namespace

TEST_CASE("rectangular prism: potential and attraction equal the Nagy, Papp & Benedek 2000 closed form",
          "[polyhedron_gravity]") {
  const Eigen::Vector3d lo(-150.0, 40.0, -320.0), hi(250.0, 290.0, 60.0);
  const double rho = 2670.0;
  const PolyhedronGravity model({DensityRegion{box_mesh(lo, hi), rho}});
  // Outside (near, diagonal, far), inside, and below a face.
  for (const Eigen::Vector3d p :
       {Eigen::Vector3d(700.0, -300.0, 500.0), Eigen::Vector3d(300.0, 300.0, 100.0),
        Eigen::Vector3d(10.0, 100.0, -50.0), Eigen::Vector3d(50.0, 150.0, -400.0),
        Eigen::Vector3d(-2500.0, 1200.0, 3100.0), Eigen::Vector3d(-140.0, 280.0, 55.0)}) {
    CAPTURE(p.transpose());
    const FieldValue v = model.evaluate(p);
    const PrismField ref = prism(lo, hi, rho, p);
    CHECK(relative(v.potential, ref.potential) <= 1e-13);
    CHECK(relative(v.acceleration, ref.acceleration) <= 1e-13);
  }
}

TEST_CASE("rectangular prism: field on a face, an edge and at a vertex equals the closed-form limits",
          "[polyhedron_gravity]") {
  const Eigen::Vector3d lo(0.0, 0.0, 0.0), hi(300.0, 200.0, 100.0);
  const PolyhedronGravity model({DensityRegion{box_mesh(lo, hi), 2000.0}});
  // Solid-angle fractions: 1/2 on a face, 1/4 on an edge (right dihedral angle), 1/8 at a corner.
  const std::pair<Eigen::Vector3d, double> cases[] = {{Eigen::Vector3d(120.0, 70.0, 100.0), 0.5},
                                                      {Eigen::Vector3d(120.0, 0.0, 100.0), 0.25},
                                                      {Eigen::Vector3d(300.0, 200.0, 100.0), 0.125},
                                                      {Eigen::Vector3d(0.0, 0.0, 0.0), 0.125}};
  for (const auto& [p, fraction] : cases) {
    CAPTURE(p.transpose());
    CHECK(model.winding_number(p) == Approx(fraction).margin(1e-14));
    const FieldValue v = model.evaluate(p);
    REQUIRE(std::isfinite(v.potential));
    REQUIRE(v.acceleration.allFinite());
    const PrismField ref = prism(lo, hi, 2000.0, p);
    CHECK(relative(v.potential, ref.potential) <= 1e-13);
    CHECK(relative(v.acceleration, ref.acceleration) <= 1e-13);
    // Approaching from just outside changes U and a only by the offset times their derivatives.
    const Eigen::Vector3d offset = 1e-7 * Eigen::Vector3d(1.0, -1.0, 1.0).normalized();
    const FieldValue near = model.evaluate(Eigen::Vector3d(p + 2 * offset));
    CHECK(relative(near.potential, v.potential + v.acceleration.dot(2 * offset)) <= 1e-13);
    CHECK(relative(near.acceleration, v.acceleration) <= 1e-6);
  }
}

TEST_CASE("exactly on a face the gradient is the mean of its two one-sided limits", "[polyhedron_gravity]") {
  // The one-sided limits differ by -4 pi G rho n n^T (Kellogg 1929, ch. VI); on the face the closed form
  // gives the face's own solid angle as 0, the mean of +2 pi and -2 pi.
  const Eigen::Vector3d lo(0.0, 0.0, 0.0), hi(300.0, 200.0, 100.0);
  const PolyhedronGravity model({DensityRegion{box_mesh(lo, hi), 2000.0}});
  const Eigen::Vector3d on(120.0, 70.0, 100.0), n(0.0, 0.0, 1.0);
  const Eigen::Matrix3d inside = model.evaluate(Eigen::Vector3d(on - 1e-6 * n)).gradient;
  const Eigen::Matrix3d outside = model.evaluate(Eigen::Vector3d(on + 1e-6 * n)).gradient;
  const Eigen::Matrix3d at = model.evaluate(on).gradient;
  CHECK((at - (inside + outside) / 2).norm() <= 1e-6 * at.norm());
  CHECK((inside - outside).norm() == Approx(4 * M_PI * kG * 2000.0).epsilon(1e-6));
}

TEST_CASE("two prisms as two regions and a prism with a void equal the closed-form superposition",
          "[polyhedron_gravity]") {
  const Eigen::Vector3d a_lo(0, 0, 0), a_hi(200, 100, 100), b_lo(200, 0, 0), b_hi(300, 100, 100);
  const Eigen::Vector3d c_lo(50, 20, 30), c_hi(120, 70, 80);  // void inside a
  const PolyhedronGravity model({DensityRegion{box_mesh(a_lo, a_hi), 2500.0},
                                 DensityRegion{box_mesh(b_lo, b_hi), 1800.0},
                                 DensityRegion{box_mesh(c_lo, c_hi), -2500.0}});
  REQUIRE(model.region_count() == 3);
  REQUIRE(model.face_count() == 36);
  for (const Eigen::Vector3d p : {Eigen::Vector3d(-80.0, 40.0, 170.0), Eigen::Vector3d(90.0, 40.0, 50.0)}) {
    CAPTURE(p.transpose());
    const FieldValue v = model.evaluate(p);
    const PrismField a = prism(a_lo, a_hi, 2500.0, p), b = prism(b_lo, b_hi, 1800.0, p),
                     c = prism(c_lo, c_hi, -2500.0, p);
    CHECK(relative(v.potential, a.potential + b.potential + c.potential) <= 1e-13);
    CHECK(relative(v.acceleration, Eigen::Vector3d(a.acceleration + b.acceleration + c.acceleration)) <=
          1e-13);
  }
  CHECK(model.density_at(Eigen::Vector3d(90.0, 40.0, 50.0)) == 0.0);  // in the void
  CHECK(model.density_at(Eigen::Vector3d(250.0, 40.0, 50.0)) == 1800.0);
}

TEST_CASE("far field at 10^4 radii: cube and icosphere equal the point mass to ~1e-14 (no cancellation)",
          "[polyhedron_gravity]") {
  // A cube's and an icosahedrally symmetric body's exterior fields have no degree 1-3 terms about the centre
  // (cubic symmetry leaves degree 4 as the first, icosahedral degree 6: common practice), so at 10^4 radii
  // the point mass GM/r (Newton) is exact to ~1e-16.
  const Eigen::Vector3d center(3000.0, -1200.0, 450.0);
  for (const Mesh& body :
       {transformed(make_box(500.0, 500.0, 500.0), Eigen::Matrix3d::Identity(), center),
        transformed(Mesh(make_icosphere(3)), 400.0 * Eigen::Matrix3d::Identity(), center)}) {
    const double rho = 2100.0;
    const double gm = kG * rho * volume_moments(body).volume;
    const PolyhedronGravity model({DensityRegion{body, rho}});
    for (const Eigen::Vector3d dir : {Eigen::Vector3d(1, 0.3, -0.2), Eigen::Vector3d(-0.1, 0.2, 1.0)}) {
      const Eigen::Vector3d d = 1e4 * 500.0 * dir.normalized();
      const double r = d.norm();
      const FieldValue v = model.evaluate(Eigen::Vector3d(center + d));
      CAPTURE(body.faces.rows(), d.transpose());
      CHECK(relative(v.potential, gm / r) <= 1e-14);
      CHECK(relative(v.acceleration, Eigen::Vector3d(-gm * d / (r * r * r))) <= 1e-14);
      const Eigen::Matrix3d t =
          gm * (3.0 * d * d.transpose() - r * r * Eigen::Matrix3d::Identity()) / std::pow(r, 5);
      CHECK((v.gradient - t).norm() <= 1e-13 * t.norm());
    }
  }
}

TEST_CASE(
    "far field of a triaxial prism equals MacCullagh's formula (Murray & Dermott 1999, Solar System "
    "Dynamics, sec. 4.7, from memory)",
    "[polyhedron_gravity]") {
  // U = GM/r + G (A + B + C - 3 I_r) / (2 r^3), I_r the moment of inertia about the line to the point; prism
  // moments A = M (b^2 + c^2)/12 etc. (any mechanics handbook). The next terms (degree 4) are ~(size/r)^4.
  const double a = 600.0, b = 300.0, c = 150.0, rho = 1900.0, mass = rho * a * b * c;
  const PolyhedronGravity model({DensityRegion{make_box(a, b, c), rho}});
  const Eigen::Vector3d moments(mass * (b * b + c * c) / 12, mass * (a * a + c * c) / 12,
                                mass * (a * a + b * b) / 12);
  for (const double scale : {1e3, 1e4}) {
    const Eigen::Vector3d p = scale * a * Eigen::Vector3d(0.4, -0.7, 0.59).normalized();
    const Eigen::Vector3d u = p.normalized();
    const double r = p.norm(), inertia_r = moments.dot(u.cwiseProduct(u));
    const double expected = kG * mass / r + kG * (moments.sum() - 3 * inertia_r) / (2 * r * r * r);
    CAPTURE(scale);
    CHECK(relative(model.evaluate(p).potential, expected) <= 1e-14);
  }
}

TEST_CASE("Poisson inside (trace of the gradient = -4 pi G rho) and Laplace outside; winding number 1 / 0",
          "[polyhedron_gravity]") {
  // Poisson's equation for a Newtonian potential with U > 0 (Kellogg 1929, Foundations of Potential Theory,
  // ch. VI).
  const double rho = 2300.0;
  const Mesh body = lumpy_body(3);
  const PolyhedronGravity model({DensityRegion{body, rho}});
  const double poisson = 4 * M_PI * kG * rho;
  for (const Eigen::Vector3d p : {Eigen::Vector3d(0, 0, 0), Eigen::Vector3d(300.0, -200.0, 100.0),
                                  Eigen::Vector3d(-500.0, 100.0, -300.0)}) {
    CAPTURE(p.transpose());
    CHECK(model.winding_number(p) == Approx(1.0).margin(1e-12));
    CHECK(std::abs(model.evaluate(p).gradient.trace() + poisson) <= 1e-11 * poisson);
  }
  for (const Eigen::Vector3d p : {Eigen::Vector3d(2000.0, 0, 0), Eigen::Vector3d(-900.0, 1100.0, 800.0),
                                  Eigen::Vector3d(0.0, 0.0, 5e5)}) {
    CAPTURE(p.transpose());
    CHECK(std::abs(model.winding_number(p)) <= 1e-13);
    const FieldValue v = model.evaluate(p);
    CHECK(std::abs(v.gradient.trace()) <= 1e-11 * v.gradient.norm());
  }
}

TEST_CASE("across the surface U and a are continuous and the gradient jumps by -4 pi G rho n n^T",
          "[polyhedron_gravity]") {
  // Jump of the second derivatives of a volume potential across the boundary (Kellogg 1929, ch. VI, from
  // memory): T_inside - T_outside = -4 pi G rho n n^T, n the outward normal.
  const double rho = 2000.0;
  const Mesh body = lumpy_body(2);
  const PolyhedronGravity model({DensityRegion{body, rho}});
  for (const int f : {0, 57, 199}) {
    const Eigen::Vector3d a = body.vertices.row(body.faces(f, 0)), b = body.vertices.row(body.faces(f, 1)),
                          c = body.vertices.row(body.faces(f, 2));
    const Eigen::Vector3d n = (b - a).cross(c - a).normalized();
    const Eigen::Vector3d on = 0.2 * a + 0.3 * b + 0.5 * c;
    const double delta = 1e-6;
    const FieldValue in = model.evaluate(Eigen::Vector3d(on - delta * n));
    const FieldValue out = model.evaluate(Eigen::Vector3d(on + delta * n));
    const FieldValue at = model.evaluate(on);
    CAPTURE(f);
    CHECK(relative(in.potential, out.potential - out.acceleration.dot(2 * delta * n)) <= 1e-13);
    CHECK(relative(in.acceleration, out.acceleration) <= 1e-8);
    CHECK(relative(at.acceleration, out.acceleration) <= 1e-8);
    CHECK(model.winding_number(Eigen::Vector3d(on - delta * n)) == Approx(1.0).margin(1e-12));
    CHECK(std::abs(model.winding_number(Eigen::Vector3d(on + delta * n))) <= 1e-13);
    const Eigen::Matrix3d jump = in.gradient - out.gradient;
    const Eigen::Matrix3d expected = -4 * M_PI * kG * rho * n * n.transpose();
    CHECK((jump - expected).norm() <= 1e-6 * expected.norm());
  }
}

TEST_CASE("the field agrees whether a face is integrated in closed form or by quadrature (switch distance)",
          "[polyhedron_gravity]") {
  // Along a ray the faces change from the closed form to quadrature one by one; against the prism closed form
  // the error stays at round-off through the switch.
  const Eigen::Vector3d lo(-100, -60, -40), hi(100, 60, 40);
  const PolyhedronGravity model({DensityRegion{box_mesh(lo, hi), 2500.0}});
  for (double s = 150.0; s < 4000.0; s *= 1.37) {
    const Eigen::Vector3d p = s * Eigen::Vector3d(0.6, 0.5, -0.62).normalized();
    const PrismField ref = prism(lo, hi, 2500.0, p);
    CAPTURE(s);
    CHECK(relative(model.evaluate(p).acceleration, ref.acceleration) <= 1e-13);
  }
}

TEST_CASE("parallel evaluation gives identical results for any thread count", "[polyhedron_gravity]") {
  const PolyhedronGravity model({DensityRegion{lumpy_body(2), 2000.0}});
  Points points(25, 3);
  for (int i = 0; i < 25; ++i)
    points.row(i) = Eigen::RowVector3d(100.0 * i - 1200.0, 37.0 * i, 900.0 - 71.0 * i);
  const auto one = model.evaluate(points, 1), four = model.evaluate(points, 4);
  for (size_t i = 0; i < one.size(); ++i) {
    CHECK(one[i].potential == four[i].potential);
    CHECK(one[i].acceleration == four[i].acceleration);
    CHECK(one[i].gradient == four[i].gradient);
  }
  points(3, 1) = std::nan("");
  CHECK_THROWS_WITH(model.evaluate(points, 2), Catch::Contains("point 4"));
}

TEST_CASE("timing: nanoseconds per facet and point", "[polyhedron_gravity][.slow]") {
  const PolyhedronGravity model({DensityRegion{lumpy_body(4), 2000.0}});
  for (const double radius : {1200.0, 3000.0, 1e6}) {
    Points points(200, 3);
    for (int i = 0; i < 200; ++i)
      points.row(i) =
          radius * Eigen::RowVector3d(std::cos(i * 0.7) * std::sin(i * 0.3 + 0.1),
                                      std::sin(i * 0.7) * std::sin(i * 0.3 + 0.1), std::cos(i * 0.3 + 0.1));
    const std::clock_t start = std::clock();  // processor time: meaningful on a shared machine
    const auto values = model.evaluate(points, 1);
    const double seconds = double(std::clock() - start) / CLOCKS_PER_SEC;
    WARN("r = " << radius << " m: " << seconds / (200.0 * double(model.face_count())) * 1e9
                << " ns per facet-point");
    CHECK(values.size() == 200);
  }
}
