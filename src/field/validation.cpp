#include "polystokes/field/validation.h"

#include <fmt/format.h>

#include <Eigen/Geometry>
#include <algorithm>
#include <cmath>
#include <limits>
#include <nlohmann/json.hpp>

#include "internal/parallel.h"
#include "polystokes/core/constants.h"
#include "polystokes/core/errors.h"
#include "polystokes/field/fast_field.h"
#include "polystokes/field/polyhedron_gravity.h"
#include "polystokes/field/series.h"
#include "polystokes/field/surface_environment.h"
#include "polystokes/mesh/geometry.h"
#include "polystokes/sets/conventions.h"

namespace polystokes {

namespace {

void check_options(const ValidationOptions& options) {
  if (options.radius_factors.empty() && options.altitudes.empty())
    throw ConventionError("nothing to sample: give at least one radius factor or altitude");
  if (options.samples < 1)
    throw ConventionError(fmt::format("samples must be >= 1, got {}", options.samples));
  for (const double f : options.radius_factors)
    if (!(f > 0) || !std::isfinite(f))
      throw ConventionError(fmt::format("radius factor must be positive, got {}", f));
  for (const double h : options.altitudes)
    if (!(h >= 0) || !std::isfinite(h))
      throw ConventionError(fmt::format("altitude must be >= 0 m, got {}", h));
  if (!(options.target > 0) || !std::isfinite(options.target))
    throw ConventionError(fmt::format("target must be positive, got {}", options.target));
}

void add_consistency_warnings(const std::vector<DensityRegion>& regions, const CoefficientSet& set,
                              ValidationReport& report) {
  const double rb = report.brillouin_radius;
  const auto differs = [&](double gm) {
    return std::abs(gm - report.gm_mesh) > 1e-9 * std::abs(report.gm_mesh);
  };
  // The series' monopole is GM C00 (C00 normalized as the 4pi convention, where P00 = 1): a set rescaled to
  // another GM keeps its field by carrying GM_old/GM_new in C00, so only GM C00 enters the errors.
  if (differs(report.gm_field))
    report.warnings.push_back(
        fmt::format("the set's total GM (GM x C00 = {:.9g} m^3 s^-2) differs from G * density * volume of "
                    "the mesh ({:.9g} "
                    "m^3 s^-2) by a relative {:.2e}; the errors below include that difference.",
                    report.gm_field, report.gm_mesh, (report.gm_field - report.gm_mesh) / report.gm_mesh));
  else if (differs(report.gm_set))
    report.notes.push_back(fmt::format(
        "the set's GM ({:.9g} m^3 s^-2) differs from the mesh's ({:.9g} m^3 s^-2), but its C00 = {:.9g} "
        "carries the ratio: the total GM x C00 matches the mesh, and the errors below are those of the same "
        "field.",
        report.gm_set, report.gm_mesh, report.gm_field / report.gm_set));
  if (set.brillouin_radius > 0 && std::abs(set.brillouin_radius - rb) > 1e-9 * rb)
    report.warnings.push_back(
        fmt::format("the set's Brillouin radius ({:.9g} m) differs from the mesh's about the "
                    "set's origin ({:.9g} m): was the set computed from this mesh?",
                    set.brillouin_radius, rb));
  if (set.origin == OriginKind::center_of_mass) {
    const Eigen::Vector3d com = mass_properties(regions).center_of_mass;
    if ((com - set.origin_in_mesh).norm() > 1e-9 * rb)
      report.warnings.push_back(fmt::format(
          "the set's origin is the centre of mass ({:.9g}, {:.9g}, {:.9g}) m but the mesh's centre of mass "
          "is "
          "({:.9g}, {:.9g}, {:.9g}) m: the set and the mesh (or densities) do not match.",
          set.origin_in_mesh.x(), set.origin_in_mesh.y(), set.origin_in_mesh.z(), com.x(), com.y(), com.z()));
  }
  if (set.regions.size() == regions.size()) {
    for (size_t i = 0; i < regions.size(); ++i) {
      const std::string& recorded = set.regions[i].checksum;
      const std::string& actual = regions[i].mesh.checksum;
      if (!recorded.empty() && !actual.empty() && recorded != actual)
        report.warnings.push_back(
            fmt::format("mesh {} is not the mesh the set was computed from (SHA-256 {} "
                        "recorded as {} in the set)",
                        regions[i].mesh.source, actual, recorded));
    }
  }
}

// The set with its origin and axes in the mesh frame: a set about the centre of mass whose place it does
// not record (a table declared "com") is placed at the mesh's; an unknown origin or unknown axes cannot be
// sampled and are refused.
CoefficientSet placed_in_mesh(const std::vector<DensityRegion>& regions, const CoefficientSet& set) {
  if (!set.axes_known)
    throw UnplacedSetError(
        fmt::format("the set's axes ('{}') are not known in the mesh frame: validation needs them",
                    frame_label(set)),
        false, true);
  if (set.origin_known) return set;
  if (set.origin != OriginKind::center_of_mass)
    throw UnplacedSetError("the set's origin is unknown: validation needs it", true, false);
  CoefficientSet placed = set;
  placed.origin_in_mesh = mass_properties(regions).center_of_mass;
  placed.origin_known = true;
  return placed;
}

}  // namespace

std::vector<Eigen::Vector3d> fibonacci_directions(int n) {
  std::vector<Eigen::Vector3d> out;
  const double golden_angle = M_PI * (3.0 - std::sqrt(5.0));
  for (int i = 0; i < n; ++i) {
    const double z = 1.0 - (2.0 * i + 1.0) / n, rho = std::sqrt(std::max(0.0, 1.0 - z * z));
    const double phi = golden_angle * i;
    out.emplace_back(rho * std::cos(phi), rho * std::sin(phi), z);
  }
  return out;
}

ValidationReport validate_series(const std::vector<DensityRegion>& regions, const CoefficientSet& given,
                                 const ValidationOptions& options) {
  check_options(options);
  if (regions.empty()) throw ConventionError("no mesh given");
  const CoefficientSet set = placed_in_mesh(regions, given);
  const PolyhedronGravity exact(regions);
  const SeriesModel series(set);
  const Eigen::Vector3d origin = set.origin_in_mesh;

  ValidationReport report;
  report.degree = series.degree();
  report.target = options.target;
  report.brillouin_radius = brillouin_radius(regions, origin);
  report.reference_radius = set.reference_radius;
  report.gm_set = set.gm;
  report.gm_field = set.gm * set.C(0, 0) * coefficient_factor(set.convention, Convention{}, 0, 0);
  for (const auto& region : regions) report.gm_mesh += gravitational_constant * region_mass(region);
  report.faces = long(exact.face_count());
  report.samples = options.samples;
  add_consistency_warnings(regions, set, report);
  if (!given.origin_known)
    report.notes.push_back(fmt::format(
        "the set's origin is the centre of mass, whose place in the mesh frame the set does not record: "
        "taken as the mesh's centre of mass ({:.9g}, {:.9g}, {:.9g}) m.",
        set.origin_in_mesh.x(), set.origin_in_mesh.y(), set.origin_in_mesh.z()));
  // Validation works in the mesh frame; what the set says its frame is stays with the report.
  if (!set.frame_metadata.empty())
    report.notes.push_back("the set's frame metadata: " + describe(set.frame_metadata) + ".");

  const std::vector<Eigen::Vector3d> directions = fibonacci_directions(options.samples);
  std::vector<Eigen::Vector3d> points;
  std::vector<size_t> shell_of;
  for (const double factor : options.radius_factors) {
    ShellResult shell;
    shell.label = fmt::format("{:g} R_B", factor);
    shell.value = factor;
    for (const auto& u : directions) {
      points.push_back(origin + factor * report.brillouin_radius * u);
      shell_of.push_back(report.shells.size());
    }
    report.shells.push_back(shell);
  }
  if (!options.altitudes.empty()) {
    std::vector<double> surface(directions.size());
    std::vector<const Mesh*> meshes;
    for (const auto& region : regions) meshes.push_back(&region.mesh);
    const SurfaceTree surface_tree(meshes);
    parallel_for(directions.size(), options.threads,
                 [&](size_t i) { surface[i] = surface_tree.farthest_hit(origin, directions[i]); });
    const long missed = long(std::count(surface.begin(), surface.end(), 0.0));
    if (missed > 0)
      report.warnings.push_back(
          fmt::format("{} of {} sample directions from the expansion origin do not meet the "
                      "surface; altitude shells leave them out.",
                      missed, directions.size()));
    for (const double h : options.altitudes) {
      ShellResult shell;
      shell.label = fmt::format("h = {:g} m", h);
      shell.altitude = true;
      shell.value = h;
      for (size_t i = 0; i < directions.size(); ++i) {
        if (surface[i] == 0) continue;
        points.push_back(origin + (surface[i] + h) * directions[i]);
        shell_of.push_back(report.shells.size());
      }
      report.shells.push_back(shell);
    }
  }

  // The exact acceleration at every point: the fast field once over all points, or the direct sum per point.
  std::vector<Eigen::Vector3d> exact_acceleration(points.size());
  if (options.direct) {
    parallel_for(points.size(), options.threads,
                 [&](size_t i) { exact_acceleration[i] = exact.evaluate(points[i]).acceleration; });
  } else {
    Points rows(long(points.size()), 3);
    for (size_t i = 0; i < points.size(); ++i) rows.row(long(i)) = points[i].transpose();
    FastFieldOptions fast_options;
    fast_options.accuracy = options.accuracy;
    fast_options.threads = options.threads;
    const FastFieldResult fast = FastPolyhedronField(regions, fast_options).evaluate(rows);
    for (size_t i = 0; i < points.size(); ++i) exact_acceleration[i] = fast.values[i].acceleration;
    report.exact_method = fmt::format(
        "the exact field by the fast multipole method to {:.1e} of max(|a|, G M / R_B^2) (a-priori bound); "
        "checked against the direct sum on {} points: largest error {:.1e} (--direct sums every face "
        "instead).",
        options.accuracy, fast.report.checked, fast.report.checked_acceleration);
  }

  // errors[i * (degree + 1) + L]: relative acceleration error of point i at truncation degree L.
  const size_t levels = size_t(report.degree) + 1;
  std::vector<double> errors(points.size() * levels, 0.0);
  parallel_for(points.size(), options.threads, [&](size_t i) {
    try {
      const Eigen::Vector3d& p = points[i];
      const Eigen::Vector3d reference = set.axes_in_mesh * exact_acceleration[i];
      const std::vector<FieldValue> sums = series.partial_sums(to_set_frame(set, p));
      for (size_t L = 0; L < levels; ++L)
        errors[i * levels + L] = (sums[L].acceleration - reference).norm() / reference.norm();
    } catch (const Error& e) {
      throw ConventionError(fmt::format("sample point {}: {}", i + 1, e.what()));
    }
  });

  for (auto& shell : report.shells) {
    shell.max_error.assign(levels, 0.0);
    shell.rms_error.assign(levels, 0.0);
    shell.radius_min = std::numeric_limits<double>::infinity();
  }
  for (size_t i = 0; i < points.size(); ++i) {
    ShellResult& shell = report.shells[shell_of[i]];
    const double r = (points[i] - origin).norm();
    shell.points += 1;
    shell.radius_min = std::min(shell.radius_min, r);
    shell.radius_max = std::max(shell.radius_max, r);
    if (r < report.brillouin_radius * (1.0 - 1e-12)) shell.inside_brillouin += 1;
    for (size_t L = 0; L < levels; ++L) {
      const double e = errors[i * levels + L];
      shell.max_error[L] = std::max(shell.max_error[L], e);
      shell.rms_error[L] += e * e;
    }
  }
  for (auto& shell : report.shells) {
    if (shell.points == 0) {
      shell.radius_min = 0;
      continue;
    }
    for (size_t L = 0; L < levels; ++L)
      shell.rms_error[L] = std::sqrt(shell.rms_error[L] / double(shell.points));
    shell.best_degree =
        int(std::min_element(shell.max_error.begin(), shell.max_error.end()) - shell.max_error.begin());
    for (size_t L = 0; L < levels; ++L)
      if (shell.max_error[L] <= options.target) {
        shell.recommended_degree = int(L);
        break;
      }
    if (shell.inside_brillouin > 0)
      report.warnings.push_back(fmt::format(
          "shell '{}': {} of {} points lie inside the Brillouin sphere (r < {:.9g} m), where the series may "
          "diverge; there the error need not fall with degree and a higher degree can be worse.",
          shell.label, shell.inside_brillouin, shell.points, report.brillouin_radius));
    if (shell.recommended_degree < 0)
      report.warnings.push_back(
          fmt::format("shell '{}': the target {:.1e} is not met up to degree {} (best {:.2e} "
                      "at degree {}).",
                      shell.label, options.target, report.degree, shell.max_error[size_t(shell.best_degree)],
                      shell.best_degree));
  }
  return report;
}

SurfaceSeriesError series_error_at_surface(const std::vector<DensityRegion>& regions,
                                           const CoefficientSet& given, int degree, double target,
                                           int threads) {
  if (regions.empty()) throw ConventionError("no mesh given");
  if (!(target > 0)) throw ConventionError(fmt::format("the target error must be positive, got {}", target));
  const CoefficientSet set = placed_in_mesh(regions, given);
  const SeriesModel series(set, degree);
  const Mesh& surface = regions.front().mesh;
  SurfaceSeriesError out;
  out.degree = series.degree();
  out.target = target;
  out.centroid = facet_centroids(surface);
  const Eigen::Index faces = out.centroid.rows();
  FastFieldOptions options;
  options.threads = threads;
  const std::vector<FieldValue> exact = exact_field(regions, out.centroid, options, &out.exact_method);
  Points local(faces, 3);
  for (Eigen::Index f = 0; f < faces; ++f)
    local.row(f) = to_set_frame(set, out.centroid.row(f).transpose()).transpose();
  const std::vector<FieldValue> approximate = series.evaluate(local, threads);
  const double brillouin = brillouin_radius(regions, set.origin_in_mesh);
  out.radius.resize(faces);
  out.inside.resize(faces);
  out.exact.resize(faces, 3);
  out.series.resize(faces, 3);
  out.relative_error.resize(faces);
  double area = 0, above = 0;
  for (Eigen::Index f = 0; f < faces; ++f) {
    const Eigen::Vector3d a_exact = exact[size_t(f)].acceleration;
    const Eigen::Vector3d a_series = to_mesh_frame(set, approximate[size_t(f)]).acceleration;
    out.radius[f] = local.row(f).norm();
    out.inside[f] = out.radius[f] < brillouin ? 1.0 : 0.0;
    out.exact.row(f) = a_exact.transpose();
    out.series.row(f) = a_series.transpose();
    out.relative_error[f] = (a_series - a_exact).norm() / a_exact.norm();
    const auto corner = [&](int k) { return surface.vertices.row(surface.faces(f, k)).transpose(); };
    const double facet_area = 0.5 * (corner(1) - corner(0)).cross(corner(2) - corner(0)).norm();
    area += facet_area;
    // A diverging series gives inf or NaN: that facet is certainly above the target.
    if (!(out.relative_error[f] <= target)) above += facet_area;
  }
  out.area_above_target = area > 0 ? above / area : 0;
  out.max_error = faces > 0 ? out.relative_error.maxCoeff<Eigen::PropagateNaN>() : 0;
  return out;
}

}  // namespace polystokes
