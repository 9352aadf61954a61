#include "polystokes/uncertainty/uncertainty.h"

#include <fmt/format.h>

#include <Eigen/Geometry>
#include <algorithm>
#include <atomic>
#include <charconv>
#include <cmath>
#include <cstring>
#include <exception>
#include <limits>
#include <memory>
#include <random>
#include <sstream>

#include "polystokes/io/coefficient_file.h"
#include "polystokes/sets/conventions.h"
#include "polystokes/core/constants.h"
#include "polystokes/core/errors.h"
#include "polystokes/mesh/geometry.h"
#include "polystokes/mesh/mesh_check.h"
#include "polystokes/mesh/mesh_measures.h"
#include "polystokes/mesh/shapes.h"
#include "internal/parallel.h"

namespace polystokes {

struct UncertaintyPlan::Precomputed {
  std::vector<Vertices> vertex_normals;  // per region: unit area-weighted vertex normals
  std::vector<Vertices> face_areas;      // per region: nominal face area vectors (fold check)
  std::vector<Mesh> unit_spheres;        // per inclusion: unit-radius icosphere
  struct Cone {
    size_t region;
    int sector;
    Faces faces;                  // indices into vertex_ids
    std::vector<int> vertex_ids;  // region vertex numbers used by the cone's faces
  };
  std::vector<Cone> cones;  // empty without lateral variation
  // The samples' topology (body pieces, then inclusions) cut into blocks and fans once for all samples.
  std::unique_ptr<PreparedMoments> moments;
};

namespace {

constexpr double kPi = 3.14159265358979323846;
// Random Fourier features per correlated field: enough for a near-Gaussian field, cheap against the moments.
constexpr int kFieldFeatures = 256;
// Largest |z| of a drawn standard normal; larger draws are redrawn.
constexpr double kTruncation = 4.0;
constexpr int kPlacementTries = 1000;
constexpr double kDominanceRatio = 0.1;
constexpr double kRoundingLevel = 1e-13;

// Independent random stream per (seed, sample, purpose): switching one variation on or off leaves the draws
// of the others unchanged.
enum class Stream : std::uint32_t { shape = 1, density = 2, inclusions = 3, lateral = 4 };

class SampleRandom {
 public:
  SampleRandom(std::uint64_t seed, long index, Stream stream) {
    const auto i = static_cast<std::uint64_t>(index);
    // std::seed_seq and std::mt19937_64 are fully specified by the C++ standard, unlike the distributions.
    std::seed_seq sequence{std::uint32_t(seed), std::uint32_t(seed >> 32), std::uint32_t(i),
                           std::uint32_t(i >> 32), static_cast<std::uint32_t>(stream)};
    engine_.seed(sequence);
  }

  /// Uniform in [0, 1) with 53 random bits.
  double uniform() { return double(engine_() >> 11) * 0x1p-53; }

  /// Standard normal by the Box-Muller transform (Box & Muller 1958, Ann. Math. Statist. 29, 610-611).
  double normal() {
    if (has_spare_) {
      has_spare_ = false;
      return spare_;
    }
    const double u1 = double((engine_() >> 11) + 1) * 0x1p-53;  // (0, 1], so the log is finite
    const double u2 = uniform();
    const double radius = std::sqrt(-2.0 * std::log(u1));
    spare_ = radius * std::sin(2.0 * kPi * u2);
    has_spare_ = true;
    return radius * std::cos(2.0 * kPi * u2);
  }

  double truncated_normal() {
    for (;;) {
      const double z = normal();
      if (std::abs(z) <= kTruncation) return z;
    }
  }

 private:
  std::mt19937_64 engine_;
  double spare_ = 0;
  bool has_spare_ = false;
};

Eigen::Vector3d vertex(const Mesh& mesh, Eigen::Index f, int k) {
  return mesh.vertices.row(mesh.faces(f, k)).transpose();
}

Eigen::Vector3d area_vector(const Mesh& mesh, Eigen::Index f) {
  const Eigen::Vector3d a = vertex(mesh, f, 0);
  return 0.5 * (vertex(mesh, f, 1) - a).cross(vertex(mesh, f, 2) - a);
}

// The gradient of the enclosed volume with respect to a vertex is a third of the sum of the area vectors of
// its faces, so moving along this normal by dr changes the volume by |sum| dr / 3 (common practice).
Vertices unit_vertex_normals(const Mesh& mesh) {
  Vertices normals = Vertices::Zero(mesh.vertices.rows(), 3);
  for (Eigen::Index f = 0; f < mesh.faces.rows(); ++f) {
    const Eigen::Vector3d area = area_vector(mesh, f);
    for (int k = 0; k < 3; ++k) normals.row(mesh.faces(f, k)) += area.transpose();
  }
  for (Eigen::Index v = 0; v < normals.rows(); ++v) {
    const double length = normals.row(v).norm();
    if (!(length > 0))
      throw ConventionError(fmt::format("{}: vertex {} has no normal (its faces cancel)", mesh.source, v));
    normals.row(v) /= length;
  }
  return normals;
}

// The piece of a region's mesh that a lateral-density cone covers, with the region's current vertices.
Mesh cone_mesh(const UncertaintyPlan::Precomputed::Cone& cone, const Mesh& region) {
  Mesh piece;
  piece.source = region.source;
  piece.faces = cone.faces;
  piece.vertices.resize(Eigen::Index(cone.vertex_ids.size()), 3);
  for (size_t i = 0; i < cone.vertex_ids.size(); ++i)
    piece.vertices.row(Eigen::Index(i)) = region.vertices.row(cone.vertex_ids[i]);
  return piece;
}

// FNV-1a, 64 bit (Fowler, Noll & Vo): a consistency check between shards, not a security measure.
class Fingerprint {
 public:
  void add(const void* data, size_t bytes) {
    const auto* p = static_cast<const unsigned char*>(data);
    for (size_t i = 0; i < bytes; ++i) hash_ = (hash_ ^ p[i]) * 0x100000001b3ULL;
  }
  template <class T>
  void add_value(const T& value) {
    add(&value, sizeof value);
  }
  std::string hex() const { return fmt::format("{:016x}", hash_); }

 private:
  std::uint64_t hash_ = 0xcbf29ce484222325ULL;
};

std::string model_fingerprint(const std::vector<DensityRegion>& regions, const ComputeOptions& compute) {
  Fingerprint print;
  for (const auto& region : regions) {
    print.add_value(region.density.constant());
    print.add(region.mesh.vertices.data(), sizeof(double) * size_t(region.mesh.vertices.size()));
    print.add(region.mesh.faces.data(), sizeof(int) * size_t(region.mesh.faces.size()));
  }
  print.add_value(compute.degree);
  print.add_value(compute.reference_radius);
  print.add_value(int(compute.origin));
  print.add_value(int(compute.frame));
  return print.hex();
}

// Mean edge length over the faces of all regions (each region's mean_edge_length weighted by its faces).
double mean_edge_length(const std::vector<DensityRegion>& regions) {
  double total = 0;
  long count = 0;
  for (const auto& region : regions) {
    total += polystokes::mean_edge_length(region.mesh) * double(region.mesh.faces.rows());
    count += long(region.mesh.faces.rows());
  }
  return count > 0 ? total / double(count) : 0.0;
}

int sector_subdivisions(int sectors) {
  // A subdivided icosahedron has 10 * 4^s + 2 vertices.
  for (int s = 0, count = 12; s <= 4; ++s, count = 4 * (count - 2) + 2)
    if (count == sectors) return s;
  throw ConventionError(fmt::format("lateral sectors must be 12, 42, 162, 642 or 2562, got {}", sectors));
}

void check_finite_nonnegative(double value, const char* what) {
  if (!(std::isfinite(value) && value >= 0))
    throw ConventionError(fmt::format("{} must be >= 0, got {}", what, value));
}

void check_relative_sigma(double value, const char* what) {
  if (!(std::isfinite(value) && value >= 0 && value < 0.25))
    throw ConventionError(
        fmt::format("{} must be in [0, 0.25) so no density turns negative, got {}", what, value));
}

void check_settings(const UncertaintySettings& s) {
  if (s.samples < 2 || s.samples > 100000000)
    throw ConventionError(fmt::format("sample count must be in 2..100000000, got {}", s.samples));
  check_finite_nonnegative(s.shape.sigma, "shape sigma");
  check_finite_nonnegative(s.shape.correlation_length, "correlation length");
  check_relative_sigma(s.density_sigma, "density sigma");
  check_relative_sigma(s.lateral.sigma, "lateral density sigma");
  sector_subdivisions(s.lateral.sectors);
  for (const auto& inclusion : s.inclusions) {
    const char* name = inclusion.empty ? "void" : "core";
    if (!(std::isfinite(inclusion.radius) && inclusion.radius > 0))
      throw ConventionError(fmt::format("{} radius must be > 0, got {}", name, inclusion.radius));
    if (!inclusion.empty && !(std::isfinite(inclusion.contrast) && inclusion.contrast != 0))
      throw ConventionError(
          fmt::format("core density contrast must be finite and non-zero, got {}", inclusion.contrast));
    check_finite_nonnegative(inclusion.offset, inclusion.empty ? "void offset" : "core offset");
    if (inclusion.subdivisions < 0 || inclusion.subdivisions > 6)
      throw ConventionError(
          fmt::format("{} sphere subdivisions must be in 0..6, got {}", name, inclusion.subdivisions));
    if (inclusion.center && !inclusion.center->allFinite())
      throw ConventionError(fmt::format("{} centre must be finite", name));
  }
  if (s.shape.correlation_length > 0 && !(s.shape.sigma > 0))
    throw ConventionError("a correlation length needs a shape sigma > 0");
  if (!(s.shape.sigma > 0 || s.density_sigma > 0 || !s.inclusions.empty() || s.lateral.sigma > 0))
    throw ConventionError(
        "nothing to vary: give a shape sigma, a density sigma, a core or void, or a lateral density sigma");
}

// Where an inclusion's sphere may go: wholly inside the first region, crossing no region surface and
// overlapping no inclusion placed before it.
// `surfaces` holds the regions' surface trees, built once for all tries.
bool fits(const std::vector<DensityRegion>& body, const std::vector<SurfaceTree>& surfaces,
          const Eigen::Vector3d& center, double radius,
          const std::vector<std::pair<Eigen::Vector3d, double>>& placed) {
  for (const auto& [other, other_radius] : placed)
    if ((other - center).norm() < other_radius + radius) return false;
  if (winding_number(body.front().mesh, center) < 0.5) return false;
  for (const auto& surface : surfaces)
    if (surface.distance(center) < radius) return false;
  return true;
}

std::vector<SurfaceTree> surface_trees(const std::vector<DensityRegion>& regions) {
  std::vector<SurfaceTree> trees;
  for (const auto& region : regions) trees.emplace_back(region.mesh);
  return trees;
}

std::string describe_point(const Eigen::Vector3d& p) {
  return fmt::format("({}, {}, {}) m", p.x(), p.y(), p.z());
}

size_t packed_size(int degree) { return size_t(degree + 1) * size_t(degree + 2); }

}  // namespace

Shard parse_shard(const std::string& text) {
  const auto slash = text.find('/');
  auto parse_int = [&](const std::string& part, int& out) {
    const auto result = std::from_chars(part.data(), part.data() + part.size(), out);
    return result.ec == std::errc() && result.ptr == part.data() + part.size() && !part.empty();
  };
  Shard shard;
  if (slash == std::string::npos || !parse_int(text.substr(0, slash), shard.index) ||
      !parse_int(text.substr(slash + 1), shard.count) || shard.count < 1 || shard.index < 1 ||
      shard.index > shard.count)
    throw ConventionError("shard must be i/k with 1 <= i <= k (for example 2/8), got '" + text + "'");
  return shard;
}

std::vector<long> shard_samples(const Shard& shard, long samples) {
  std::vector<long> indices;
  for (long i = shard.index - 1; i < samples; i += shard.count) indices.push_back(i);
  return indices;
}

UncertaintyPlan plan_uncertainty(const std::vector<DensityRegion>& regions, const ComputeOptions& compute,
                                 const UncertaintySettings& settings) {
  check_settings(settings);
  if (regions.empty()) throw ConventionError("no mesh given");
  UncertaintyPlan plan;
  plan.convention = compute.convention;
  ComputeOptions nominal_options = compute;
  nominal_options.convention = Convention{};
  plan.nominal = compute_coefficients(regions, nominal_options);
  plan.regions = regions;
  plan.settings = settings;
  plan.fingerprint = model_fingerprint(regions, compute);
  plan.mean_edge = mean_edge_length(regions);

  auto pre = std::make_shared<UncertaintyPlan::Precomputed>();
  for (const auto& region : regions) {
    pre->vertex_normals.push_back(unit_vertex_normals(region.mesh));
    Vertices areas(region.mesh.faces.rows(), 3);
    for (Eigen::Index f = 0; f < region.mesh.faces.rows(); ++f)
      areas.row(f) = area_vector(region.mesh, f).transpose();
    pre->face_areas.push_back(std::move(areas));
  }

  std::vector<std::pair<Eigen::Vector3d, double>> fixed;
  const std::vector<SurfaceTree> surfaces =
      plan.settings.inclusions.empty() ? std::vector<SurfaceTree>() : surface_trees(regions);
  for (auto& inclusion : plan.settings.inclusions) {
    if (!inclusion.center) inclusion.center = plan.nominal.center_of_mass;
    pre->unit_spheres.push_back(make_icosphere(inclusion.subdivisions));
    const char* name = inclusion.empty ? "void" : "core";
    if (inclusion.offset == 0) {
      if (!fits(regions, surfaces, *inclusion.center, inclusion.radius, fixed))
        throw ConventionError(
            fmt::format("the {} of radius {} m at {} is not inside the body (or overlaps another "
                        "inclusion)",
                        name, inclusion.radius, describe_point(*inclusion.center)));
      fixed.emplace_back(*inclusion.center, inclusion.radius);
    } else if (winding_number(regions.front().mesh, *inclusion.center) < 0.5) {
      throw ConventionError(
          fmt::format("the {} centre {} is not inside the body", name, describe_point(*inclusion.center)));
    }
  }

  if (settings.lateral.sigma > 0) {
    const Mesh directions = make_icosphere(sector_subdivisions(settings.lateral.sectors));
    const Eigen::Vector3d apex = plan.nominal.origin_in_mesh;
    for (size_t r = 0; r < regions.size(); ++r) {
      const Mesh& mesh = regions[r].mesh;
      std::vector<std::vector<Eigen::Index>> faces_of(size_t(directions.vertices.rows()));
      for (Eigen::Index f = 0; f < mesh.faces.rows(); ++f) {
        const Eigen::Vector3d centroid =
            (vertex(mesh, f, 0) + vertex(mesh, f, 1) + vertex(mesh, f, 2)) / 3.0 - apex;
        Eigen::Index nearest = 0;
        (directions.vertices * centroid).maxCoeff(&nearest);
        faces_of[size_t(nearest)].push_back(f);
      }
      for (size_t s = 0; s < faces_of.size(); ++s) {
        if (faces_of[s].empty()) continue;
        UncertaintyPlan::Precomputed::Cone cone;
        cone.region = r;
        cone.sector = int(s);
        std::vector<int> local(size_t(mesh.vertices.rows()), -1);
        cone.faces.resize(Eigen::Index(faces_of[s].size()), 3);
        for (size_t i = 0; i < faces_of[s].size(); ++i) {
          for (int k = 0; k < 3; ++k) {
            const int v = mesh.faces(faces_of[s][i], k);
            if (local[size_t(v)] < 0) {
              local[size_t(v)] = int(cone.vertex_ids.size());
              cone.vertex_ids.push_back(v);
            }
            cone.faces(Eigen::Index(i), k) = local[size_t(v)];
          }
        }
        pre->cones.push_back(std::move(cone));
      }
    }
  }
  // Every sample has the same pieces with the same faces: the nominal body's (or its cones), then the
  // inclusions' spheres.
  std::vector<DensityRegion> topology;
  if (pre->cones.empty()) topology = regions;
  for (const auto& cone : pre->cones) topology.push_back({cone_mesh(cone, regions[cone.region].mesh), 0.0});
  for (const auto& sphere : pre->unit_spheres) topology.push_back({sphere, 0.0});
  pre->moments = std::make_unique<PreparedMoments>(topology, plan.nominal.degree);
  plan.precomputed = std::move(pre);
  return plan;
}

SampleResult run_sample(const UncertaintyPlan& plan, long index) {
  const UncertaintySettings& s = plan.settings;
  const auto& pre = *plan.precomputed;
  if (index < 0 || index >= s.samples)
    throw ConventionError(fmt::format("sample index {} outside 0..{}", index, s.samples - 1));
  const Eigen::Vector3d origin = plan.nominal.origin_in_mesh;

  // Shape: every region's vertices move along their nominal normals by one shared random field.
  std::vector<DensityRegion> body = plan.regions;
  if (s.shape.sigma > 0) {
    SampleRandom random(s.seed, index, Stream::shape);
    const double L = s.shape.correlation_length;
    std::vector<Eigen::Vector3d> wave(L > 0 ? kFieldFeatures : 0);
    std::vector<double> phase(wave.size());
    // Random Fourier features (Rahimi & Recht 2007, "Random features for large-scale kernel machines", NIPS):
    // with k ~ N(0, I / L^2) and a uniform phase, E[2 cos(k.x + a) cos(k.y + a)] = exp(-|x - y|^2 / (2 L^2)).
    for (size_t j = 0; j < wave.size(); ++j) {
      wave[j] = Eigen::Vector3d(random.normal(), random.normal(), random.normal()) / L;
      phase[j] = 2.0 * kPi * random.uniform();
    }
    const double amplitude = s.shape.sigma * std::sqrt(2.0 / kFieldFeatures);
    for (size_t r = 0; r < body.size(); ++r) {
      Mesh& mesh = body[r].mesh;
      for (Eigen::Index v = 0; v < mesh.vertices.rows(); ++v) {
        double dr;
        if (L > 0) {
          const Eigen::Vector3d x = mesh.vertices.row(v).transpose() - origin;
          double sum = 0;
          for (size_t j = 0; j < wave.size(); ++j) sum += std::cos(wave[j].dot(x) + phase[j]);
          dr = amplitude * sum;
        } else {
          dr = s.shape.sigma * random.normal();
        }
        mesh.vertices.row(v) += dr * pre.vertex_normals[r].row(v);
      }
      for (Eigen::Index f = 0; f < mesh.faces.rows(); ++f)
        if (!(area_vector(mesh, f).dot(pre.face_areas[r].row(f).transpose()) > 0))
          throw ConventionError(fmt::format(
              "sample {}: the shape noise folds face {} of {} over (shape sigma {} m, mean edge {} m); use a "
              "smaller sigma or a longer correlation length",
              index, f, mesh.source, s.shape.sigma, plan.mean_edge));
    }
  }

  // Density of the body regions, split into cones when the density varies laterally.
  std::vector<DensityRegion> sample;
  double homogeneous_mass = 0, body_mass = 0;
  for (const auto& region : body)
    homogeneous_mass += region.density.constant() * signed_volume(region.mesh, origin);
  if (pre.cones.empty()) {
    sample = body;
    body_mass = homogeneous_mass;
  } else {
    SampleRandom random(s.seed, index, Stream::lateral);
    std::vector<double> factor(size_t(s.lateral.sectors));
    for (auto& f : factor) f = 1.0 + s.lateral.sigma * random.truncated_normal();
    for (const auto& cone : pre.cones) {
      DensityRegion piece;
      piece.density = body[cone.region].density.scaled(factor[size_t(cone.sector)]);
      piece.mesh = cone_mesh(cone, body[cone.region].mesh);
      body_mass += piece.density.constant() * signed_volume(piece.mesh, origin);
      sample.push_back(std::move(piece));
    }
  }
  const size_t body_pieces = sample.size();

  // Inclusions, placed inside the sampled shape.
  double core_mass = 0, void_volume = 0;
  if (!s.inclusions.empty()) {
    SampleRandom random(s.seed, index, Stream::inclusions);
    std::vector<std::pair<Eigen::Vector3d, double>> placed;
    const std::vector<SurfaceTree> surfaces = surface_trees(body);
    for (size_t k = 0; k < s.inclusions.size(); ++k) {
      const Inclusion& inclusion = s.inclusions[k];
      Eigen::Vector3d center = *inclusion.center;
      bool ok = false;
      for (int attempt = 0; attempt < (inclusion.offset > 0 ? kPlacementTries : 1) && !ok; ++attempt) {
        if (inclusion.offset > 0) {
          Eigen::Vector3d u;
          do
            u = Eigen::Vector3d(2 * random.uniform() - 1, 2 * random.uniform() - 1, 2 * random.uniform() - 1);
          while (u.squaredNorm() > 1);
          center = *inclusion.center + inclusion.offset * u;
        }
        ok = fits(body, surfaces, center, inclusion.radius, placed);
      }
      if (!ok)
        throw ConventionError(fmt::format(
            "sample {}: cannot place the {} of radius {} m {} {} inside the sampled body{}", index,
            inclusion.empty ? "void" : "core", inclusion.radius, inclusion.offset > 0 ? "within" : "at",
            inclusion.offset > 0
                ? fmt::format("{} m of {}", inclusion.offset, describe_point(*inclusion.center))
                : describe_point(center),
            inclusion.offset > 0 ? fmt::format(" in {} tries", kPlacementTries) : std::string()));
      placed.emplace_back(center, inclusion.radius);
      DensityRegion sphere;
      sphere.mesh = transformed(pre.unit_spheres[k], inclusion.radius * Eigen::Matrix3d::Identity(), center);
      sphere.mesh.source = inclusion.empty ? "void" : "core";
      const double volume = signed_volume(sphere.mesh, origin);
      if (inclusion.empty) {
        void_volume += volume;
      } else {
        sphere.density = inclusion.contrast;
        core_mass += inclusion.contrast * volume;
      }
      sample.push_back(std::move(sphere));
    }
  }

  // Body scale q: 1, or what keeps the homogeneous mass when asked. A void is empty: contrast -q rho.
  const double void_density = plan.regions.front().density.constant();
  double q = 1.0;
  if (s.preserve_mass) {
    q = (homogeneous_mass - core_mass) / (body_mass - void_density * void_volume);
    if (!(q > 0))
      throw ConventionError(
          fmt::format("sample {}: the inclusions hold more than the body's mass, so the mass "
                      "cannot be preserved",
                      index));
  }
  double density_scale = 1.0;
  if (s.density_sigma > 0) {
    SampleRandom random(s.seed, index, Stream::density);
    density_scale = 1.0 + s.density_sigma * random.truncated_normal();
  }
  double mass = 0;
  for (size_t k = 0; k < sample.size(); ++k) {
    const bool is_void = k >= body_pieces && s.inclusions[k - body_pieces].empty;
    if (k < body_pieces) sample[k].density *= q;
    if (is_void) sample[k].density = -void_density * q;
    sample[k].density *= density_scale;
    mass += sample[k].density.constant() * signed_volume(sample[k].mesh, origin);
  }

  HarmonicFrame frame;
  frame.origin = origin;
  frame.axes = plan.nominal.axes_in_mesh;
  frame.scale_radius = brillouin_radius(sample, origin);
  MomentOptions serial;
  serial.threads = 1;
  const HarmonicMoments moments = pre.moments->moments(sample, frame, serial);
  CoefficientSet coefficients = make_empty_set(plan.nominal.degree);
  moments_to_coefficients(moments, mass, plan.nominal.reference_radius, coefficients);

  SampleResult result;
  result.index = index;
  result.gm_delta = gravitational_constant * mass - plan.nominal.gm;
  result.brillouin_radius = frame.scale_radius;
  const int N = plan.nominal.degree;
  result.delta.resize(Eigen::Index(packed_size(N)));
  Eigen::Index i = 0;
  for (int n = 0; n <= N; ++n)
    for (int m = 0; m <= n; ++m) result.delta(i++) = coefficients.C(n, m) - plan.nominal.C(n, m);
  for (int n = 0; n <= N; ++n)
    for (int m = 0; m <= n; ++m) result.delta(i++) = coefficients.S(n, m) - plan.nominal.S(n, m);
  return result;
}

std::vector<SampleResult> run_samples(const UncertaintyPlan& plan, const std::vector<long>& indices,
                                      const SampleOptions& options) {
  std::vector<SampleResult> results(indices.size());
  std::atomic<long> done{0};
  // The error of the lowest-numbered failing sample, so the message does not depend on thread timing.
  parallel_for(indices.size(), options.threads, [&](size_t k) {
    results[k] = run_sample(plan, indices[k]);
    const long finished = done.fetch_add(1) + 1;
    if (options.progress) options.progress(finished, long(indices.size()));
  });
  return results;
}

namespace {

std::string describe_variations(const UncertaintySettings& s, double mean_edge) {
  std::vector<std::string> parts;
  if (s.shape.sigma > 0) {
    if (s.shape.correlation_length > 0)
      parts.push_back(fmt::format(
          "vertex positions along their normals with sigma {} m and a Gaussian correlation length of {} m "
          "(covariance sigma^2 exp(-d^2/(2 L^2))){}",
          s.shape.sigma, s.shape.correlation_length,
          s.shape.correlation_length < mean_edge
              ? fmt::format(", shorter than the mean edge of {:.6g} m, so nearly independent per vertex",
                            mean_edge)
              : std::string()));
    else
      parts.push_back(
          fmt::format("vertex positions along their normals with sigma {} m, independent per vertex "
                      "(mean edge {:.6g} m)",
                      s.shape.sigma, mean_edge));
  }
  if (s.density_sigma > 0)
    parts.push_back(
        fmt::format("a global density scale with relative sigma {} (it changes GM but not the "
                    "normalized coefficients)",
                    s.density_sigma));
  for (const auto& inclusion : s.inclusions) {
    std::string what = inclusion.empty ? fmt::format("an empty void of radius {} m", inclusion.radius)
                                       : fmt::format("a core of radius {} m with density contrast {} kg/m^3",
                                                     inclusion.radius, inclusion.contrast);
    what += inclusion.offset > 0
                ? fmt::format(
                      " centred anywhere within {} m of {} (mesh frame, uniform, always "
                      "inside the body)",
                      inclusion.offset, describe_point(*inclusion.center))
                : fmt::format(" centred at {} (mesh frame)", describe_point(*inclusion.center));
    parts.push_back(what);
  }
  if (s.lateral.sigma > 0)
    parts.push_back(
        fmt::format("the density of {} cones from the expansion origin, each independently with "
                    "relative sigma {}",
                    s.lateral.sectors, s.lateral.sigma));
  std::string text;
  for (size_t i = 0; i < parts.size(); ++i) text += (i == 0 ? "" : "; ") + parts[i];
  if (s.preserve_mass && (!s.inclusions.empty() || s.lateral.sigma > 0))
    text +=
        "; the density outside the inclusions is rescaled so each sample keeps the mass of the homogeneous "
        "body";
  return text;
}

}  // namespace

UncertaintyResult summarize_uncertainty(const CoefficientSet& nominal, const UncertaintySettings& settings,
                                        const Convention& convention,
                                        const std::vector<SampleResult>& samples, double mean_edge) {
  if (nominal.convention.normalization != Normalization::fully || nominal.convention.condon_shortley ||
      nominal.convention.zonal_as_j)
    throw ConventionError("uncertainty statistics need the nominal set fully normalized without phase");
  const long K = settings.samples;
  const int N = nominal.degree;
  std::vector<const SampleResult*> ordered(size_t(std::max(0L, K)), nullptr);
  for (const auto& sample : samples) {
    if (sample.index < 0 || sample.index >= K)
      throw ConventionError(fmt::format("sample index {} outside 0..{}", sample.index, K - 1));
    if (ordered[size_t(sample.index)])
      throw ConventionError(fmt::format("sample {} given twice", sample.index));
    if (size_t(sample.delta.size()) != packed_size(N))
      throw ConventionError(fmt::format("sample {} holds {} values, degree {} needs {}", sample.index,
                                        sample.delta.size(), N, packed_size(N)));
    ordered[size_t(sample.index)] = &sample;
  }
  for (long i = 0; i < K; ++i)
    if (!ordered[size_t(i)]) throw ConventionError(fmt::format("sample {} of {} is missing", i, K));

  Eigen::VectorXd sum_squares = Eigen::VectorXd::Zero(Eigen::Index(packed_size(N)));
  double gm_squares = 0, brillouin = nominal.brillouin_radius;
  Eigen::Vector3d com_squares = Eigen::Vector3d::Zero();
  const double degree_one =
      std::sqrt(3.0) * nominal.reference_radius;  // COM shift = sqrt(3) R (C11, S11, C10)
  const Eigen::Index s_offset = Eigen::Index(packed_size(N) / 2);
  for (const SampleResult* sample : ordered) {
    sum_squares += sample->delta.cwiseAbs2();
    gm_squares += sample->gm_delta * sample->gm_delta;
    brillouin = std::max(brillouin, sample->brillouin_radius);
    if (N >= 1) {
      const Eigen::Vector3d shift(sample->delta(2), sample->delta(s_offset + 2), sample->delta(1));
      com_squares += (degree_one * shift).cwiseAbs2();
    }
  }

  UncertaintyResult result;
  CoefficientSet& set = result.set;
  set = nominal;
  Eigen::Index i = 0;
  for (int n = 0; n <= N; ++n)
    for (int m = 0; m <= n; ++m) set.sigma_C(n, m) = std::sqrt(sum_squares(i++) / double(K));
  for (int n = 0; n <= N; ++n)
    for (int m = 0; m <= n; ++m, ++i)
      set.sigma_S(n, m) = m == 0 ? 0.0 : std::sqrt(sum_squares(i) / double(K));

  UncertaintySummary& summary = result.summary;
  summary.samples = K;
  summary.seed = settings.seed;
  summary.gm = nominal.gm;
  summary.gm_sigma = std::sqrt(gm_squares / double(K));
  summary.com_sigma = (com_squares / double(K)).cwiseSqrt();
  summary.max_brillouin_radius = brillouin;
  summary.degree_ratio.resize(N + 1);
  int worst_degree = -1;
  for (int n = 0; n <= N; ++n) {
    double noise = 0, signal = 0;
    for (int m = 0; m <= n; ++m) {
      noise += set.sigma_C(n, m) * set.sigma_C(n, m) + set.sigma_S(n, m) * set.sigma_S(n, m);
      signal += set.C(n, m) * set.C(n, m) + set.S(n, m) * set.S(n, m);
    }
    // Sigmas at rounding level (C00 = 1) say nothing, even against coefficients that vanish by symmetry.
    if (std::sqrt(noise) < kRoundingLevel)
      summary.degree_ratio(n) = 0;
    else
      summary.degree_ratio(n) =
          signal > 0 ? std::sqrt(noise / signal) : std::numeric_limits<double>::infinity();
    if (n >= 2 && (worst_degree < 0 || summary.degree_ratio(n) > summary.degree_ratio(worst_degree)))
      worst_degree = n;
  }
  for (int n = N; n >= 2 && summary.degree_ratio(n) > kDominanceRatio; --n) summary.dominated_from = n;
  for (int n = 2; n < (summary.dominated_from >= 0 ? summary.dominated_from : N + 1); ++n)
    if (summary.degree_ratio(n) > kDominanceRatio) summary.isolated.push_back(n);

  const bool shape_only = settings.shape.sigma > 0 && settings.density_sigma == 0 &&
                          settings.inclusions.empty() && settings.lateral.sigma == 0;
  const char* source = shape_only ? "shape noise" : "modelled variations";
  auto& notes = set.notes;
  notes.push_back(fmt::format(
      "Uncertainty: sigma_C and sigma_S come from {} Monte Carlo samples with seed {}. Sample i draws its "
      "own "
      "random numbers from (seed, i), so the same seed and sample count reproduce these values exactly, also "
      "when the run is split into shards.",
      K, settings.seed));
  notes.push_back("Uncertainty: varied: " + describe_variations(settings, mean_edge) + ".");
  notes.push_back(
      fmt::format("Uncertainty: each sigma is the RMS difference between the sampled bodies and this nominal "
                  "set (about the "
                  "nominal, not about the sample mean), so a fixed scenario counts fully. With {} samples a "
                  "sigma is itself "
                  "uncertain by about {:.2g}% (1/sqrt(2K)).",
                  K, 100.0 / std::sqrt(2.0 * double(K))));
  notes.push_back(
      fmt::format("Uncertainty: GM sigma {:.6g} m^3 s^-2, {:.3g} of the nominal GM {:.9g} m^3 s^-2.",
                  summary.gm_sigma, summary.gm_sigma / nominal.gm, nominal.gm));
  if (N >= 1)
    notes.push_back(
        fmt::format("Uncertainty: the samples keep this set's origin and axes, so the degree-1 terms carry "
                    "the scatter of the "
                    "centre of mass: RMS {:.6g} m, {:.6g} m, {:.6g} m along the set's x, y, z axes.",
                    summary.com_sigma.x(), summary.com_sigma.y(), summary.com_sigma.z()));
  std::string isolated;
  for (const int n : summary.isolated) isolated += fmt::format("{}{}", isolated.empty() ? "" : ", ", n);
  const int percent = int(kDominanceRatio * 100);
  if (summary.dominated_from >= 0)
    notes.push_back(fmt::format(
        "Uncertainty: from degree {} to {} every degree's sampled uncertainty exceeds {}% of its "
        "coefficients (RMS "
        "over the orders; ratio {:.3g} at degree {}, {:.3g} at degree {}): that range is dominated by the "
        "{}, not "
        "fixed by the shape.{}",
        summary.dominated_from, N, percent, summary.degree_ratio(summary.dominated_from),
        summary.dominated_from, summary.degree_ratio(N), N, source,
        isolated.empty()
            ? std::string()
            : fmt::format(" Below it, degree(s) {} exceed {}% too, where the coefficients are small.",
                          isolated, percent)));
  else if (N >= 2)
    notes.push_back(fmt::format(
        "Uncertainty: the sampled uncertainty stays below {}% of the coefficients (RMS over the orders) at "
        "degree {}{}; "
        "largest ratio {:.3g} at degree {}.",
        percent, N,
        isolated.empty()
            ? std::string(" and below")
            : fmt::format(" but exceeds it at degree(s) {}, where the coefficients are small", isolated),
        summary.degree_ratio(worst_degree), worst_degree));
  notes.push_back(
      fmt::format("Uncertainty: assumptions: homogeneous interior within each region apart from the "
                  "scenarios listed above. "
                  "The nominal Brillouin radius is {:.9g} m; the sampled shapes reach {:.9g} m from the "
                  "origin. The series "
                  "converges only outside the Brillouin sphere.",
                  nominal.brillouin_radius, brillouin));
  notes.push_back(
      "CAUTION: these sigmas cover only the variations listed above; they are not a complete error "
      "budget and do not replace validation against tracking data.");
  set.history.push_back(fmt::format(
      "uncertainty: {} Monte Carlo samples, seed {}, sigma = RMS about the nominal", K, settings.seed));
  if (convention.normalization != Normalization::fully || convention.condon_shortley || convention.zonal_as_j)
    set = convert_convention(set, convention);
  return result;
}

UncertaintyResult run_uncertainty(const UncertaintyPlan& plan, const SampleOptions& options) {
  return summarize_uncertainty(plan.nominal, plan.settings, plan.convention,
                               run_samples(plan, shard_samples(Shard{}, plan.settings.samples), options),
                               plan.mean_edge);
}

UncertaintyShard run_shard(const UncertaintyPlan& plan, const Shard& shard, const SampleOptions& options) {
  UncertaintyShard out;
  out.shard = shard;
  out.fingerprint = plan.fingerprint;
  for (const auto& region : plan.nominal.regions)
    out.mesh_checksums.push_back(region.checksum.empty() ? "-" : region.checksum);
  out.settings = plan.settings;
  out.convention = plan.convention;
  out.mean_edge = plan.mean_edge;
  out.nominal = plan.nominal;
  out.samples = run_samples(plan, shard_samples(shard, plan.settings.samples), options);
  return out;
}

// ---------------------------------------------------------------------------------------------------------
// Shard files.

namespace {

constexpr const char* kShardFormat = "polystokes-uncertainty-shard";
constexpr int kShardVersion = 1;

std::string bool_word(bool value) { return value ? "true" : "false"; }

// The settings lines every shard of a run must share, in file order, as (key, value).
std::vector<std::pair<std::string, std::string>> run_lines(const UncertaintyShard& shard) {
  const UncertaintySettings& s = shard.settings;
  std::vector<std::pair<std::string, std::string>> lines;
  lines.emplace_back("fingerprint", shard.fingerprint);
  for (const auto& checksum : shard.mesh_checksums) lines.emplace_back("mesh_checksum", checksum);
  lines.emplace_back("samples", std::to_string(s.samples));
  lines.emplace_back("seed", std::to_string(s.seed));
  lines.emplace_back("degree", std::to_string(shard.nominal.degree));
  lines.emplace_back("shape_sigma", fmt::format("{}", s.shape.sigma));
  lines.emplace_back("correlation_length", fmt::format("{}", s.shape.correlation_length));
  lines.emplace_back("density_sigma", fmt::format("{}", s.density_sigma));
  lines.emplace_back("lateral_sigma", fmt::format("{}", s.lateral.sigma));
  lines.emplace_back("lateral_sectors", std::to_string(s.lateral.sectors));
  lines.emplace_back("preserve_mass", bool_word(s.preserve_mass));
  for (const auto& inclusion : s.inclusions) {
    const Eigen::Vector3d c = inclusion.center.value_or(Eigen::Vector3d::Zero());
    lines.emplace_back("inclusion", fmt::format("{} {} {} {} {} {} {} {}", inclusion.empty ? "void" : "core",
                                                inclusion.radius, inclusion.contrast, c.x(), c.y(), c.z(),
                                                inclusion.offset, inclusion.subdivisions));
  }
  lines.emplace_back("normalization", to_string(shard.convention.normalization));
  lines.emplace_back("condon_shortley", bool_word(shard.convention.condon_shortley));
  lines.emplace_back("zonal_as_j", bool_word(shard.convention.zonal_as_j));
  lines.emplace_back("mean_edge", fmt::format("{}", shard.mean_edge));
  return lines;
}

class ShardReader {
 public:
  ShardReader(const std::string& text, const std::string& source) : source_(source) {
    std::istringstream in(text);
    std::string line;
    while (std::getline(in, line)) lines_.push_back(line);
  }

  /// Reports the line last looked at.
  [[noreturn]] void fail(const std::string& problem) const { throw format_error(source_, current_, problem); }
  long line_number() const { return current_; }
  bool at_end() const { return next_ >= lines_.size(); }
  const std::string& peek() {
    current_ = long(next_) + 1;
    if (at_end()) {
      current_ = long(lines_.size());
      fail("unexpected end of file (truncated shard?)");
    }
    return lines_[next_];
  }
  std::string peek_key() {
    const std::string& line = peek();
    return line.substr(0, line.find(' '));
  }
  /// The value of the next line, which must start with "key ".
  std::string value(const std::string& key) {
    const std::string& line = peek();
    if (line.compare(0, key.size() + 1, key + " ") != 0)
      fail("expected '" + key + " ...', got '" + line + "'");
    ++next_;
    return line.substr(key.size() + 1);
  }
  std::string take_line() {
    const std::string& line = peek();
    ++next_;
    return line;
  }

  double number(const std::string& text) const {
    double out = 0;
    const auto result = std::from_chars(text.data(), text.data() + text.size(), out);
    if (result.ec != std::errc() || result.ptr != text.data() + text.size() || !std::isfinite(out))
      fail("'" + text + "' is not a finite number");
    return out;
  }
  template <class Int>
  Int integer(const std::string& text) const {
    Int out = 0;
    const auto result = std::from_chars(text.data(), text.data() + text.size(), out);
    if (result.ec != std::errc() || result.ptr != text.data() + text.size() || text.empty())
      fail("'" + text + "' is not an integer");
    return out;
  }
  bool boolean(const std::string& text) const {
    if (text == "true") return true;
    if (text == "false") return false;
    fail("'" + text + "' is not true or false");
  }

  static std::vector<std::string> words(const std::string& text) {
    std::istringstream in(text);
    std::vector<std::string> out;
    std::string word;
    while (in >> word) out.push_back(word);
    return out;
  }

 private:
  std::string source_;
  std::vector<std::string> lines_;
  size_t next_ = 0;
  long current_ = 1;
};

}  // namespace

std::string format_shard_text(const UncertaintyShard& shard) {
  const int N = shard.nominal.degree;
  std::string out = fmt::format("{} {}\n", kShardFormat, kShardVersion);
  out += fmt::format("shard {}/{}\n", shard.shard.index, shard.shard.count);
  for (const auto& [key, value] : run_lines(shard)) out += key + " " + value + "\n";
  const std::string nominal = format_coefficient_text(shard.nominal);
  out += fmt::format("nominal_lines {}\n", std::count(nominal.begin(), nominal.end(), '\n'));
  out += nominal;
  if (!nominal.empty() && nominal.back() != '\n') out += '\n';
  out += fmt::format("sample_count {}\n", shard.samples.size());
  for (const auto& sample : shard.samples) {
    if (size_t(sample.delta.size()) != packed_size(N))
      throw ConventionError(fmt::format("sample {} holds {} values, degree {} needs {}", sample.index,
                                        sample.delta.size(), N, packed_size(N)));
    out += fmt::format("sample {} {} {}", sample.index, sample.brillouin_radius, sample.gm_delta);
    for (Eigen::Index i = 0; i < sample.delta.size(); ++i) out += fmt::format(" {}", sample.delta(i));
    out += '\n';
  }
  out += "end\n";
  return out;
}

UncertaintyShard parse_shard_text(const std::string& text, const std::string& source_name) {
  ShardReader in(text, source_name);
  if (in.at_end() || in.take_line() != fmt::format("{} {}", kShardFormat, kShardVersion))
    throw format_error(
        source_name, 1,
        fmt::format("not a shard file: the first line must be '{} {}'", kShardFormat, kShardVersion));
  UncertaintyShard shard;
  try {
    shard.shard = parse_shard(in.value("shard"));
  } catch (const ConventionError& e) {
    in.fail(e.what());
  }
  UncertaintySettings& s = shard.settings;
  shard.fingerprint = in.value("fingerprint");
  while (in.peek_key() == "mesh_checksum") shard.mesh_checksums.push_back(in.value("mesh_checksum"));
  s.samples = in.integer<long>(in.value("samples"));
  s.seed = in.integer<std::uint64_t>(in.value("seed"));
  const int degree = in.integer<int>(in.value("degree"));
  s.shape.sigma = in.number(in.value("shape_sigma"));
  s.shape.correlation_length = in.number(in.value("correlation_length"));
  s.density_sigma = in.number(in.value("density_sigma"));
  s.lateral.sigma = in.number(in.value("lateral_sigma"));
  s.lateral.sectors = in.integer<int>(in.value("lateral_sectors"));
  s.preserve_mass = in.boolean(in.value("preserve_mass"));
  while (in.peek_key() == "inclusion") {
    const auto w = ShardReader::words(in.value("inclusion"));
    if (w.size() != 8 || (w[0] != "core" && w[0] != "void"))
      in.fail("inclusion needs: core|void radius contrast x y z offset subdivisions");
    Inclusion inclusion;
    inclusion.empty = w[0] == "void";
    inclusion.radius = in.number(w[1]);
    inclusion.contrast = in.number(w[2]);
    inclusion.center = Eigen::Vector3d(in.number(w[3]), in.number(w[4]), in.number(w[5]));
    inclusion.offset = in.number(w[6]);
    inclusion.subdivisions = in.integer<int>(w[7]);
    s.inclusions.push_back(inclusion);
  }
  try {
    shard.convention.normalization = parse_normalization(in.value("normalization"));
  } catch (const ConventionError& e) {
    in.fail(e.what());
  }
  shard.convention.condon_shortley = in.boolean(in.value("condon_shortley"));
  shard.convention.zonal_as_j = in.boolean(in.value("zonal_as_j"));
  shard.mean_edge = in.number(in.value("mean_edge"));

  const long nominal_lines = in.integer<long>(in.value("nominal_lines"));
  const long nominal_line = in.line_number();
  std::string nominal;
  for (long k = 0; k < nominal_lines; ++k) nominal += in.take_line() + "\n";
  try {
    shard.nominal = parse_coefficient_text(
        nominal, source_name + " (nominal set from line " + std::to_string(nominal_line + 1) + ")");
  } catch (const Error& e) {
    throw FormatError(e.what());
  }
  if (shard.nominal.degree != degree)
    in.fail(fmt::format("nominal set has degree {}, header says {}", shard.nominal.degree, degree));

  const long count = in.integer<long>(in.value("sample_count"));
  const size_t values = packed_size(degree);
  for (long k = 0; k < count; ++k) {
    const auto w = ShardReader::words(in.value("sample"));
    if (w.size() != values + 3)
      in.fail(fmt::format(
          "a sample line needs index, Brillouin radius, GM delta and {} coefficient deltas; got {} "
          "values",
          values, w.size()));
    SampleResult sample;
    sample.index = in.integer<long>(w[0]);
    if (sample.index < 0 || sample.index >= s.samples)
      in.fail(fmt::format("sample index {} outside 0..{}", sample.index, s.samples - 1));
    if (!shard.samples.empty() && sample.index <= shard.samples.back().index)
      in.fail(fmt::format("sample {} out of order", sample.index));
    sample.brillouin_radius = in.number(w[1]);
    sample.gm_delta = in.number(w[2]);
    sample.delta.resize(Eigen::Index(values));
    for (size_t i = 0; i < values; ++i) sample.delta(Eigen::Index(i)) = in.number(w[i + 3]);
    shard.samples.push_back(std::move(sample));
  }
  if (in.take_line() != "end") in.fail("expected 'end' after the samples");
  if (!in.at_end()) in.fail("text after 'end'");
  return shard;
}

UncertaintyResult merge_shards(const std::vector<UncertaintyShard>& shards,
                               const std::vector<std::string>& names) {
  if (shards.empty()) throw ConventionError("no shard files given");
  if (names.size() != shards.size()) throw ConventionError("one name per shard is needed");
  const UncertaintyShard& first = shards.front();
  const auto reference = run_lines(first);
  for (size_t k = 1; k < shards.size(); ++k) {
    const auto lines = run_lines(shards[k]);
    for (size_t i = 0; i < std::max(lines.size(), reference.size()); ++i) {
      const std::string mine = i < lines.size() ? lines[i].first + " " + lines[i].second : "(nothing)";
      const std::string theirs =
          i < reference.size() ? reference[i].first + " " + reference[i].second : "(nothing)";
      if (mine != theirs)
        throw ConventionError(
            fmt::format("{} does not belong to the same run as {}: it has '{}' where {} has '{}'", names[k],
                        names[0], mine, names[0], theirs));
    }
    const CoefficientSet& a = first.nominal;
    const CoefficientSet& b = shards[k].nominal;
    if (a.C != b.C || a.S != b.S || a.gm != b.gm || a.reference_radius != b.reference_radius ||
        a.origin_in_mesh != b.origin_in_mesh || a.axes_in_mesh != b.axes_in_mesh)
      throw ConventionError(fmt::format("{} and {} carry different nominal sets", names[0], names[k]));
  }
  const long K = first.settings.samples;
  std::vector<int> owner(size_t(K), -1);
  std::vector<SampleResult> all;
  all.reserve(size_t(K));
  for (size_t k = 0; k < shards.size(); ++k) {
    const auto expected = shard_samples(shards[k].shard, K);
    bool matches = expected.size() == shards[k].samples.size();
    for (size_t i = 0; matches && i < expected.size(); ++i)
      matches = expected[i] == shards[k].samples[i].index;
    if (!matches)
      throw ConventionError(fmt::format("{} holds {} samples that are not those of shard {}/{} ({} samples)",
                                        names[k], shards[k].samples.size(), shards[k].shard.index,
                                        shards[k].shard.count, expected.size()));
    for (const auto& sample : shards[k].samples) {
      int& who = owner[size_t(sample.index)];
      if (who >= 0)
        throw ConventionError(fmt::format("sample {} is in both {} and {} (the same shard given twice?)",
                                          sample.index, names[size_t(who)], names[k]));
      who = int(k);
      all.push_back(sample);
    }
  }
  const long missing = std::count(owner.begin(), owner.end(), -1);
  if (missing > 0) {
    std::string given;
    for (const auto& shard : shards)
      given += fmt::format("{}{}/{}", given.empty() ? "" : ", ", shard.shard.index, shard.shard.count);
    const long first_missing = long(std::find(owner.begin(), owner.end(), -1) - owner.begin());
    throw ConventionError(fmt::format("{} of the {} samples are missing (first: sample {}); shards given: {}",
                                      missing, K, first_missing, given));
  }
  return summarize_uncertainty(first.nominal, first.settings, first.convention, all, first.mean_edge);
}

}  // namespace polystokes
