// Per-facet results in the files the tools people already use: a binary PLY with per-face properties (any
// mesh viewer colours by them), a CSV with one row per facet, and a JSON document; chosen by file extension.
#pragma once

#include <Eigen/Core>
#include <string>
#include <vector>

#include "polystokes/core/mesh.h"

namespace polystokes {

/// The forms a per-facet file can take, chosen by the file name's extension.
enum class FacetFileForm { ply, csv, json };

/// The form of `path` by its extension (.ply, .csv, .json, any case). Throws ConventionError naming the
/// accepted extensions for any other name.
FacetFileForm facet_form_for(const std::string& path);

/// Columns of per-facet values, one value per facet of the mesh in its face order.
struct FacetTable {
  std::string title;                  ///< first comment line and the JSON "format"
  std::vector<std::string> comments;  ///< conventions in words, one line each (the caution among them)
  std::vector<std::string> names;     ///< column names with their unit, e.g. "slope_deg"
  std::vector<Eigen::VectorXd> columns;

  /// Adds the column `name`.
  void add(const std::string& name, const Eigen::VectorXd& values);
  /// Adds PREFIX_x UNIT, PREFIX_y UNIT, PREFIX_z UNIT from the three columns of `values` (e.g. "g_total",
  /// "_m_s2" gives g_total_x_m_s2 ...).
  void add_vector(const std::string& prefix, const std::string& unit,
                  const Eigen::Matrix<double, Eigen::Dynamic, 3, Eigen::RowMajor>& values);
};

/// Binary little-endian PLY: the mesh's vertices (x, y, z as double, m) and faces (uchar count, int
/// indices), every column a double face property, the title and comments as `comment` lines.
std::string facet_ply(const Mesh& mesh, const FacetTable& table);
/// "# " comment lines, the header "facet,NAME,...", one row per facet; numbers round-trip doubles.
std::string facet_csv(const FacetTable& table);
/// A JSON object: "format" (the title), "conventions" (the comments), the members of `extra` (JSON object
/// text, e.g. statistics; "{}" for none) and "facets" (each column as an array).
std::string facet_json(const FacetTable& table, const std::string& extra = "{}");

class OutputGroup;

/// Stages every path in its form into `group` (output_file.h), which the caller commits together with its
/// other outputs. Throws as write_facet_files.
void stage_facet_files(OutputGroup& group, const std::vector<std::string>& paths, const Mesh& mesh,
                       const FacetTable& table, const std::string& json_extra = "{}");

/// Writes every path in its form, all or none (one OutputGroup). Throws ConventionError for an unknown
/// extension, a path given twice, or columns whose length is not the mesh's face count; OutputError when a
/// file cannot be written.
void write_facet_files(const std::vector<std::string>& paths, const Mesh& mesh, const FacetTable& table,
                       const std::string& json_extra = "{}");

}  // namespace polystokes
