// Statistics of a Monte Carlo run: samples summarized into sigmas and notes, and shards of one run merged.
#include <fmt/format.h>

#include <algorithm>
#include <cmath>
#include <limits>

#include "polystokes/core/errors.h"
#include "polystokes/io/shard_file.h"
#include "polystokes/sets/conventions.h"
#include "polystokes/sets/spectrum.h"
#include "polystokes/uncertainty/uncertainty.h"
#include "uncertainty/sample_layout.h"

namespace polystokes {

namespace {

constexpr double kDominanceRatio = 0.1;
constexpr double kRoundingLevel = 1e-13;

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

// Samples summed in blocks of this many: outer products as one rank-k update each (fast), and a fixed
// grouping in index order, so the sums do not depend on how the samples were split.
constexpr long kCovarianceBlock = 64;

// sum_i delta_i delta_i^T / K over the parameters of degrees 0..degree (sets/covariance.h order), samples in
// index order; the diagonal is sum_squares / K, the sums the sigmas are the square roots of.
CoefficientCovariance sample_covariance(const CoefficientSet& set,
                                        const std::vector<const SampleResult*>& ordered,
                                        const Eigen::VectorXd& sum_squares, int degree) {
  check_covariance_degree(degree);
  const long K = long(ordered.size());
  const Eigen::Index s_offset = Eigen::Index(packed_size(set.degree) / 2);
  const auto parameters = covariance_parameters(degree);
  std::vector<Eigen::Index> packed(parameters.size());
  for (size_t p = 0; p < parameters.size(); ++p)
    packed[p] =
        (parameters[p].sine ? s_offset : 0) + parameters[p].n * (parameters[p].n + 1) / 2 + parameters[p].m;
  const Eigen::Index P = Eigen::Index(parameters.size());
  Eigen::MatrixXd sum = Eigen::MatrixXd::Zero(P, P);
  Eigen::MatrixXd block(P, kCovarianceBlock);
  for (long first = 0; first < K; first += kCovarianceBlock) {
    const long count = std::min(kCovarianceBlock, K - first);
    for (long k = 0; k < count; ++k)
      for (Eigen::Index p = 0; p < P; ++p) block(p, k) = ordered[size_t(first + k)]->delta(packed[size_t(p)]);
    sum.selfadjointView<Eigen::Lower>().rankUpdate(block.leftCols(count));
  }
  CoefficientCovariance out;
  out.degree = degree;
  out.body = set.body;
  out.convention = set.convention;
  out.reference_radius = set.reference_radius;
  out.gm = set.gm;
  out.samples = K;
  out.values = sum.triangularView<Eigen::Lower>();
  out.values /= double(K);
  out.values.triangularView<Eigen::StrictlyUpper>() = out.values.transpose();
  for (Eigen::Index p = 0; p < P; ++p) out.values(p, p) = sum_squares(packed[size_t(p)]) / double(K);
  return out;
}

}  // namespace

UncertaintyResult summarize_uncertainty(const CoefficientSet& nominal, const UncertaintySettings& settings,
                                        const Convention& convention,
                                        const std::vector<SampleResult>& samples, double mean_edge,
                                        int covariance_degree) {
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
    const double noise = degree_variance(set.sigma_C, set.sigma_S, n);
    const double signal = degree_variance(set.C, set.S, n);
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
  if (covariance_degree >= 0)
    result.covariance = sample_covariance(set, ordered, sum_squares, std::min(covariance_degree, N));
  if (convention != set.convention) {
    const CoefficientSet fully = set;
    set = convert_convention(set, convention);
    if (result.covariance) {
      result.covariance = transform_covariance(
          *result.covariance, fully, [&](const CoefficientSet& s) { return expressed_in(s, convention); });
      apply_covariance_sigmas(set, *result.covariance);
    }
  }
  return result;
}

UncertaintyResult run_uncertainty(const UncertaintyPlan& plan, const SampleOptions& options,
                                  int covariance_degree) {
  return summarize_uncertainty(plan.nominal, plan.settings, plan.convention,
                               run_samples(plan, shard_samples(Shard{}, plan.settings.samples), options),
                               plan.mean_edge, covariance_degree);
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

UncertaintyResult merge_shards(const std::vector<UncertaintyShard>& shards,
                               const std::vector<std::string>& names, int covariance_degree) {
  if (shards.empty()) throw ConventionError("no shard files given");
  if (names.size() != shards.size()) throw ConventionError("one name per shard is needed");
  const UncertaintyShard& first = shards.front();
  const auto reference = shard_run_lines(first);
  for (size_t k = 1; k < shards.size(); ++k) {
    const auto lines = shard_run_lines(shards[k]);
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
  return summarize_uncertainty(first.nominal, first.settings, first.convention, all, first.mean_edge,
                               covariance_degree);
}

}  // namespace polystokes
