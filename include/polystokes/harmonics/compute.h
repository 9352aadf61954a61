// The compute use case: checked density regions in, a complete coefficient set out (origin, frame, radius,
// convention and provenance chosen by the caller), and the memory check to run before any mesh is read.
#pragma once

#include <Eigen/Core>
#include <string>
#include <vector>

#include "polystokes/core/coefficient_set.h"
#include "polystokes/harmonics/moments.h"
#include "polystokes/mesh/mass_properties.h"

namespace polystokes {

/// What a computation produces.
struct ComputeOptions {
  int degree = 8;
  double reference_radius = 0;  ///< m; 0 = Brillouin radius about the chosen origin
  /// The centre of mass, the mesh origin or origin_point (the other kinds are refused).
  OriginKind origin = OriginKind::center_of_mass;
  Eigen::Vector3d origin_point = Eigen::Vector3d::Zero();  ///< m, mesh frame; used when origin is point
  /// The mesh's own axes or the principal axes of inertia (mass_properties' sign rule; others are refused).
  FrameKind frame = FrameKind::mesh;
  FrameMetadata frame_metadata;  ///< what the user says the frame is; copied into the set (checked)
  Convention convention;      ///< output convention (computed fully normalized, then converted)
  std::string body = "body";  ///< the set's body name
  MomentOptions execution;
};

/// Coefficients of the superposed constant-density regions with GM = G * mass, provenance filled in and the
/// operational caution in the notes; each region mesh's notices (what import and mesh_check changed, such as
/// a reversed inside-out mesh) become history lines "region R mesh FILE: NOTICE" before the computation's
/// own. Regions must already be checked (mesh_check: validate_mesh, check_regions). Throws ConventionError on
/// negative degree or non-positive radius, ResourceError when the degree would exceed memory or
/// max_moment_degree.
CoefficientSet compute_coefficients(const std::vector<DensityRegion>& regions, const ComputeOptions& options);

/// The same with the regions' mass properties already computed (mass_properties(regions)), for a caller that
/// needs them too: saves one pass over the meshes. Throws ConventionError if `props` has not one volume per
/// region.
CoefficientSet compute_coefficients(const std::vector<DensityRegion>& regions, const MassProperties& props,
                                    const ComputeOptions& options);

/// Memory of computing and writing a set, as estimated before any mesh is read.
struct ComputeMemory {
  int threads = 1;             ///< the thread count the estimate is for (0 resolved to all cores)
  double needed_bytes = 0;     ///< tables, partial sums and the written forms
  double available_bytes = 0;  ///< what this process may still allocate
};

/// The memory guard of a computation at `degree` on `threads` threads (0 = all cores) that writes the text
/// form and, with `json`, the JSON form too. Throws ResourceError "computing and writing a set of degree D on
/// T thread(s) would need about X GB of memory, but only Y GB are available; refusing before starting" when
/// it would not fit.
ComputeMemory require_compute_memory(int degree, int threads, bool json);

}  // namespace polystokes
