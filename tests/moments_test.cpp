// Prepared moments (harmonics/moments.h): the topology work done once gives the moments of every body with
// that topology, checked against the quadrature reference path and the unprepared fast path.
#include <Eigen/Geometry>
#include <catch2/catch.hpp>
#include <cmath>

#include "polystokes/core/errors.h"
#include "polystokes/harmonics/moments.h"
#include "polystokes/mesh/mass_properties.h"
#include "polystokes/mesh/shapes.h"

using namespace polystokes;

namespace {

// max over the degree's orders of |a - b| over the largest |b|.
double relative_difference(const HarmonicMoments& a, const HarmonicMoments& b, int n) {
  double worst = 0, scale = 0;
  for (int m = 0; m <= n; ++m) {
    worst = std::max({worst, std::abs(a.re(n, m) - b.re(n, m)), std::abs(a.im(n, m) - b.im(n, m))});
    scale = std::max({scale, std::abs(b.re(n, m)), std::abs(b.im(n, m))});
  }
  return worst / scale;
}

HarmonicFrame frame_for(const std::vector<DensityRegion>& regions) {
  HarmonicFrame frame;
  frame.origin = Eigen::Vector3d(0.05, -0.02, 0.01);
  frame.axes = Eigen::AngleAxisd(0.3, Eigen::Vector3d(1, -2, 0.5).normalized()).toRotationMatrix();
  frame.scale_radius = brillouin_radius(regions, frame.origin);
  return frame;
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

TEST_CASE("prepared moments of moved vertices match the quadrature reference path (degree 10, 1e-12)",
          "[moments]") {
  const std::vector<DensityRegion> nominal{{make_ellipsoid(2, 1.0, 0.8, 0.6), 2000.0},
                                           {make_ellipsoid(1, 0.3, 0.3, 0.3), -500.0}};
  const PreparedMoments prepared(nominal, 10);
  CHECK(prepared.degree() == 10);
  for (int seed : {1, 2}) {
    const auto sample = moved_sample(nominal, seed);
    const HarmonicFrame frame = frame_for(sample);
    const HarmonicMoments fast = prepared.moments(sample, frame);
    const HarmonicMoments reference = harmonic_moments_reference(sample, frame, 10);
    for (int n = 0; n <= 10; ++n) {
      CAPTURE(seed, n);
      CHECK(relative_difference(fast, reference, n) < 1e-12);
    }
  }
}

TEST_CASE("prepared moments equal the unprepared fast path bit for bit, for any thread count and lower degrees",
          "[moments]") {
  const std::vector<DensityRegion> nominal{{make_geodesic_sphere(24), 1000.0}};
  const PreparedMoments prepared(nominal, 16);
  const auto sample = moved_sample(nominal, 3);
  const HarmonicFrame frame = frame_for(sample);
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

TEST_CASE("prepared moments refuse another topology, more regions and a higher degree", "[moments]") {
  const std::vector<DensityRegion> nominal{{make_ellipsoid(1, 1.0, 0.8, 0.6), 2000.0}};
  const PreparedMoments prepared(nominal, 8);
  const HarmonicFrame frame = frame_for(nominal);
  std::vector<DensityRegion> other = nominal;
  other.front().mesh.faces.col(1).swap(other.front().mesh.faces.col(2));
  CHECK_THROWS_AS(prepared.moments(other, frame), ConventionError);
  std::vector<DensityRegion> two = nominal;
  two.push_back(nominal.front());
  CHECK_THROWS_AS(prepared.moments(two, frame), ConventionError);
  CHECK_THROWS_AS(prepared.moments(nominal, frame, {}, 9), ConventionError);
  CHECK_THROWS_AS(PreparedMoments(nominal, -1), ConventionError);
}
