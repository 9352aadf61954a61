// Plausibility of physical inputs: values that are legal but usually a unit slip or a misunderstanding (a
// density in g/cm^3, a radius in the wrong unit, a degree the mesh cannot resolve). Warnings only, never
// fatal.
#pragma once

#include <optional>
#include <string>
#include <vector>

#include "polystokes/mesh/mass_properties.h"
#include "polystokes/core/mesh.h"

namespace polystokes {

/// Densities (and bulk densities implied by a GM or mass) of small bodies lie within these bounds, kg m^-3:
/// from highly porous comet nuclei to iron (common practice); outside them a unit slip is likely.
constexpr double plausible_density_min = 100;
constexpr double plausible_density_max = 25000;

/// Bodies this tool is made for measure between these radii, m (common practice).
constexpr double plausible_radius_min = 1;
constexpr double plausible_radius_max = 1e7;

/// A warning when |density| (kg m^-3) is outside the plausible range; `what` names it ("density of X").
std::optional<std::string> density_warning(double density, const std::string& what);

/// A warning when a body whose farthest point is `brillouin_radius` m from its origin is smaller than 1 m or
/// larger than 10^7 m.
std::optional<std::string> body_size_warning(double brillouin_radius);

/// A warning when the reference radius is below 0.5x or above 10x the Brillouin radius (both m; none when the
/// Brillouin radius is unknown, 0).
std::optional<std::string> reference_radius_warning(double reference_radius, double brillouin_radius);

/// A warning when a GM changes by more than a factor of 10^3 either way (both m^3 s^-2).
std::optional<std::string> gm_change_warning(double gm_before, double gm_after);

/// A warning when `degree` exceeds twice the degree `mesh` resolves (resolvable_degree of its
/// equivalent-volume radius, from `volume` m^3, and its mean edge length; mesh_measures.h). O(F).
std::optional<std::string> degree_warning(int degree, const Mesh& mesh, double volume);

/// Every warning above that applies to a computation of regions (densities, bulk density, size, degree,
/// reference radius): collected for a set's notes and the command's output.
std::vector<std::string> computation_warnings(const std::vector<DensityRegion>& regions,
                                              const MassProperties& props, int degree,
                                              double reference_radius, double brillouin_radius);

}  // namespace polystokes
