#include "polystokes/io/surface_file.h"

#include <fmt/format.h>

#include <algorithm>
#include <cctype>
#include <cstring>
#include <filesystem>
#include <nlohmann/json.hpp>

#include "polystokes/core/constants.h"
#include "polystokes/core/errors.h"
#include "polystokes/io/output_file.h"

namespace polystokes {
namespace {

/// One per-facet column: its name (with unit) and where its values are: a component of a per-facet vector
/// or a per-facet scalar.
struct Column {
  std::string name;
  Points SurfaceFacets::*vector = nullptr;
  int component = 0;
  Eigen::VectorXd SurfaceFacets::*scalar = nullptr;

  double value(const SurfaceFacets& s, Eigen::Index f) const {
    return vector != nullptr ? (s.*vector)(f, component) : (s.*scalar)[f];
  }
};

/// The one table of columns, in file order.
const std::vector<Column>& columns() {
  static const std::vector<Column> table = [] {
    std::vector<Column> out;
    auto vector = [&](const std::string& prefix, const std::string& unit, Points SurfaceFacets::*member) {
      for (int k = 0; k < 3; ++k) out.push_back({prefix + "_" + "xyz"[k] + unit, member, k, nullptr});
    };
    auto scalar = [&](const std::string& name, Eigen::VectorXd SurfaceFacets::*member) {
      out.push_back({name, nullptr, 0, member});
    };
    vector("centroid", "_m", &SurfaceFacets::centroid);
    vector("normal", "", &SurfaceFacets::normal);
    scalar("area_m2", &SurfaceFacets::area);
    vector("g_gravity", "_m_s2", &SurfaceFacets::gravity);
    vector("g_centrifugal", "_m_s2", &SurfaceFacets::centrifugal);
    vector("g_total", "_m_s2", &SurfaceFacets::total);
    scalar("potential_m2_s2", &SurfaceFacets::potential);
    scalar("effective_potential_J_kg", &SurfaceFacets::effective);
    scalar("slope_deg", &SurfaceFacets::slope);
    scalar("dynamic_height_m", &SurfaceFacets::height);
    scalar("launch_speed_m_s", &SurfaceFacets::launch_speed);
    return out;
  }();
  return table;
}

/// The lines every form states before its data (as comments in PLY and CSV).
std::vector<std::string> header_lines(const SurfaceEnvironment& env, const SurfaceProvenance& provenance) {
  const Eigen::Vector3d& a = env.spin.axis;
  const Eigen::Vector3d& c = env.spin.center;
  return {
      fmt::format("polystokes surface environment of {} ({})", provenance.body, provenance.created),
      fmt::format("gravity model: {}", provenance.model),
      fmt::format("spin: period {} s, axis ({}, {}, {}) mesh frame, right-handed, through ({}, {}, {}) m",
                  env.spin.period, a.x(), a.y(), a.z(), c.x(), c.y(), c.z()),
      "potentials: U > 0 (geodesy sign); effective potential W = -U - 1/2 omega^2 d^2 (J/kg)",
      fmt::format("dynamic height = (W - W_ref) / g_ref, W_ref = {} J/kg and g_ref = {} m/s^2 (area-weighted "
                  "surface means)",
                  env.reference_potential, env.reference_gravity),
      "slope: angle between the total acceleration and the inward normal, degrees",
      "launch speed: along the outward normal, relative to the surface, giving escape energy (re-impact "
      "ignored)",
      std::string("CAUTION: ") + operational_caution(),
  };
}

void check_facets(const SurfaceEnvironment& env, const Mesh& mesh) {
  if (env.facets.area.size() != mesh.faces.rows())
    throw ConventionError(fmt::format("{} facets of results for a mesh of {} faces", env.facets.area.size(),
                                      mesh.faces.rows()));
}

template <class T>
void append_binary(std::string& out, T value) {
  char bytes[sizeof(T)];
  std::memcpy(bytes, &value, sizeof(T));
  out.append(bytes, sizeof(T));
}

nlohmann::json statistics_json(const AreaStatistics& stats) {
  return {{"mean", stats.mean},
          {"minimum", stats.minimum},
          {"maximum", stats.maximum},
          {"histogram", {{"edges", stats.edges}, {"area_fraction", stats.area_fraction}}}};
}

}  // namespace

SurfaceFileForm surface_form_for(const std::string& path) {
  std::string ext = std::filesystem::path(path).extension().string();
  std::transform(ext.begin(), ext.end(), ext.begin(),
                 [](unsigned char ch) { return char(std::tolower(ch)); });
  if (ext == ".ply") return SurfaceFileForm::ply;
  if (ext == ".csv") return SurfaceFileForm::csv;
  if (ext == ".json") return SurfaceFileForm::json;
  throw ConventionError(fmt::format("{}: a surface file name ends in .ply, .csv or .json", path));
}

const std::vector<std::string>& surface_columns() {
  static const std::vector<std::string> names = [] {
    std::vector<std::string> out;
    for (const Column& column : columns()) out.push_back(column.name);
    return out;
  }();
  return names;
}

std::string surface_ply(const Mesh& mesh, const SurfaceEnvironment& env,
                        const SurfaceProvenance& provenance) {
  check_facets(env, mesh);
  std::string out = "ply\nformat binary_little_endian 1.0\n";
  for (const std::string& line : header_lines(env, provenance)) out += "comment " + line + "\n";
  out += fmt::format("element vertex {}\nproperty double x\nproperty double y\nproperty double z\n",
                     mesh.vertices.rows());
  out += fmt::format("element face {}\nproperty list uchar int vertex_indices\n", mesh.faces.rows());
  for (const Column& column : columns()) out += fmt::format("property double {}\n", column.name);
  out += "end_header\n";
  static_assert(sizeof(double) == 8 && sizeof(int) == 4, "PLY double and int sizes");
  // PLY binary_little_endian: on a big-endian host these would need swapping; the library builds only for
  // little-endian targets (x86-64, aarch64).
  for (Eigen::Index v = 0; v < mesh.vertices.rows(); ++v)
    for (int k = 0; k < 3; ++k) append_binary(out, mesh.vertices(v, k));
  for (Eigen::Index f = 0; f < mesh.faces.rows(); ++f) {
    append_binary(out, static_cast<unsigned char>(3));
    for (int k = 0; k < 3; ++k) append_binary(out, static_cast<int>(mesh.faces(f, k)));
    for (const Column& column : columns()) append_binary(out, column.value(env.facets, f));
  }
  return out;
}

std::string surface_csv(const SurfaceEnvironment& env, const SurfaceProvenance& provenance) {
  fmt::memory_buffer out;
  for (const std::string& line : header_lines(env, provenance))
    fmt::format_to(std::back_inserter(out), "# {}\n", line);
  fmt::format_to(std::back_inserter(out), "facet,{}\n", fmt::join(surface_columns(), ","));
  for (Eigen::Index f = 0; f < env.facets.area.size(); ++f) {
    fmt::format_to(std::back_inserter(out), "{}", f);
    for (const Column& column : columns())
      fmt::format_to(std::back_inserter(out), ",{}", column.value(env.facets, f));
    out.push_back('\n');
  }
  return fmt::to_string(out);
}

std::string surface_json(const SurfaceEnvironment& env, const EquilibriumResult* equilibria,
                         const SurfaceProvenance& provenance) {
  nlohmann::json doc;
  doc["format"] = "polystokes surface environment";
  doc["body"] = provenance.body;
  doc["created"] = provenance.created;
  doc["gravity_model"] = provenance.model;
  doc["caution"] = operational_caution();
  const Eigen::Vector3d& a = env.spin.axis;
  const Eigen::Vector3d& c = env.spin.center;
  doc["spin"] = {{"period_s", env.spin.period},
                 {"axis_mesh_frame", {a.x(), a.y(), a.z()}},
                 {"center_m", {c.x(), c.y(), c.z()}},
                 {"angular_speed_rad_s", env.spin.angular_velocity().norm()}};
  doc["conventions"] = header_lines(env, provenance);
  doc["reference"] = {{"effective_potential_J_kg", env.reference_potential},
                      {"gravity_m_s2", env.reference_gravity},
                      {"rule", "area-weighted means over the surface"}};
  doc["total_area_m2"] = env.total_area;
  doc["overhanging_facets"] = env.overhanging;
  doc["statistics"] = {{"slope_deg", statistics_json(env.slope)},
                       {"dynamic_height_m", statistics_json(env.height)},
                       {"launch_speed_m_s", statistics_json(env.launch_speed)}};
  if (equilibria != nullptr) {
    nlohmann::json points = nlohmann::json::array();
    for (const EquilibriumPoint& p : equilibria->points) {
      nlohmann::json eigenvalues = nlohmann::json::array();
      for (const auto& lambda : p.stability.eigenvalues)
        eigenvalues.push_back({lambda.real(), lambda.imag()});
      points.push_back({{"position_m", {p.position.x(), p.position.y(), p.position.z()}},
                        {"distance_from_axis_m", p.distance_from_axis},
                        {"azimuth_deg", p.azimuth},
                        {"jacobi_constant_J_kg", p.jacobi},
                        {"residual_m_s2", p.residual},
                        {"stable", p.stability.stable()},
                        {"stability", p.stability.describe()},
                        {"eigenvalues_s^-1", eigenvalues}});
    }
    doc["equilibrium_points"] = {{"points", points},
                                 {"search",
                                  {{"azimuths", equilibria->search.azimuths},
                                   {"radii", equilibria->search.radii},
                                   {"inner_m", equilibria->search.inner},
                                   {"outer_m", equilibria->search.outer},
                                   {"tolerance", equilibria->search.tolerance}}}};
  }
  nlohmann::json facets;
  for (const Column& column : columns()) {
    std::vector<double> values(size_t(env.facets.area.size()));
    for (Eigen::Index f = 0; f < env.facets.area.size(); ++f) values[size_t(f)] = column.value(env.facets, f);
    facets[column.name] = values;
  }
  doc["facets"] = facets;
  return doc.dump(1) + "\n";
}

void write_surface_files(const std::vector<std::string>& paths, const Mesh& mesh,
                         const SurfaceEnvironment& env, const EquilibriumResult* equilibria,
                         const SurfaceProvenance& provenance) {
  for (size_t i = 0; i < paths.size(); ++i) {
    surface_form_for(paths[i]);
    for (size_t j = 0; j < i; ++j)
      if (same_output_file(paths[i], paths[j]))
        throw ConventionError(fmt::format("{} is given twice as an output", paths[i]));
  }
  OutputGroup group;
  for (const std::string& path : paths) {
    switch (surface_form_for(path)) {
      case SurfaceFileForm::ply:
        group.stage(path, surface_ply(mesh, env, provenance));
        break;
      case SurfaceFileForm::csv:
        group.stage(path, surface_csv(env, provenance));
        break;
      case SurfaceFileForm::json:
        group.stage(path, surface_json(env, equilibria, provenance));
        break;
    }
  }
  group.commit();
}

}  // namespace polystokes
