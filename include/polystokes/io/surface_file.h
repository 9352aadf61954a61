// Files of the surface environment for the tools people already use: a binary PLY with per-facet
// properties (any mesh viewer colours by them), a CSV with one row per facet, and a JSON document.
#pragma once

#include <string>
#include <vector>

#include "polystokes/core/mesh.h"
#include "polystokes/field/equilibrium_points.h"
#include "polystokes/field/surface_environment.h"

namespace polystokes {

/// The forms a surface file can take, chosen by the file name's extension.
enum class SurfaceFileForm { ply, csv, json };

/// The form of `path` by its extension (.ply, .csv, .json, any case). Throws ConventionError naming the
/// accepted extensions for any other name ("-" is refused: the PLY is binary and the forms differ).
SurfaceFileForm surface_form_for(const std::string& path);

/// The per-facet columns, in file order, with their units in the name (e.g. "slope_deg",
/// "dynamic_height_m", "g_total_x_m_s2"); the CSV header and the PLY face properties use these names.
const std::vector<std::string>& surface_columns();

/// What the files say about how they were made.
struct SurfaceProvenance {
  std::string body;     ///< label
  std::string model;    ///< the gravity model, e.g. "exact constant-density polyhedron, 2 regions"
  std::string created;  ///< program version and UTC time
};

/// The file contents. The PLY is binary little-endian: the mesh's vertices (x, y, z as double, m) and faces
/// (uchar count, int indices) with every surface column as a double face property, and comments stating the
/// spin, the reference values and the caution. The CSV starts with "# " comment lines saying the same, then
/// the header "facet,COLUMN,..." and one row per facet; numbers round-trip doubles. The JSON holds the
/// provenance, spin, references, statistics with histograms, the equilibrium points (when given) and the
/// per-facet columns as arrays.
std::string surface_ply(const Mesh& mesh, const SurfaceEnvironment& env, const SurfaceProvenance& provenance);
std::string surface_csv(const SurfaceEnvironment& env, const SurfaceProvenance& provenance);
std::string surface_json(const SurfaceEnvironment& env, const EquilibriumResult* equilibria,
                         const SurfaceProvenance& provenance);

/// Writes every path in its form, all or none (one OutputGroup). Throws ConventionError for an unknown
/// extension or a path given twice, OutputError when a file cannot be written.
void write_surface_files(const std::vector<std::string>& paths, const Mesh& mesh,
                         const SurfaceEnvironment& env, const EquilibriumResult* equilibria,
                         const SurfaceProvenance& provenance);

}  // namespace polystokes
