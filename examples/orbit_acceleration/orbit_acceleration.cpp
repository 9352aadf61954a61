// Example consumer of the installed polystokes package: reads a coefficient set and prints the gravitational
// acceleration along a circular equatorial orbit of radius twice the set's reference radius.
// Usage: orbit_acceleration SET [POINTS]   (prints CSV: x_m,y_m,z_m,ax_m_s2,ay_m_s2,az_m_s2)
#include <cmath>
#include <cstdio>
#include <exception>
#include <string>

#include "polystokes/core/errors.h"
#include "polystokes/field/series.h"
#include "polystokes/io/coefficient_file.h"

int main(int argc, char** argv) {
  if (argc < 2 || argc > 3) {
    std::fprintf(stderr, "usage: orbit_acceleration SET [POINTS]\n");
    return 1;
  }
  try {
    const polystokes::CoefficientSet set = polystokes::read_coefficient_file(argv[1]);
    const int count = argc == 3 ? std::stoi(argv[2]) : 8;
    const polystokes::SeriesModel model(set);
    const double radius = 2 * model.reference_radius();
    const double pi = std::acos(-1.0);
    std::printf("x_m,y_m,z_m,ax_m_s2,ay_m_s2,az_m_s2\n");
    for (int k = 0; k < count; ++k) {
      const double angle = 2 * pi * k / count;
      const Eigen::Vector3d point(radius * std::cos(angle), radius * std::sin(angle), 0.0);
      const Eigen::Vector3d a = model.evaluate(point).acceleration;
      std::printf("%.17g,%.17g,%.17g,%.17g,%.17g,%.17g\n", point.x(), point.y(), point.z(), a.x(), a.y(), a.z());
    }
  } catch (const polystokes::Error& e) {
    std::fprintf(stderr, "orbit_acceleration: %s\n", e.what());
    return 2;
  } catch (const std::exception& e) {
    std::fprintf(stderr, "orbit_acceleration: %s\n", e.what());
    return 2;
  }
  return 0;
}
