#include "cli_common.h"

#include <cstdio>
#include <fmt/format.h>
#include <sstream>

#include "errors.h"
#include "harmonics.h"
#include "mesh_check.h"
#include "mesh_io.h"

namespace polystokes::cli {

void print_notice(const GlobalOptions& global, const std::string& text) {
  if (!global.quiet) std::fprintf(stderr, "polystokes: note: %s\n", text.c_str());
}

Mesh load_checked_mesh(const std::string& path, LengthUnit unit, double merge_tolerance,
                       const GlobalOptions& global) {
  MeshReadOptions options;
  options.unit = unit;
  options.merge_tolerance = merge_tolerance;
  Mesh mesh = read_mesh(path, options);
  validate_mesh(mesh);
  for (const auto& notice : mesh.notices) print_notice(global, path + ": " + notice);
  return mesh;
}

LengthUnit parse_unit_option(const std::string& text) { return parse_length_unit(text); }

Eigen::Vector3d parse_vector3(const std::string& text, const std::string& what) {
  Eigen::Vector3d v;
  std::stringstream stream(text);
  std::string item;
  int count = 0;
  while (std::getline(stream, item, ',')) {
    if (count >= 3) break;
    try {
      size_t used = 0;
      v[count] = std::stod(item, &used);
      if (used != item.size()) throw std::invalid_argument(item);
    } catch (const std::exception&) {
      throw ConventionError(what + ": '" + text + "' is not three comma-separated numbers");
    }
    ++count;
  }
  if (count != 3 || std::getline(stream, item, ','))
    throw ConventionError(what + ": '" + text + "' is not three comma-separated numbers");
  return v;
}

std::string format_mass_properties(const MassProperties& props, LengthUnit unit) {
  const double u = meters_per(unit);
  const std::string name = to_string(unit);
  std::string out;
  out += fmt::format("  volume             {:.9g} m^3 ({:.9g} {}^3)\n", props.volume, props.volume / (u * u * u), name);
  out += fmt::format("  mass               {:.9g} kg\n", props.mass);
  out += fmt::format("  GM                 {:.9g} m^3 s^-2 (G = {} CODATA 2018)\n",
                     gravitational_constant * props.mass, gravitational_constant);
  out += fmt::format("  centre of mass     ({:.9g}, {:.9g}, {:.9g}) m, mesh frame\n", props.center_of_mass.x(),
                     props.center_of_mass.y(), props.center_of_mass.z());
  out += "  inertia about COM  kg m^2, mesh frame\n";
  for (int i = 0; i < 3; ++i)
    out += fmt::format("                     [{:>16.9g} {:>16.9g} {:>16.9g}]\n", props.inertia(i, 0),
                       props.inertia(i, 1), props.inertia(i, 2));
  out += fmt::format("  principal moments  A={:.9g} B={:.9g} C={:.9g} kg m^2 (ascending)\n",
                     props.principal_moments[0], props.principal_moments[1], props.principal_moments[2]);
  for (int k = 0; k < 3; ++k)
    out += fmt::format("  principal axis {}   ({:+.9f}, {:+.9f}, {:+.9f})\n", "ABC"[k], props.principal_axes(0, k),
                       props.principal_axes(1, k), props.principal_axes(2, k));
  return out;
}

}  // namespace polystokes::cli
