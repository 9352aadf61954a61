#include "polystokes/harmonics/compute.h"

#include <fmt/format.h>

#include <cmath>

#include "harmonics/moment_limits.h"
#include "internal/memory_budget.h"
#include "internal/parallel.h"
#include "polystokes/core/constants.h"
#include "polystokes/core/errors.h"
#include "polystokes/sets/conventions.h"

namespace polystokes {

namespace {

// Refuses a request before any pass over the meshes.
void check_compute_request(const std::vector<DensityRegion>& regions, const ComputeOptions& options) {
  check_moment_degree(options.degree, resolve_threads(options.execution.threads));
  if (regions.empty()) throw ConventionError("no mesh given");
  if (options.reference_radius < 0 || !std::isfinite(options.reference_radius))
    throw ConventionError("reference radius must be positive");
  if (options.origin != OriginKind::center_of_mass && options.origin != OriginKind::mesh &&
      options.origin != OriginKind::point)
    throw ConventionError("a computed set's origin is com, mesh or a point, not " +
                          to_string(options.origin));
  if (options.frame != FrameKind::mesh && options.frame != FrameKind::principal)
    throw ConventionError("a computed set's axes are mesh or principal, not " + to_string(options.frame));
  check_frame_metadata(options.frame_metadata);
  if (options.origin == OriginKind::point && !options.origin_point.allFinite())
    throw ConventionError("expansion origin must be a finite point");
}

// compute_coefficients for a checked request and the regions' mass properties.
CoefficientSet coefficients_with(const std::vector<DensityRegion>& regions, const MassProperties& props,
                                 const ComputeOptions& options) {
  HarmonicFrame frame;
  frame.origin = options.origin == OriginKind::center_of_mass ? props.center_of_mass
                 : options.origin == OriginKind::point        ? options.origin_point
                                                              : Eigen::Vector3d::Zero();
  if (options.frame == FrameKind::principal) frame.axes = props.principal_axes.transpose();
  const double brillouin = brillouin_radius(regions, frame.origin, options.execution.threads);
  frame.scale_radius = brillouin;
  const double reference = options.reference_radius > 0 ? options.reference_radius : brillouin;

  const HarmonicMoments moments = harmonic_moments(regions, frame, options.degree, options.execution);

  CoefficientSet set = make_empty_set(options.degree);
  // Normalizing by the kernel's own degree-0 moment (the same mass to rounding) makes C00 exactly 1.
  moments_to_coefficients(moments, moments.re(0, 0), reference, set);
  set.body = options.body;
  set.gm = gravitational_constant * props.mass;
  set.reference_radius = reference;
  set.origin = options.origin;
  set.frame = options.frame;
  set.frame_metadata = options.frame_metadata;
  set.origin_in_mesh = frame.origin;
  set.axes_in_mesh = frame.axes;
  set.center_of_mass = props.center_of_mass;
  set.mass = props.mass;
  set.volume = props.volume;
  set.brillouin_radius = brillouin;
  set.length_unit = regions.front().mesh.unit;
  for (size_t r = 0; r < regions.size(); ++r) {
    const DensityRegion& region = regions[r];
    Region info;
    info.mesh = region.mesh.source;
    info.checksum = region.mesh.checksum;
    info.unit = region.mesh.unit;
    info.density = region.density.constant();
    info.volume = props.region_volumes[r];
    info.faces = long(region.mesh.faces.rows());
    set.regions.push_back(info);
  }
  set.created = std::string("polystokes ") + POLYSTOKES_VERSION + " at " + utc_timestamp();
  // What import and the mesh checks changed in the input (a reversed inside-out mesh, merged vertices)
  // stays with the set, not only on the terminal of the run that made it.
  for (size_t r = 0; r < regions.size(); ++r)
    for (const auto& notice : regions[r].mesh.notices)
      set.history.push_back(fmt::format("region {} mesh {}: {}", r + 1, regions[r].mesh.source, notice));
  set.history.push_back(
      fmt::format("computed exactly from {} region(s), degree {}, G = {} m^3 kg^-1 s^-2 (CODATA 2018)",
                  regions.size(), options.degree, gravitational_constant));
  set.notes.push_back(operational_caution());
  set.notes.push_back(
      fmt::format("Homogeneous interior assumed within each region. The series converges only "
                  "outside the Brillouin sphere (radius {} m about the expansion origin).",
                  brillouin));
  if (options.convention.normalization != Normalization::fully || options.convention.condon_shortley ||
      options.convention.zonal_as_j)
    set = convert_convention(set, options.convention);
  return set;
}

}  // namespace

CoefficientSet compute_coefficients(const std::vector<DensityRegion>& regions,
                                    const ComputeOptions& options) {
  check_compute_request(regions, options);
  return coefficients_with(regions, mass_properties(regions, options.execution.threads), options);
}

CoefficientSet compute_coefficients(const std::vector<DensityRegion>& regions, const MassProperties& props,
                                    const ComputeOptions& options) {
  check_compute_request(regions, options);
  if (props.region_volumes.size() != regions.size())
    throw ConventionError("mass properties given for a different number of regions");
  return coefficients_with(regions, props, options);
}

ComputeMemory require_compute_memory(int degree, int threads, bool json) {
  ComputeMemory memory;
  memory.threads = resolve_threads(threads);
  memory.needed_bytes = coefficient_run_bytes(degree, memory.threads, json);
  require_memory(memory.needed_bytes, fmt::format("computing and writing a set of degree {} on {} thread(s)",
                                                  degree, memory.threads));
  memory.available_bytes = available_memory_bytes();
  return memory;
}

}  // namespace polystokes
