// The fast moment path (fan decomposition + vectorized spectral recursion) against the slow quadrature
// reference at many degrees, its independence of thread count and face order, and the fan decomposition's
// exact-cover invariants, prepared topologies (Monte Carlo samples); also the geodesic sphere used to
// benchmark it.
#include <Eigen/Geometry>
#include <algorithm>
#include <catch2/catch.hpp>
#include <cmath>
#include <numeric>
#include <random>
#include <set>

#include "polystokes/core/errors.h"
#include "harmonics/fan_decomposition.h"
#include "polystokes/harmonics/moments.h"
#include "harmonics/face_blocks.h"
#include "polystokes/mesh/mass_properties.h"
#include "polystokes/mesh/shapes.h"

using namespace polystokes;

namespace {

// max over m of |a - b| divided by max over m of |b|, for degree n: the error relative to the degree's size.
double relative_difference(const HarmonicMoments& a, const HarmonicMoments& b, int n) {
  double worst = 0, scale = 0;
  for (int m = 0; m <= n; ++m) {
    worst = std::max({worst, std::abs(a.re(n, m) - b.re(n, m)), std::abs(a.im(n, m) - b.im(n, m))});
    scale = std::max({scale, std::abs(b.re(n, m)), std::abs(b.im(n, m))});
  }
  return worst / scale;
}

HarmonicFrame frame_about(const std::vector<DensityRegion>& regions, const Eigen::Vector3d& origin) {
  HarmonicFrame frame;
  frame.origin = origin;
  frame.axes = Eigen::AngleAxisd(0.4, Eigen::Vector3d(0.3, -1.0, 0.6).normalized()).toRotationMatrix();
  frame.scale_radius = brillouin_radius(regions, origin);
  return frame;
}

// A lumpy body that is not star-shaped about its centre of mass (a bent, waisted sphere).
Mesh bent_body(int frequency) {
  Mesh mesh = make_geodesic_sphere(frequency);
  for (Eigen::Index i = 0; i < mesh.vertices.rows(); ++i) {
    const Eigen::Vector3d u = mesh.vertices.row(i).transpose();
    const double waist = 1.0 - 0.5 * std::exp(-(u.x() / 0.35) * (u.x() / 0.35));
    const double x = 2.0 * u.x(), y = 0.9 * waist * u.y(), z = 0.7 * waist * u.z();
    mesh.vertices.row(i) << (1.5 + y) * std::sin(x / 1.5), (1.5 + y) * std::cos(x / 1.5) - 1.5, z;
  }
  return mesh;
}

// A small polyhedron with the origin well inside and no symmetry: an octahedron with moved vertices.
Mesh skew_octahedron() {
  Mesh mesh;
  mesh.vertices.resize(6, 3);
  mesh.vertices << 1.1, 0.1, -0.05, -0.9, 0.2, 0.1, 0.05, 1.2, 0.15, -0.1, -0.8, 0.05, 0.1, -0.1, 1.3, 0.2,
      0.15, -0.7;
  mesh.faces.resize(8, 3);
  mesh.faces << 0, 2, 4, 2, 1, 4, 1, 3, 4, 3, 0, 4, 2, 0, 5, 1, 2, 5, 3, 1, 5, 0, 3, 5;
  return mesh;
}

Mesh shuffled_faces(const Mesh& mesh, unsigned seed) {
  Mesh out = mesh;
  std::vector<Eigen::Index> order(size_t(mesh.faces.rows()));
  std::iota(order.begin(), order.end(), 0);
  std::mt19937 random(seed);
  std::shuffle(order.begin(), order.end(), random);
  for (size_t i = 0; i < order.size(); ++i) {
    // Rotating the corners keeps the orientation and changes which corner comes first.
    const int r = int(i % 3);
    for (int k = 0; k < 3; ++k) out.faces(Eigen::Index(i), k) = mesh.faces(order[i], (k + r) % 3);
  }
  return out;
}

// The ellipsoid with every vertex moved: a Monte Carlo sample of the same topology.
std::vector<DensityRegion> moved_sample(const std::vector<DensityRegion>& nominal, int seed) {
  std::vector<DensityRegion> sample = nominal;
  for (auto& region : sample)
    for (Eigen::Index v = 0; v < region.mesh.vertices.rows(); ++v)
      region.mesh.vertices.row(v) *= 1.0 + 0.02 * std::sin(3.0 * double(v) + seed);
  sample.front().density *= 1.1;
  return sample;
}

}  // namespace

TEST_CASE("fast path equals the quadrature reference at every degree 0..40 on three bodies (1e-12 relative)",
          "[harmonics_fast_path]") {
  // Two independent exact schemes: Whittaker's representation (Whittaker & Watson 1927, sec. 18.3) with the
  // simplex closed form (Baldoni et al. 2011, Math. Comp. 80) in fans, against Gauss-Legendre product
  // quadrature on the collapsed triangle (Duffy 1982, SIAM J. Numer. Anal. 19) of the Legendre recursion
  // (Holmes & Featherstone 2002), exact for these polynomial integrands. Every maximum degree gives a
  // different block size and so a different fan decomposition. The bodies are far from round about their
  // origins, so no degree is small through cancellation between faces (which would limit both paths alike).
  const Mesh box =
      transformed(make_box(1.3, 0.8, 0.5), Eigen::Matrix3d::Identity(), Eigen::Vector3d(0.2, -0.1, 0.15));
  const std::vector<std::pair<Mesh, Eigen::Vector3d>> bodies = {
      {bent_body(4), Eigen::Vector3d(0.1, -0.4, 0.05)},  // origin outside the bent body
      {box, Eigen::Vector3d::Zero()},
      {transformed(make_geodesic_sphere(4), Eigen::Vector3d(1.4, 0.7, 0.45).asDiagonal(),
                   Eigen::Vector3d::Zero()),
       Eigen::Vector3d(0.6, 0.1, 0.0)},  // a cigar seen from near one end
  };
  for (const auto& [mesh, origin] : bodies) {
    std::vector<DensityRegion> regions{{mesh, 1800.0}};
    if (volume_moments(mesh).volume < 0) regions.front().mesh = reversed(mesh);
    const HarmonicFrame frame = frame_about(regions, origin);
    const HarmonicMoments reference = harmonic_moments_reference(regions, frame, 40);
    double worst = 0;
    for (int degree = 0; degree <= 40; ++degree) {
      const HarmonicMoments fast = harmonic_moments(regions, frame, degree);
      for (int n = 0; n <= degree; ++n) worst = std::max(worst, relative_difference(fast, reference, n));
    }
    CAPTURE(mesh.faces.rows(), worst);
    CHECK(worst < 1e-12);
  }
}

TEST_CASE("degrees 100 and 150 on small bodies match the reference to 1e-12 relative per degree",
          "[harmonics_fast_path]") {
  // High orders are where a transform from sampled values would lose about 2^m (the scaled spectral
  // recursion never forms them as differences of larger numbers); the quadrature reference is independent.
  struct Case {
    Mesh mesh;
    Eigen::Vector3d origin;
    int degree;
  };
  const std::vector<Case> cases = {
      {skew_octahedron(), Eigen::Vector3d(0.05, 0.1, 0.15), 150},
      {transformed(make_icosphere(0), Eigen::Vector3d(1.0, 0.7, 0.5).asDiagonal(),
                   Eigen::Vector3d(0.1, 0, 0)),
       Eigen::Vector3d(0.12, -0.05, 0.02), 100},
  };
  for (const Case& c : cases) {
    std::vector<DensityRegion> regions{{c.mesh, 1.0}};
    const HarmonicFrame frame = frame_about(regions, c.origin);
    const HarmonicMoments fast = harmonic_moments(regions, frame, c.degree);
    const HarmonicMoments reference = harmonic_moments_reference(regions, frame, c.degree);
    REQUIRE(fast.re.allFinite());
    REQUIRE(fast.im.allFinite());
    for (int n = 0; n <= c.degree; ++n) {
      CAPTURE(c.degree, n);
      CHECK(relative_difference(fast, reference, n) < 1e-12);
    }
  }
}

TEST_CASE("the two row bases of the kernel agree bit for bit where they meet (degree 256 against 257)",
          "[harmonics_fast_path]") {
  // Up to degree 256 the kernel keeps its rows in a basis scaled by 2^-k against the one used above; every
  // intermediate differs by an exact power of two, so degrees 0..256 of a degree-257 run (the other basis)
  // must equal a degree-256 run exactly (floating-point scaling by 2^k is exact: IEEE 754, common practice).
  // The mesh has fewer faces than a block, so both runs sum the same faces in the same order.
  const Mesh mesh = transformed(make_icosphere(1), Eigen::Vector3d(1.0, 0.8, 0.6).asDiagonal(),
                                Eigen::Vector3d(0.05, -0.02, 0.01));
  REQUIRE(mesh.faces.rows() < moment_block_faces(257));
  std::vector<DensityRegion> regions{{mesh, 1.0}};
  const HarmonicFrame frame = frame_about(regions, Eigen::Vector3d(0.03, 0.02, -0.01));
  const HarmonicMoments low = harmonic_moments(regions, frame, 256);
  const HarmonicMoments high = harmonic_moments(regions, frame, 257);
  REQUIRE(low.re.allFinite());
  CHECK(high.re.topLeftCorner(257, 257) == low.re);
  CHECK(high.im.topLeftCorner(257, 257) == low.im);
}

TEST_CASE("results are bit-identical for 1, 2 and 3 threads (fixed blocks, block-order reduction)",
          "[harmonics_fast_path]") {
  // 32000 + 2000 faces at degree 12 make several dozen blocks, so threads finish them out of order.
  const std::vector<DensityRegion> regions{
      {bent_body(40), 2100.0},
      {transformed(make_geodesic_sphere(10), 0.3 * Eigen::Matrix3d::Identity(),
                   Eigen::Vector3d(0.2, -0.3, 0.0)),
       -600.0}};
  REQUIRE(regions[0].mesh.faces.rows() / moment_block_faces(12) >= 10);
  const HarmonicFrame frame = frame_about(regions, Eigen::Vector3d(0.05, -0.3, 0.0));
  MomentOptions options;
  options.threads = 1;
  const HarmonicMoments one = harmonic_moments(regions, frame, 12, options);
  for (int threads : {2, 3}) {
    options.threads = threads;
    const HarmonicMoments other = harmonic_moments(regions, frame, 12, options);
    CAPTURE(threads);
    CHECK((one.re.array() == other.re.array()).all());
    CHECK((one.im.array() == other.im.array()).all());
  }
}

TEST_CASE("degrees beyond the recursion's floating-point range are refused before any work",
          "[harmonics_fast_path]") {
  const std::vector<DensityRegion> regions{{make_geodesic_sphere(1), 1.0}};
  HarmonicFrame frame;
  CHECK_THROWS_AS(harmonic_moments(regions, frame, max_moment_degree + 1), ResourceError);
  CHECK_THROWS_WITH(harmonic_moments(regions, frame, max_moment_degree + 1),
                    Catch::Contains(std::to_string(max_moment_degree + 1)));
}

TEST_CASE("at the largest degree a flat body on the equator plane stays finite", "[harmonics_fast_path]") {
  // The worst case for the range: every vertex at z = 0, where the scaled orders peak at about 2^(0.32 n)
  // (2^-2j C(n, j) at order n - 2j, from the binomial expansion of (i x cos u)^n; common practice).
  const std::vector<DensityRegion> regions{
      {transformed(make_geodesic_sphere(1), Eigen::Vector3d(1.0, 0.9, 0.05).asDiagonal(),
                   Eigen::Vector3d::Zero()),
       1.0}};
  HarmonicFrame frame;
  frame.scale_radius = brillouin_radius(regions, frame.origin);
  const HarmonicMoments moments = harmonic_moments(regions, frame, max_moment_degree);
  CHECK(moments.re.allFinite());
  CHECK(moments.im.allFinite());
}

TEST_CASE("face order, corner rotation and block boundaries change results only by rounding",
          "[harmonics_fast_path]") {
  // A shuffled face list has no locality: in its own order the fans share almost nothing (about three
  // products per face), so the fast path blocks it in Morton order of the face centroids instead; either way
  // the two runs use entirely different fans, and the moments are the same integrals.
  const std::vector<DensityRegion> ordered{{bent_body(20), 1.0}};
  const std::vector<DensityRegion> shuffled{{shuffled_faces(ordered[0].mesh, 99), 1.0}};
  CHECK(moment_products_per_face(ordered[0].mesh, 30) < 1.0);
  CHECK(moment_products_per_face(shuffled[0].mesh, 30) < 1.1);
  const HarmonicFrame frame = frame_about(ordered, Eigen::Vector3d(0.0, -0.4, 0.0));
  const HarmonicMoments a = harmonic_moments(ordered, frame, 30);
  const HarmonicMoments b = harmonic_moments(shuffled, frame, 30);
  for (int n = 0; n <= 30; ++n) {
    CAPTURE(n);
    CHECK(relative_difference(b, a, n) < 1e-13);
  }
}

TEST_CASE("every face lies in exactly one fan, centred on one of its corners with the other two as rim edge",
          "[harmonics_fast_path]") {
  const Mesh mesh = shuffled_faces(bent_body(12), 5);
  FanDecomposer decomposer;
  // Blocks of consecutive faces, and blocks through an explicit face order (here: reversed).
  std::vector<int> reversed_order(size_t(mesh.faces.rows()));
  std::iota(reversed_order.rbegin(), reversed_order.rend(), 0);
  for (const Eigen::Index size :
       {Eigen::Index(1), Eigen::Index(7), Eigen::Index(500), mesh.faces.rows(), -Eigen::Index(300)}) {
    const Eigen::Index step = std::abs(size);
    const int* order = size < 0 ? reversed_order.data() : nullptr;
    std::vector<int> seen(size_t(mesh.faces.rows()), 0);
    for (Eigen::Index begin = 0; begin < mesh.faces.rows(); begin += step) {
      const Eigen::Index end = std::min(mesh.faces.rows(), begin + step);
      const FanDecomposition& fans =
          decomposer.decompose(mesh.faces, mesh.vertices.rows(), begin, end, order);
      REQUIRE(fans.fan_begin.size() == fans.centres.size() + 1);
      REQUIRE(fans.fan_begin.back() == int(fans.fan_faces.size()));
      REQUIRE(fans.edge_source.size() == fans.edge_other.size());
      for (size_t c = 0; c < fans.centres.size(); ++c)
        for (int i = fans.fan_begin[c]; i < fans.fan_begin[c + 1]; ++i) {
          const int face = fans.fan_faces[size_t(i)];
          const Eigen::Index position = order ? mesh.faces.rows() - 1 - face : face;
          REQUIRE(position >= begin);
          REQUIRE(position < end);
          ++seen[size_t(face)];
          std::multiset<int> corners, used;
          for (int k = 0; k < 3; ++k) {
            corners.insert(mesh.faces(face, k));
            // The corners handed to the kernel are the face's own, in its own (oriented) order.
            REQUIRE(fans.vertices[size_t(fans.fan_corners[size_t(3 * i + k)])] == mesh.faces(face, k));
          }
          const int edge = fans.fan_edges[size_t(i)];
          used = {fans.vertices[size_t(fans.centres[c])],
                  fans.vertices[size_t(fans.sources[size_t(fans.edge_source[size_t(edge)])])],
                  fans.vertices[size_t(fans.edge_other[size_t(edge)])]};
          REQUIRE(used == corners);
        }
    }
    CAPTURE(size);
    CHECK(std::all_of(seen.begin(), seen.end(), [](int count) { return count == 1; }));
  }
}

TEST_CASE("on a regular triangulation the fans cost at most one product per face (ideal 5/6)",
          "[harmonics_fast_path]") {
  // A triangulation whose vertices all have even degree is 3-colourable (Heawood 1898, from memory); the
  // geodesic grid inside an icosahedron face has degree 6. One colour class as fan centres (F/6), the rim
  // edges between the other two classes, each shared by two faces (F/2), and one of those classes as sources
  // (F/6) give 5/6 operator products per face, against 3 for face-by-face recursion.
  const Mesh mesh = make_geodesic_sphere(60);
  FanDecomposer decomposer;
  double products = 0;
  for (Eigen::Index begin = 0; begin < mesh.faces.rows(); begin += 4096)
    products += double(
        decomposer
            .decompose(mesh.faces, mesh.vertices.rows(), begin, std::min(mesh.faces.rows(), begin + 4096))
            .products());
  const double per_face = products / double(mesh.faces.rows());
  CAPTURE(per_face);
  CHECK(per_face >= 0.75);  // centres >= F/6 and rim edges >= F/2 for valence <= 6 and two faces per edge
  CHECK(per_face < 0.95);
}

TEST_CASE("a face with a repeated vertex contributes nothing; a vertex index out of range names the face",
          "[harmonics_fast_path]") {
  // A zero-volume tetrahedron integrates to zero (common practice).
  const Mesh body = make_geodesic_sphere(3);
  Mesh with_sliver = body;
  with_sliver.faces.conservativeResize(body.faces.rows() + 1, 3);
  with_sliver.faces.row(body.faces.rows()) << 4, 4, 9;
  const std::vector<DensityRegion> a{{body, 1.0}}, b{{with_sliver, 1.0}};
  const HarmonicFrame frame = frame_about(a, Eigen::Vector3d(0.1, 0.0, 0.0));
  const HarmonicMoments plain = harmonic_moments(a, frame, 16), sliver = harmonic_moments(b, frame, 16);
  for (int n = 0; n <= 16; ++n) CHECK(relative_difference(sliver, plain, n) < 1e-14);

  Mesh broken = body;
  broken.faces(3, 1) = int(body.vertices.rows());
  FanDecomposer decomposer;
  CHECK_THROWS_AS(decomposer.decompose(broken.faces, broken.vertices.rows(), 0, broken.faces.rows()),
                  MeshError);
  CHECK_THROWS_WITH(decomposer.decompose(broken.faces, broken.vertices.rows(), 0, broken.faces.rows()),
                    Catch::Contains("face 3"));
}

TEST_CASE("progress is reported in order, at most about a thousand times, ending at 1",
          "[harmonics_fast_path]") {
  const std::vector<DensityRegion> regions{{make_geodesic_sphere(60), 1.0}};
  HarmonicFrame frame;
  frame.scale_radius = 1.0;
  std::vector<double> reported;
  MomentOptions options;
  options.threads = 2;
  options.progress = [&](double fraction) { reported.push_back(fraction); };  // calls are serialized
  harmonic_moments(regions, frame, 4, options);
  REQUIRE(!reported.empty());
  CHECK(reported.size() <= 1001);
  CHECK(std::is_sorted(reported.begin(), reported.end()));
  CHECK(reported.back() == 1.0);
}

TEST_CASE("geodesic sphere: 20 k^2 outward faces, 10 k^2 + 2 vertices, volume tending to 4 pi / 3",
          "[shapes]") {
  // Euler's formula V - E + F = 2 for a closed genus-0 surface; inscribed polyhedra converge to the ball's
  // volume 4 pi / 3 with an error proportional to the squared edge length (common practice).
  double previous = 1;
  for (int k : {1, 2, 5, 20, 40}) {
    const Mesh mesh = make_geodesic_sphere(k);
    CAPTURE(k);
    REQUIRE(mesh.faces.rows() == 20 * k * k);
    REQUIRE(mesh.vertices.rows() == 10 * k * k + 2);
    std::set<std::pair<int, int>> edges;
    for (Eigen::Index f = 0; f < mesh.faces.rows(); ++f)
      for (int j = 0; j < 3; ++j) {
        const int a = mesh.faces(f, j), b = mesh.faces(f, (j + 1) % 3);
        REQUIRE(edges.insert({a, b}).second);  // each directed edge once: consistently oriented, manifold
      }
    for (const auto& [a, b] : edges) REQUIRE(edges.count({b, a}) == 1);  // closed
    CHECK(long(mesh.vertices.rows()) - long(edges.size() / 2) + long(mesh.faces.rows()) == 2);
    const double error = 4.0 * M_PI / 3.0 - volume_moments(mesh).volume;
    CHECK(error > 0);
    if (k >= 5) CHECK(error < previous * (k >= 20 ? 0.3 : 0.2));
    previous = error;
  }
  CHECK_THROWS_AS(make_geodesic_sphere(0), ConventionError);
}

TEST_CASE("prepared moments of moved vertices match the quadrature reference path (degree 10, 1e-12)",
          "[harmonics_fast_path]") {
  const std::vector<DensityRegion> nominal{{make_ellipsoid(2, 1.0, 0.8, 0.6), 2000.0},
                                           {make_ellipsoid(1, 0.3, 0.3, 0.3), -500.0}};
  const PreparedMoments prepared(nominal, 10);
  CHECK(prepared.degree() == 10);
  for (int seed : {1, 2}) {
    const auto sample = moved_sample(nominal, seed);
    const HarmonicFrame frame = frame_about(sample, Eigen::Vector3d(0.05, -0.02, 0.01));
    const HarmonicMoments fast = prepared.moments(sample, frame);
    const HarmonicMoments reference = harmonic_moments_reference(sample, frame, 10);
    for (int n = 0; n <= 10; ++n) {
      CAPTURE(seed, n);
      CHECK(relative_difference(fast, reference, n) < 1e-12);
    }
  }
}

TEST_CASE("prepared moments equal the fast path bit for bit for any thread count, also at a lower degree",
          "[harmonics_fast_path]") {
  const std::vector<DensityRegion> nominal{{bent_body(24), 1000.0}};
  const PreparedMoments prepared(nominal, 16);
  const auto sample = moved_sample(nominal, 3);
  const HarmonicFrame frame = frame_about(sample, Eigen::Vector3d(0.05, -0.02, 0.01));
  for (int threads : {1, 2, 3}) {
    MomentOptions options;
    options.threads = threads;
    CAPTURE(threads);
    const HarmonicMoments a = prepared.moments(sample, frame, options);
    const HarmonicMoments b = harmonic_moments(sample, frame, 16, options);
    CHECK((a.re.array() == b.re.array()).all());
    CHECK((a.im.array() == b.im.array()).all());
  }
  const HarmonicMoments low = prepared.moments(sample, frame, {}, 6);
  const HarmonicMoments reference = harmonic_moments_reference(sample, frame, 6);
  for (int n = 0; n <= 6; ++n) CHECK(relative_difference(low, reference, n) < 1e-12);
}

TEST_CASE("prepared moments refuse another topology, more regions and a higher degree",
          "[harmonics_fast_path]") {
  const std::vector<DensityRegion> nominal{{make_ellipsoid(1, 1.0, 0.8, 0.6), 2000.0}};
  const PreparedMoments prepared(nominal, 8);
  const HarmonicFrame frame = frame_about(nominal, Eigen::Vector3d::Zero());
  std::vector<DensityRegion> other = nominal;
  other.front().mesh.faces.col(1).swap(other.front().mesh.faces.col(2));
  CHECK_THROWS_AS(prepared.moments(other, frame), ConventionError);
  std::vector<DensityRegion> two = nominal;
  two.push_back(nominal.front());
  CHECK_THROWS_AS(prepared.moments(two, frame), ConventionError);
  CHECK_THROWS_AS(prepared.moments(nominal, frame, {}, 9), ConventionError);
  CHECK_THROWS_AS(PreparedMoments(nominal, -1), ConventionError);
}
