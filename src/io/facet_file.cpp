#include "polystokes/io/facet_file.h"

#include <fmt/format.h>

#include <algorithm>
#include <cctype>
#include <cstring>
#include <filesystem>
#include <nlohmann/json.hpp>

#include "polystokes/core/errors.h"
#include "polystokes/io/output_file.h"

namespace polystokes {
namespace {

void check_table(const FacetTable& table, Eigen::Index faces) {
  if (table.names.size() != table.columns.size())
    throw ConventionError(
        fmt::format("{} column names for {} columns", table.names.size(), table.columns.size()));
  for (size_t k = 0; k < table.columns.size(); ++k)
    if (table.columns[k].size() != faces)
      throw ConventionError(fmt::format("column {} has {} values for {} facets", table.names[k],
                                        table.columns[k].size(), faces));
}

Eigen::Index facet_count(const FacetTable& table) {
  return table.columns.empty() ? 0 : table.columns.front().size();
}

template <class T>
void append_binary(std::string& out, T value) {
  char bytes[sizeof(T)];
  std::memcpy(bytes, &value, sizeof(T));
  out.append(bytes, sizeof(T));
}

}  // namespace

void FacetTable::add(const std::string& name, const Eigen::VectorXd& values) {
  names.push_back(name);
  columns.push_back(values);
}

void FacetTable::add_vector(const std::string& prefix, const std::string& unit,
                            const Eigen::Matrix<double, Eigen::Dynamic, 3, Eigen::RowMajor>& values) {
  for (int k = 0; k < 3; ++k) add(prefix + "_" + "xyz"[k] + unit, values.col(k));
}

FacetFileForm facet_form_for(const std::string& path) {
  std::string ext = std::filesystem::path(path).extension().string();
  std::transform(ext.begin(), ext.end(), ext.begin(),
                 [](unsigned char ch) { return char(std::tolower(ch)); });
  if (ext == ".ply") return FacetFileForm::ply;
  if (ext == ".csv") return FacetFileForm::csv;
  if (ext == ".json") return FacetFileForm::json;
  throw ConventionError(fmt::format("{}: a per-facet file name ends in .ply, .csv or .json", path));
}

std::string facet_ply(const Mesh& mesh, const FacetTable& table) {
  check_table(table, mesh.faces.rows());
  std::string out = "ply\nformat binary_little_endian 1.0\ncomment " + table.title + "\n";
  for (const std::string& line : table.comments) out += "comment " + line + "\n";
  out += fmt::format("element vertex {}\nproperty double x\nproperty double y\nproperty double z\n",
                     mesh.vertices.rows());
  out += fmt::format("element face {}\nproperty list uchar int vertex_indices\n", mesh.faces.rows());
  for (const std::string& name : table.names) out += fmt::format("property double {}\n", name);
  out += "end_header\n";
  // Little-endian as declared: the library builds for little-endian targets only (x86-64, aarch64).
  static_assert(sizeof(double) == 8 && sizeof(int) == 4, "PLY double and int sizes");
  for (Eigen::Index v = 0; v < mesh.vertices.rows(); ++v)
    for (int k = 0; k < 3; ++k) append_binary(out, mesh.vertices(v, k));
  for (Eigen::Index f = 0; f < mesh.faces.rows(); ++f) {
    append_binary(out, static_cast<unsigned char>(3));
    for (int k = 0; k < 3; ++k) append_binary(out, static_cast<int>(mesh.faces(f, k)));
    for (const Eigen::VectorXd& column : table.columns) append_binary(out, column[f]);
  }
  return out;
}

std::string facet_csv(const FacetTable& table) {
  check_table(table, facet_count(table));
  fmt::memory_buffer out;
  fmt::format_to(std::back_inserter(out), "# {}\n", table.title);
  for (const std::string& line : table.comments) fmt::format_to(std::back_inserter(out), "# {}\n", line);
  fmt::format_to(std::back_inserter(out), "facet,{}\n", fmt::join(table.names, ","));
  for (Eigen::Index f = 0; f < facet_count(table); ++f) {
    fmt::format_to(std::back_inserter(out), "{}", f);
    for (const Eigen::VectorXd& column : table.columns)
      fmt::format_to(std::back_inserter(out), ",{}", column[f]);
    out.push_back('\n');
  }
  return fmt::to_string(out);
}

std::string facet_json(const FacetTable& table, const std::string& extra) {
  check_table(table, facet_count(table));
  nlohmann::json doc;
  doc["format"] = table.title;
  doc["conventions"] = table.comments;
  const nlohmann::json members = nlohmann::json::parse(extra);
  for (const auto& [key, value] : members.items()) doc[key] = value;
  nlohmann::json facets;
  for (size_t k = 0; k < table.columns.size(); ++k)
    facets[table.names[k]] =
        std::vector<double>(table.columns[k].data(), table.columns[k].data() + table.columns[k].size());
  doc["facets"] = facets;
  return doc.dump(1) + "\n";
}

void stage_facet_files(OutputGroup& group, const std::vector<std::string>& paths, const Mesh& mesh,
                       const FacetTable& table, const std::string& json_extra) {
  check_table(table, mesh.faces.rows());
  for (size_t i = 0; i < paths.size(); ++i) {
    facet_form_for(paths[i]);
    for (size_t j = 0; j < i; ++j)
      if (same_output_file(paths[i], paths[j]))
        throw ConventionError(fmt::format("{} is given twice as an output", paths[i]));
  }
  for (const std::string& path : paths) {
    switch (facet_form_for(path)) {
      case FacetFileForm::ply:
        group.stage(path, facet_ply(mesh, table));
        break;
      case FacetFileForm::csv:
        group.stage(path, facet_csv(table));
        break;
      case FacetFileForm::json:
        group.stage(path, facet_json(table, json_extra));
        break;
    }
  }
}

void write_facet_files(const std::vector<std::string>& paths, const Mesh& mesh, const FacetTable& table,
                       const std::string& json_extra) {
  OutputGroup group;
  stage_facet_files(group, paths, mesh, table, json_extra);
  group.commit();
}

}  // namespace polystokes
