// Generates the meshes of shapes-demo/: the invented bodies of the demo scenario and two check shapes.
// Usage: make_demo_shapes OUTPUT_DIR. Deterministic: the same program writes the same files.
#include <cmath>
#include <cstdio>
#include <exception>
#include <string>

#include "polystokes/io/mesh_io.h"
#include "polystokes/mesh/shapes.h"

namespace {

using polystokes::LengthUnit;
using polystokes::Mesh;

// The shape maps below are written in kilometres; meshes hold metres.
Mesh in_meters_from_km(const Mesh& mesh) {
  return polystokes::transformed(mesh, 1000.0 * Eigen::Matrix3d::Identity(), Eigen::Vector3d::Zero());
}

// Varnek: a contact-binary-like body, two lobes joined by a neck, bent so that it is not star-shaped.
// Units: km. The map is smooth and injective (bend radius 2.6 > half thickness 0.9), so no self-intersections.
Mesh varnek() {
  Mesh mesh = polystokes::make_deformed_sphere(5, [](const Eigen::Vector3d& u) {
    const double t = u.x();
    const double waist = 1.0 - 0.55 * std::exp(-(t / 0.32) * (t / 0.32));
    const double x = 2.2 * t, y = 0.9 * waist * u.y(), z = 0.75 * waist * u.z();
    const double bend = 2.6;
    return Eigen::Vector3d((bend + y) * std::sin(x / bend), (bend + y) * std::cos(x / bend) - bend, z);
  });
  mesh.source = "varnek";
  return in_meters_from_km(mesh);
}

// Quillop: a flattened spinning-top body with an equatorial ridge. Units: km.
Mesh quillop() {
  Mesh mesh = polystokes::make_deformed_sphere(5, [](const Eigen::Vector3d& u) {
    const double c2 = 1.0 - u.z() * u.z();  // cos^2(latitude)
    const double r = 0.42 * (0.80 + 0.20 * c2 * c2 * c2);
    return Eigen::Vector3d(r * u.x(), r * u.y(), 0.92 * r * u.z());
  });
  mesh.source = "quillop";
  return in_meters_from_km(mesh);
}

// Brennow: a lumpy triaxial ellipsoid, a few smooth fixed bumps on a 3.0 x 2.1 x 1.7 km body. Units: km.
Mesh brennow() {
  Mesh mesh = polystokes::make_deformed_sphere(5, [](const Eigen::Vector3d& u) {
    const double lumps = 1.0 + 0.06 * u.x() * u.y() + 0.05 * (u.z() * u.z() * u.z() - 0.6 * u.z()) +
                         0.04 * std::sin(3.0 * u.x() + 1.0) * std::cos(2.0 * u.y()) +
                         0.08 * std::exp(-8.0 * ((u - Eigen::Vector3d(0.6, 0.6, 0.53)).squaredNorm()));
    return Eigen::Vector3d(1.5 * lumps * u.x(), 1.05 * lumps * u.y(), 0.85 * lumps * u.z());
  });
  mesh.source = "brennow";
  return in_meters_from_km(mesh);
}

}  // namespace

int main(int argc, char** argv) {
  if (argc != 2) {
    std::fprintf(stderr, "usage: make_demo_shapes OUTPUT_DIR\n");
    return 1;
  }
  const std::string dir = argv[1];
  try {
    polystokes::write_obj(varnek(), dir + "/varnek.obj", LengthUnit::kilometer);
    polystokes::write_obj(quillop(), dir + "/quillop.obj", LengthUnit::kilometer);
    polystokes::write_obj(brennow(), dir + "/brennow.obj", LengthUnit::kilometer);
    polystokes::write_obj(polystokes::make_box(1, 1, 1), dir + "/unit_cube.obj", LengthUnit::meter);
    polystokes::write_obj(in_meters_from_km(polystokes::make_icosphere(4)), dir + "/sphere.obj", LengthUnit::kilometer);
  } catch (const std::exception& e) {
    std::fprintf(stderr, "make_demo_shapes: %s\n", e.what());
    return 2;
  }
  return 0;
}
