// Monte Carlo uncertainty of Stokes coefficients: shape noise, density (GM) scale and interior-density
// scenarios, with sigma_C / sigma_S and plain-language notes written into the nominal set. See
// docs/uncertainty.md.
#pragma once

#include <Eigen/Core>
#include <cstdint>
#include <functional>
#include <memory>
#include <optional>
#include <string>
#include <vector>

#include "polystokes/core/coefficient_set.h"
#include "polystokes/harmonics/compute.h"
#include "polystokes/mesh/mass_properties.h"
#include "polystokes/sets/covariance.h"

namespace polystokes {

/// Random displacement of every vertex along its unit area-weighted vertex normal.
/// The displacement field is a zero-mean Gaussian random field with covariance
///   sigma^2 exp(-d^2 / (2 L^2)),  d = straight-line distance between the two vertices,
/// or independent per vertex when L = 0.
struct ShapeNoise {
  double sigma = 0;               ///< m, standard deviation of the displacement of each vertex
  double correlation_length = 0;  ///< m, L above; 0 = independent vertices
};

/// A sphere of different density superposed on the body: a denser core, a lighter zone or a void.
struct Inclusion {
  bool empty = false;   ///< true: a void (density zero inside); `contrast` is then ignored
  double radius = 0;    ///< m
  double contrast = 0;  ///< kg/m^3 added to the body's density inside the sphere (core only)
  /// Mesh frame, m. Unset: the nominal centre of mass (plan_uncertainty fills it in).
  std::optional<Eigen::Vector3d> center;
  double offset = 0;     ///< m; > 0: each sample draws the centre uniformly within this distance
  int subdivisions = 3;  ///< the sphere is an inscribed icosphere with 20 * 4^subdivisions faces
};

/// Random lateral density variation: every region is divided into cones from the expansion origin, one per
/// direction of a subdivided icosahedron (each face goes to the direction nearest its centroid), and each
/// cone's density is multiplied by (1 + sigma z), z standard normal, independently per cone.
/// Meant for bodies star-shaped about the origin; elsewhere cone boundaries are approximate.
struct LateralVariation {
  double sigma = 0;  ///< relative density standard deviation of each cone (< 0.25)
  int sectors = 42;  ///< number of cones: 12, 42, 162, 642 or 2562
};

/// What varies between samples. All draws are truncated at 4 standard deviations (redrawn), so a relative
/// sigma below 0.25 never makes a density negative.
struct UncertaintySettings {
  long samples = 100;
  std::uint64_t seed = 1;
  ShapeNoise shape;
  double density_sigma = 0;  ///< relative standard deviation of a global density scale (so of GM)
  std::vector<Inclusion> inclusions;
  LateralVariation lateral;
  /// false: inclusions and lateral variation add or remove mass (GM changes).
  /// true: the body's density outside the inclusions is rescaled so each sample keeps the mass of the
  /// homogeneous (perturbed) body, as when GM is known from tracking.
  bool preserve_mass = false;
};

/// Which samples a run computes: shard i of k (1 <= i <= k) holds samples i-1, i-1+k, i-1+2k, ...
struct Shard {
  int index = 1;
  int count = 1;
};

/// Parses "i/k"; throws ConventionError on anything else.
Shard parse_shard(const std::string& text);
/// Sample indices of a shard, ascending.
std::vector<long> shard_samples(const Shard& shard, long samples);

/// One sampled body minus the nominal set, fully normalized, about the nominal origin and axes.
struct SampleResult {
  long index = 0;
  double gm_delta = 0;          ///< m^3 s^-2
  double brillouin_radius = 0;  ///< m, largest vertex distance of the sampled body from the origin
  /// C(n, m) - nominal for n = 0..N, m = 0..n (row by row), then the same for S: (N+1)(N+2) values.
  Eigen::VectorXd delta;
};

/// Everything a sample needs, fixed for the run. Build with plan_uncertainty.
struct UncertaintyPlan {
  CoefficientSet nominal;        ///< fully normalized, no phase, C_n0 zonal (deltas refer to this)
  Convention convention;         ///< convention of the final set
  UncertaintySettings settings;  ///< with inclusion centres filled in
  std::vector<DensityRegion> regions;
  std::string fingerprint;  ///< hash of the geometry, densities and compute options (16 hex digits)
  double mean_edge = 0;     ///< m, mean edge length of the regions' meshes
  struct Precomputed;
  std::shared_ptr<const Precomputed> precomputed;  ///< vertex normals, cone partition (private)
};

/// Checks the settings, computes the nominal set (compute_coefficients, fully normalized;
/// `compute.convention` is applied only to the final set) and what every sample shares. O(F) plus one
/// coefficient computation. Throws ConventionError for settings out of range, nothing to vary, or an
/// inclusion not inside the body.
UncertaintyPlan plan_uncertainty(const std::vector<DensityRegion>& regions, const ComputeOptions& compute,
                                 const UncertaintySettings& settings);

/// Sample `index` (0 <= index < samples). Its random numbers come from std::mt19937_64 seeded through
/// std::seed_seq with (seed, index, stream) and a portable Box-Muller normal draw, so the result depends
/// only on the plan and the index. Throws ConventionError if the noise folds a face over or an inclusion
/// cannot be placed inside the body. About the cost of one compute_coefficients call.
SampleResult run_sample(const UncertaintyPlan& plan, long index);

/// Execution controls; results never depend on them.
struct SampleOptions {
  int threads = 0;  ///< 0 = all hardware threads (samples run in parallel)
  std::function<void(long done, long total)> progress;  ///< called from worker threads
};

/// The listed samples, in the order given.
std::vector<SampleResult> run_samples(const UncertaintyPlan& plan, const std::vector<long>& indices,
                                      const SampleOptions& options = {});

/// What the final set's notes say, in numbers.
struct UncertaintySummary {
  long samples = 0;
  std::uint64_t seed = 0;
  double gm = 0;                                        ///< nominal GM, m^3 s^-2
  double gm_sigma = 0;                                  ///< RMS of GM about the nominal, m^3 s^-2
  Eigen::Vector3d com_sigma = Eigen::Vector3d::Zero();  ///< RMS centre-of-mass shift along the set's axes, m
  double max_brillouin_radius = 0;                      ///< m, over nominal and samples
  /// Per degree: RMS of sigma over m / RMS of the coefficients over m (0 where the sigmas are below 1e-13,
  /// i.e. rounding noise; infinite where only the coefficients vanish).
  Eigen::VectorXd degree_ratio;
  /// Lowest degree n >= 2 such that every degree n..N has degree_ratio > 0.1; -1 if degree N has not.
  int dominated_from = -1;
  std::vector<int> isolated;  ///< degrees >= 2 below dominated_from whose ratio exceeds 0.1 all the same
};

struct UncertaintyResult {
  CoefficientSet set;  ///< nominal set with sigma_C, sigma_S, notes and history, in the requested convention
  UncertaintySummary summary;
  /// The second moment of the samples about the nominal set for the parameters of degrees 0..covariance
  /// degree (sets/covariance.h order), in the set's convention; its diagonal's square roots are the set's
  /// sigmas of those degrees bit for bit. Absent when not asked for.
  std::optional<CoefficientCovariance> covariance;
};

/// Statistics of a complete run: `samples` must hold every index 0..settings.samples-1 exactly once (any
/// order). sigma = sqrt(sum_i delta_i^2 / K), the RMS difference between the sampled bodies and the nominal
/// set (not the scatter about the sample mean, so a fixed scenario counts fully), summed in index order so
/// the result is bit-identical however the samples were split. O(K (N+1)^2).
/// With covariance_degree >= 0 (capped at the set's degree) the result also holds the covariance of the
/// parameters of degrees 0..covariance_degree: sum_i delta_i delta_i^T / K, accumulated in index order in
/// blocks of samples (so also bit-identical however split), with its diagonal taken from the very sums the
/// sigmas come from. O(K P^2) more, P = (covariance_degree + 1)^2, and P^2 doubles of memory; throws
/// ResourceError above kCovarianceByteLimit (check_covariance_degree).
UncertaintyResult summarize_uncertainty(const CoefficientSet& nominal, const UncertaintySettings& settings,
                                        const Convention& convention,
                                        const std::vector<SampleResult>& samples, double mean_edge,
                                        int covariance_degree = -1);

/// All samples of the plan (run_samples then summarize_uncertainty).
UncertaintyResult run_uncertainty(const UncertaintyPlan& plan, const SampleOptions& options = {},
                                  int covariance_degree = -1);

/// The part of a run one machine computes, and what merging needs to check it belongs with the others.
struct UncertaintyShard {
  Shard shard;
  std::string fingerprint;
  std::vector<std::string> mesh_checksums;  ///< of the regions' source files ("-" if none)
  UncertaintySettings settings;
  Convention convention;
  double mean_edge = 0;
  CoefficientSet nominal;
  std::vector<SampleResult> samples;  ///< ascending index
};

/// Runs the shard's samples of the plan.
UncertaintyShard run_shard(const UncertaintyPlan& plan, const Shard& shard,
                           const SampleOptions& options = {});

/// Checks the shards belong to one run (same fingerprint, mesh checksums, settings, nominal set) and hold
/// every sample exactly once, then summarizes. names[i] is used in messages for shards[i]. Throws
/// ConventionError naming the shards and the first disagreement, duplicate or missing sample. The shards
/// carry every sample's deltas, so the covariance (covariance_degree as in summarize_uncertainty) is the same
/// as a single run's, bit for bit.
UncertaintyResult merge_shards(const std::vector<UncertaintyShard>& shards,
                               const std::vector<std::string>& names, int covariance_degree = -1);

}  // namespace polystokes
