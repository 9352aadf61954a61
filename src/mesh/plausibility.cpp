#include "polystokes/mesh/plausibility.h"

#include <fmt/format.h>

#include <cmath>

#include "polystokes/mesh/mesh_measures.h"

namespace polystokes {

std::optional<std::string> density_warning(double density, const std::string& what) {
  const double magnitude = std::abs(density);
  if (magnitude >= plausible_density_min && magnitude <= plausible_density_max) return std::nullopt;
  // A value near the plausible range divided by 1000 is the classic g/cm^3 slip.
  const bool grams = magnitude * 1e3 >= plausible_density_min && magnitude * 1e3 <= plausible_density_max;
  return fmt::format("{} is {} kg m^-3, outside the {}-{} kg m^-3 of known small bodies{}", what, density,
                     plausible_density_min, plausible_density_max,
                     grams ? fmt::format(" (was {} g/cm^3 meant? that is {} kg m^-3)", density, density * 1e3)
                           : std::string(": check its unit"));
}

std::optional<std::string> body_size_warning(double brillouin_radius) {
  if (brillouin_radius >= plausible_radius_min && brillouin_radius <= plausible_radius_max)
    return std::nullopt;
  return fmt::format(
      "the body reaches {} m from its origin, outside the 1 m to 1e7 m of small bodies: is the "
      "length unit of the mesh file right?",
      brillouin_radius);
}

std::optional<std::string> reference_radius_warning(double reference_radius, double brillouin_radius) {
  if (brillouin_radius <= 0) return std::nullopt;
  const double ratio = reference_radius / brillouin_radius;
  if (ratio >= 0.5 && ratio <= 10) return std::nullopt;
  const bool kilo = std::abs(std::log10(ratio) - 3) < 0.5 || std::abs(std::log10(ratio) + 3) < 0.5;
  return fmt::format("the reference radius {} m is {:.3g} times the Brillouin radius {} m{}",
                     reference_radius, ratio, brillouin_radius,
                     kilo ? ": a factor near 1000 is the mark of a length read in m instead of km or back"
                          : " (usual: 0.5 to 10 times)");
}

std::optional<std::string> gm_change_warning(double gm_before, double gm_after) {
  const double ratio = gm_after / gm_before;
  if (ratio <= 1e3 && ratio >= 1e-3) return std::nullopt;
  return fmt::format(
      "GM changes by a factor of {:.6g} (from {} to {} m^3 s^-2): a bare GM is in m^3 s^-2; a "
      "factor of 1e9 is the mark of km^3 s^-2 read as m^3 s^-2 or back",
      ratio, gm_before, gm_after);
}

std::optional<std::string> degree_warning(int degree, const Mesh& mesh, double volume) {
  const double edge = mean_edge_length(mesh);
  const double radius = equivalent_radius(volume);
  const int resolved = resolvable_degree(radius, edge);
  if (degree <= 2 * resolved) return std::nullopt;
  return fmt::format(
      "degree {} is far beyond the degree {} that {} resolves (pi R / mean edge length, R = {} m "
      "the equivalent-volume radius, mean edge {} m): the terms above it describe the facets, "
      "not the body",
      degree, resolved, mesh.source.empty() ? std::string("the mesh") : mesh.source, radius, edge);
}

std::vector<std::string> computation_warnings(const std::vector<DensityRegion>& regions,
                                              const MassProperties& props, int degree,
                                              double reference_radius, double brillouin_radius) {
  std::vector<std::string> warnings;
  const auto add = [&warnings](std::optional<std::string> warning) {
    if (warning) warnings.push_back(std::move(*warning));
  };
  for (const DensityRegion& region : regions)
    add(density_warning(region.density.constant(), "the density of " + region.mesh.source));
  if (regions.size() > 1 && props.volume > 0)
    add(density_warning(props.mass / props.volume, "the bulk density"));
  add(body_size_warning(brillouin_radius));
  add(reference_radius_warning(reference_radius, brillouin_radius));
  if (!regions.empty() && !props.region_volumes.empty())
    add(degree_warning(degree, regions.front().mesh, props.region_volumes.front()));
  return warnings;
}

}  // namespace polystokes
