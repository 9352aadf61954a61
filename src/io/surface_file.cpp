#include "polystokes/io/surface_file.h"

#include <fmt/format.h>

#include <nlohmann/json.hpp>

#include "polystokes/core/constants.h"

namespace polystokes {
namespace {

nlohmann::json statistics_json(const AreaStatistics& stats) {
  return {{"mean", stats.mean},
          {"minimum", stats.minimum},
          {"maximum", stats.maximum},
          {"histogram", {{"edges", stats.edges}, {"area_fraction", stats.area_fraction}}}};
}

}  // namespace

FacetTable surface_table(const SurfaceEnvironment& env, const SurfaceProvenance& provenance) {
  const Eigen::Vector3d& a = env.spin.axis;
  const Eigen::Vector3d& c = env.spin.center;
  FacetTable table;
  table.title = fmt::format("polystokes surface environment of {} ({})", provenance.body, provenance.created);
  table.comments = {
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
  const SurfaceFacets& s = env.facets;
  table.add_vector("centroid", "_m", s.centroid);
  table.add_vector("normal", "", s.normal);
  table.add("area_m2", s.area);
  table.add_vector("g_gravity", "_m_s2", s.gravity);
  table.add_vector("g_centrifugal", "_m_s2", s.centrifugal);
  table.add_vector("g_total", "_m_s2", s.total);
  table.add("potential_m2_s2", s.potential);
  table.add("effective_potential_J_kg", s.effective);
  table.add("slope_deg", s.slope);
  table.add("dynamic_height_m", s.height);
  table.add("launch_speed_m_s", s.launch_speed);
  return table;
}

std::string surface_json_extra(const SurfaceEnvironment& env, const EquilibriumResult* equilibria,
                               const SurfaceProvenance& provenance) {
  nlohmann::json doc;
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
    const EquilibriumSearch& search = equilibria->search;
    doc["equilibrium_points"] = {{"points", points},
                                 {"search",
                                  {{"azimuths", search.azimuths},
                                   {"radii", search.radii},
                                   {"inner_m", search.inner},
                                   {"outer_m", search.outer},
                                   {"tolerance", search.tolerance}}}};
  }
  return doc.dump();
}

void write_surface_files(const std::vector<std::string>& paths, const Mesh& mesh,
                         const SurfaceEnvironment& env, const EquilibriumResult* equilibria,
                         const SurfaceProvenance& provenance) {
  write_facet_files(paths, mesh, surface_table(env, provenance),
                    surface_json_extra(env, equilibria, provenance));
}

FacetTable series_error_table(const SurfaceSeriesError& map, const std::string& set_name,
                              const std::string& created) {
  FacetTable table;
  table.title = fmt::format("polystokes series error at the surface: {} to degree {} ({})", set_name,
                            map.degree, created);
  table.comments = {
      "relative_error = |a_series - a_exact| / |a_exact| at each facet centroid; exact: constant-density "
      "polyhedron gravity of the meshes",
      fmt::format("above_target = 1 where relative_error > {} (or the series diverges); {} of the area",
                  map.target, map.area_above_target),
      "inside_brillouin = 1 where the centroid lies inside the Brillouin sphere, where the series may "
      "diverge",
      std::string("CAUTION: ") + operational_caution(),
  };
  table.add_vector("centroid", "_m", map.centroid);
  table.add("radius_m", map.radius);
  table.add("inside_brillouin", map.inside);
  table.add_vector("exact", "_m_s2", map.exact);
  table.add_vector("series", "_m_s2", map.series);
  table.add("relative_error", map.relative_error);
  table.add("above_target",
            map.relative_error.unaryExpr([&](double e) { return e <= map.target ? 0.0 : 1.0; }).eval());
  return table;
}

}  // namespace polystokes
