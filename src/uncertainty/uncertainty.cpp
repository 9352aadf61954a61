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

#include "internal/parallel.h"
#include "polystokes/core/constants.h"
#include "polystokes/core/errors.h"
#include "polystokes/io/coefficient_file.h"
#include "polystokes/mesh/geometry.h"
#include "polystokes/mesh/mesh_check.h"
#include "polystokes/mesh/mesh_measures.h"
#include "polystokes/mesh/shapes.h"
#include "polystokes/sets/conventions.h"
#include "uncertainty/sample_layout.h"

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
  for (const auto& region : body) homogeneous_mass += region_mass(region, origin);
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
      body_mass += region_mass(piece, origin);
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
    mass += region_mass(sample[k], origin);
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

}  // namespace polystokes
