// The surface environment as per-facet files (io/facet_file.h): the columns of every facet with their units,
// the conventions in words, and in JSON the spin, references, statistics and equilibrium points.
#pragma once

#include <string>
#include <vector>

#include "polystokes/core/mesh.h"
#include "polystokes/field/equilibrium_points.h"
#include "polystokes/field/surface_environment.h"
#include "polystokes/field/validation.h"
#include "polystokes/io/facet_file.h"

namespace polystokes {

/// What the files say about how they were made.
struct SurfaceProvenance {
  std::string body;     ///< label
  std::string model;    ///< the gravity model, e.g. "exact constant-density polyhedron, 2 regions"
  std::string created;  ///< program version and UTC time
};

/// The per-facet table: centroid_{x,y,z}_m, normal_{x,y,z}, area_m2, g_gravity_{x,y,z}_m_s2,
/// g_centrifugal_{x,y,z}_m_s2, g_total_{x,y,z}_m_s2, potential_m2_s2, effective_potential_J_kg, slope_deg,
/// dynamic_height_m, launch_speed_m_s; the comments state the spin, the potentials' signs, the references of
/// the dynamic height, the definitions of slope and launch speed, and the caution.
FacetTable surface_table(const SurfaceEnvironment& env, const SurfaceProvenance& provenance);

/// The JSON members beside the table: provenance, spin, reference values, statistics with histograms and,
/// when given, the equilibrium points with the search's settings (JSON object text, for facet_json).
std::string surface_json_extra(const SurfaceEnvironment& env, const EquilibriumResult* equilibria,
                               const SurfaceProvenance& provenance);

/// The per-facet table of the series' error at the surface: centroid_{x,y,z}_m, radius_m (from the expansion
/// origin), inside_brillouin (1 or 0), exact_{x,y,z}_m_s2, series_{x,y,z}_m_s2, relative_error and
/// above_target (1 or 0); the comments name the set, its degree, the target and the caution.
FacetTable series_error_table(const SurfaceSeriesError& map, const std::string& set_name,
                              const std::string& created);

/// Writes every path in its form (facet_form_for), all or none.
void write_surface_files(const std::vector<std::string>& paths, const Mesh& mesh,
                         const SurfaceEnvironment& env, const EquilibriumResult* equilibria,
                         const SurfaceProvenance& provenance);

}  // namespace polystokes
