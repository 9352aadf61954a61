#include "polystokes/sets/compare.h"

#include <fmt/format.h>

#include <Eigen/Dense>
#include <Eigen/Eigenvalues>
#include <algorithm>
#include <cmath>
#include <functional>
#include <limits>
#include <optional>

#include "polystokes/core/errors.h"
#include "polystokes/sets/conventions.h"
#include "polystokes/sets/spectrum.h"
#include "polystokes/sets/transforms.h"
#include "sets/compare_uncertainty.h"
#include "sets/frame_relation.h"

namespace polystokes {

const std::vector<std::pair<MistakeKind, const char*>>& mistake_kind_names() {
  static const std::vector<std::pair<MistakeKind, const char*>> names = {
      {MistakeKind::normalization, "normalization"},
      {MistakeKind::phase, "phase"},
      {MistakeKind::j_sign, "j_sign"},
      {MistakeKind::radius, "radius"},
      {MistakeKind::gm, "gm"},
      {MistakeKind::longitude_sign, "longitude_sign"},
      {MistakeKind::z_rotation, "z_rotation"},
      {MistakeKind::swapped_cs, "swapped_cs"},
      {MistakeKind::origin, "origin"},
  };
  return names;
}

std::string to_string(MistakeKind kind) {
  for (const auto& [value, word] : mistake_kind_names())
    if (value == kind) return word;
  throw ConventionError(fmt::format("mistake kind {} has no name", static_cast<int>(kind)));
}

MistakeKind parse_mistake_kind(const std::string& word) {
  for (const auto& [value, name] : mistake_kind_names())
    if (word == name) return value;
  throw ConventionError("unknown mistake kind '" + word + "'");
}

std::string to_string(FrameAgreement agreement) {
  switch (agreement) {
    case FrameAgreement::same:
      return "same";
    case FrameAgreement::different:
      return "different";
    case FrameAgreement::aligned:
      return "aligned";
    case FrameAgreement::unknown:
      return kUnknownLabel;
  }
  throw ConventionError(fmt::format("frame agreement {} has no name", static_cast<int>(agreement)));
}

std::string Hypothesis::kind() const {
  std::string text;
  for (MistakeKind mistake : mistakes) text += (text.empty() ? "" : "+") + to_string(mistake);
  return text;
}

namespace {

struct Stats {
  std::vector<DegreeComparison> degrees;
  double misfit = 0;
  int agree_degree = -1;
  bool agree = false;
};

// Minimizes f on [lo, hi] by golden-section search (Kiefer 1953; Press et al. 2007, Numerical Recipes,
// 3rd ed., sec. 10.2). Returns the best abscissa seen.
double golden_minimum(const std::function<double(double)>& f, double lo, double hi) {
  const double ratio = (std::sqrt(5.0) - 1.0) / 2.0;
  double x1 = hi - ratio * (hi - lo), x2 = lo + ratio * (hi - lo);
  double f1 = f(x1), f2 = f(x2);
  for (int iteration = 0; iteration < 100 && hi - lo > 1e-14 * (1.0 + std::abs(lo)); ++iteration) {
    if (f1 <= f2) {
      hi = x2;
      x2 = x1;
      f2 = f1;
      x1 = hi - ratio * (hi - lo);
      f1 = f(x1);
    } else {
      lo = x1;
      x1 = x2;
      f1 = f2;
      x2 = lo + ratio * (hi - lo);
      f2 = f(x2);
    }
  }
  return f1 <= f2 ? x1 : x2;
}

void check_set(const CoefficientSet& set, const char* which) {
  if (!(set.reference_radius > 0) || !std::isfinite(set.reference_radius))
    throw ConventionError(fmt::format("set {} ('{}') has no valid reference radius", which, set.body));
  if (!(set.gm > 0) || !std::isfinite(set.gm))
    throw ConventionError(fmt::format("set {} ('{}') has no valid GM", which, set.body));
}

std::string vector_text(const Eigen::Vector3d& v) {
  return fmt::format("({:.6g}, {:.6g}, {:.6g})", v.x(), v.y(), v.z());
}

// The parts of convention `x` that differ from `y`, e.g. "Schmidt semi-normalized functions, the
// Condon-Shortley phase".
std::string convention_difference(const Convention& x, const Convention& y) {
  std::vector<std::string> parts;
  if (x.normalization != y.normalization) {
    parts.push_back(describe(x.normalization) + " functions");
  }
  if (x.condon_shortley != y.condon_shortley)
    parts.push_back(x.condon_shortley ? "the Condon-Shortley phase" : "no Condon-Shortley phase");
  if (x.zonal_as_j != y.zonal_as_j)
    parts.push_back(x.zonal_as_j ? "J_n in the zonal column" : "C_n0 in the zonal column");
  std::string text;
  for (size_t i = 0; i < parts.size(); ++i) text += (i ? ", " : "") + parts[i];
  return text;
}

// The per-degree factor (R_B/R_A)^n GM_B/GM_A that takes B's numbers to A's radius and GM. At a radius off
// by 1e4 it leaves the double range from degree 77 on, so where it does it is applied as a logarithm.
struct Scaling {
  double radius_ratio = 1, gm_ratio = 1;
  double log_factor(int n) const { return n * std::log(radius_ratio) + std::log(gm_ratio); }
  /// x (R_B/R_A)^n GM_B/GM_A: by multiplication where the factor and the product are normal doubles (exact
  /// for a factor of 1, and rounded as the exact rescalings round), else by logarithms.
  double apply(double x, int n) const {
    if (x == 0) return 0;
    const double factor = std::pow(radius_ratio, n) * gm_ratio;
    const double product = x * factor;
    if (std::isnormal(factor) && std::isfinite(product)) return product;
    return std::copysign(std::exp(std::log(std::abs(x)) + log_factor(n)), x);
  }
};

// sqrt(mean of x^2) without squaring overflow.
double root_mean_square(const std::vector<double>& values) {
  double largest = 0;
  for (double x : values) largest = std::max(largest, std::abs(x));
  if (largest == 0 || !std::isfinite(largest)) return largest;
  double sum = 0;
  for (double x : values) sum += (x / largest) * (x / largest);
  return largest * std::sqrt(sum / double(values.size()));
}

// log RMS per coefficient of each degree of a fully normalized set, and whether the degree stands out of
// rounding: above the absolute floor and above relative_floor times the set's own envelope (the largest
// RMS at that or any higher degree). Each set is judged by itself, so a B whose declared radius is 1000
// times off (its terms 1000^n off at A's radius) still shows its spectrum.
struct LogSpectrum {
  std::vector<double> log_rms;
  std::vector<bool> significant;
};

LogSpectrum log_spectrum(const CoefficientSet& fully, int top, const CompareOptions& options) {
  LogSpectrum out;
  std::vector<double> rms(size_t(top + 1), 0.0);
  for (int n = 0; n <= top; ++n) rms[size_t(n)] = degree_rms(fully.C, fully.S, n);
  out.log_rms.assign(rms.size(), -std::numeric_limits<double>::infinity());
  out.significant.assign(rms.size(), false);
  double envelope = 0;
  for (int n = top; n >= 0; --n) {
    if (n >= 1) envelope = std::max(envelope, rms[size_t(n)]);
    const double floor =
        std::max(options.absolute_floor, options.relative_floor * (envelope > 0 ? envelope : rms[0]));
    if (rms[size_t(n)] > 0) out.log_rms[size_t(n)] = std::log(rms[size_t(n)]);
    out.significant[size_t(n)] = rms[size_t(n)] > floor;
  }
  return out;
}

// A mistake that changes B's numbers or labels without a fitted parameter (convention, longitude sign,
// C/S swap): tested alone and paired with a fitted radius or GM factor.
struct Mistake {
  MistakeKind kind;
  std::string description;
  CoefficientSet b;
};

// The declared number of B a fit scales.
enum class Scale { radius, gm };

// A fitted hypothesis (misfit over the fitted degrees only) and B corrected as it says.
struct Fit {
  Hypothesis hypothesis;
  CoefficientSet corrected;
};

std::string radius_description(double k, double declared) {
  std::string text = fmt::format(
      "B's coefficients refer to a reference radius {:.9g} times the declared one, i.e. {:.9g} m instead of "
      "{:.9g} m",
      k, k * declared, declared);
  // Within 5% of 1000 either way: the radius (or the lengths it came from) read in the wrong one of m, km.
  if (std::abs(std::abs(std::log10(k)) - 3.0) < 0.02)
    text += k > 1 ? " (a factor of about 1000: likely a length in km read as m, e.g. a forgotten --unit km)"
                  : " (a factor of about 1/1000: likely a length in m read as km)";
  return text;
}

std::string gm_description(double g, double declared) {
  return fmt::format(
      "B's coefficients are scaled for a GM {:.9g} times the declared one, i.e. {:.9g} instead of {:.9g} "
      "m^3 s^-2",
      g, g * declared, declared);
}

class Comparer {
 public:
  Comparer(const CoefficientSet& a, const CompareOptions& options, int degree, const FrameRelation& relation)
      : a_(a), options_(options), degree_(degree), fully_a_(expressed_in(a, Convention{})) {
    // floor_n = relative_floor * max over k >= max(n, 1) of RMS_A,k: an upper envelope of A's spectrum from
    // above (|C00| if A has no terms beyond degree 0).
    scale_floor_.assign(size_t(degree_ + 1), 0.0);
    double envelope = 0;
    for (int n = degree_; n >= 0; --n) {
      if (n >= 1) envelope = std::max(envelope, degree_rms(fully_a_.C, fully_a_.S, n));
      scale_floor_[size_t(n)] =
          options_.relative_floor * (envelope > 0 ? envelope : std::abs(fully_a_.C(0, 0)));
    }
    spectrum_a_ = log_spectrum(fully_a_, degree_, options_);
    if (options_.align_frame) {
      if (relation.shift) shift_ = *relation.shift;
      if (relation.rotation) rotation_ = *relation.rotation;
    }
  }

  // B in A's conventions and (if asked and known) frame, still at B's radius and GM, with the scaling to
  // A's; `steps` receives what was done.
  CoefficientSet bring(const CoefficientSet& b, Scaling* scaling, std::vector<std::string>* steps) const {
    CoefficientSet out = b;
    if (shift_.norm() > 1e-12 * a_.reference_radius) {
      out = shift_origin(out, shift_, ShiftOptions{true});
      if (steps)
        steps->push_back(
            fmt::format("origin shifted by {} m (B's frame) to A's origin", vector_text(shift_)));
    }
    if ((rotation_ - Eigen::Matrix3d::Identity()).cwiseAbs().maxCoeff() > 1e-15) {
      out = rotate_set(out, rotation_, a_.frame);
      out.frame_metadata = a_.frame_metadata;  // B is now in A's axes
      if (steps) steps->push_back("axes rotated to A's axes");
    }
    if (steps && out.reference_radius != a_.reference_radius)
      steps->push_back(
          fmt::format("reference radius {} m -> {} m", out.reference_radius, a_.reference_radius));
    if (steps && out.gm != a_.gm) steps->push_back(fmt::format("GM {} -> {} m^3 s^-2", out.gm, a_.gm));
    scaling->radius_ratio = out.reference_radius / a_.reference_radius;
    scaling->gm_ratio = out.gm / a_.gm;
    if (out.convention != a_.convention) {
      if (steps)
        steps->push_back(
            fmt::format("convention {} -> {}", describe(out.convention), describe(a_.convention)));
      out = expressed_in(out, a_.convention);
    }
    return out;
  }

  // B's numbers at A's radius and GM (an entry beyond the double range becomes infinite).
  static CoefficientSet materialize(CoefficientSet b, const Scaling& scaling) {
    for (int n = 0; n <= b.degree; ++n)
      for (int m = 0; m <= n; ++m) {
        b.C(n, m) = scaling.apply(b.C(n, m), n);
        b.S(n, m) = scaling.apply(b.S(n, m), n);
        b.sigma_C(n, m) = scaling.apply(b.sigma_C(n, m), n);
        b.sigma_S(n, m) = scaling.apply(b.sigma_S(n, m), n);
      }
    return b;
  }

  // Per-degree statistics of B (in A's conventions, at its own radius and GM) against A, degrees 0..top.
  Stats stats(const CoefficientSet& b_in_a, const Scaling& scaling, int top = -1) const {
    if (top < 0) top = degree_;
    const CoefficientSet fb = expressed_in(b_in_a, Convention{});
    Stats out;
    std::vector<double> relatives;
    bool failed = false;
    for (int n = 0; n <= top; ++n) {
      const double f = scaling.log_factor(n);
      double aa = 0, bb_raw = 0, ab_raw = 0;
      for (int m = 0; m <= n; ++m) {
        const double ca = fully_a_.C(n, m), sa = fully_a_.S(n, m), cb = fb.C(n, m), sb = fb.S(n, m);
        aa += ca * ca + sa * sa;
        bb_raw += cb * cb + sb * sb;
        ab_raw += ca * cb + sa * sb;
      }
      DegreeComparison degree;
      degree.degree = n;
      const double count = 2.0 * n + 1.0;
      degree.rms_a = std::sqrt(aa / count);
      degree.scale = std::max(degree.rms_a, scale_floor_[size_t(n)]);
      // log of B's RMS at A's radius and GM; below ~1e150 the difference is formed term by term.
      const double log_rms_b =
          bb_raw > 0 ? f + 0.5 * std::log(bb_raw / count) : -std::numeric_limits<double>::infinity();
      if (log_rms_b < std::log(1e150)) {
        double bb = 0, dd = 0;
        for (int m = 0; m <= n; ++m) {
          const double cb = scaling.apply(fb.C(n, m), n), sb = scaling.apply(fb.S(n, m), n);
          const double ca = fully_a_.C(n, m), sa = fully_a_.S(n, m);
          bb += cb * cb + sb * sb;
          dd += (ca - cb) * (ca - cb) + (sa - sb) * (sa - sb);
        }
        degree.rms_b = std::sqrt(bb / count);
        degree.rms_difference = std::sqrt(dd / count);
        degree.relative =
            degree.rms_difference <= options_.absolute_floor ? 0.0 : degree.rms_difference / degree.scale;
      } else {
        // B outweighs A by more than 1e130 here: RMS(A - B) = RMS B to far below double precision.
        degree.rms_b = std::exp(log_rms_b);
        degree.rms_difference = degree.rms_b;
        degree.relative = std::exp(log_rms_b - std::log(degree.scale));
      }
      // Relative to A (the reference), not to max(A, B): then a term that A lacks gives a difference that
      // grows with B's term instead of saturating at 1, which keeps the diagnosis fits smooth.
      // The correlation does not depend on the scaling, so it is formed from B's own numbers.
      degree.correlation =
          aa > 0 && bb_raw > 0 ? ab_raw / std::sqrt(aa * bb_raw) : std::numeric_limits<double>::quiet_NaN();
      degree.agrees = degree.relative <= options_.tolerance;
      if (!degree.agrees && !failed) {
        failed = true;
        out.agree_degree = n - 1;
      }
      relatives.push_back(degree.relative);
      out.degrees.push_back(degree);
    }
    if (!failed) out.agree_degree = top;
    out.agree = !failed;
    out.misfit = root_mean_square(relatives);
    return out;
  }

  // Statistics to degree `top` of a raw B. Every step of bring() maps degrees 0..n to degree n only, so
  // degrees above `top` are dropped first: fits on the low degrees stay cheap at any set degree.
  Stats stats_of_raw(const CoefficientSet& b_raw, int top = -1) const {
    Scaling scaling;
    if (top < 0 || top >= b_raw.degree) return stats(bring(b_raw, &scaling, nullptr), scaling, top);
    return stats(bring(truncate_degree(b_raw, top), &scaling, nullptr), scaling, top);
  }

  Hypothesis judge(MistakeKind kind, const std::string& description, double parameter,
                   const CoefficientSet& b_raw) const {
    Hypothesis h;
    h.mistakes = {kind};
    h.description = description;
    h.parameter = parameter;
    return judge(Fit{h, b_raw});
  }

  // The fit's hypothesis with its misfit and agreement over every compared degree.
  Hypothesis judge(const Fit& fit) const {
    const Stats s = stats_of_raw(fit.corrected);
    Hypothesis h = fit.hypothesis;
    h.misfit = s.misfit;
    h.agree_degree = s.agree_degree;
    h.explains = s.agree;
    return h;
  }

  std::vector<Hypothesis> diagnose(const CoefficientSet& b) const {
    std::vector<Hypothesis> out;
    const std::vector<Mistake> mistakes = label_mistakes(b);
    for (const Mistake& mistake : mistakes)
      out.push_back(judge(mistake.kind, mistake.description, 0, mistake.b));
    for (Scale scale : {Scale::radius, Scale::gm})
      if (const auto fit = fit_scale(b, scale)) out.push_back(judge(*fit));
    if (degree_ >= 1) {
      const double angle = fit_z_rotation(b);
      out.push_back(
          judge(MistakeKind::z_rotation,
                fmt::format("B's axes are turned about z: rotating B by {:.9g} deg about z matches A "
                            "(longitude origins differ)",
                            angle * 180.0 / M_PI),
                angle * 180.0 / M_PI, rotate_about_z(b, angle)));
    }
    if (degree_ >= 1 && b.degree >= 1 && b.C(0, 0) != 0 && a_.C(0, 0) != 0) {
      const Eigen::Vector3d com_b = center_of_mass_offset(b);
      // A's centre of mass in B's frame about B's declared origin (as far as the frames were aligned).
      const Eigen::Vector3d com_a_in_b = shift_ + rotation_.transpose() * center_of_mass_offset(a_);
      const Eigen::Vector3d d = com_b - com_a_in_b;
      if (d.norm() > 1e-12 * b.reference_radius) {
        CoefficientSet moved = shift_origin(b, d, ShiftOptions{true});
        moved.origin_in_mesh =
            b.origin_in_mesh;  // the hypothesis: B's coefficients were not about its origin
        moved.origin_known = b.origin_known;
        out.push_back(
            judge(MistakeKind::origin,
                  fmt::format("B is expanded about another point: its degree-1 terms put the centre of mass "
                              "{} m from its origin, A's at {} m; moving B's origin by {} m ({:.6g} m) "
                              "matches A",
                              vector_text(com_b), vector_text(com_a_in_b), vector_text(d), d.norm()),
                  d.norm(), moved));
      }
    }
    // Two mistakes at once, tried only when no single one explains everything: each label mistake with a
    // fitted radius or GM factor, and radius and GM factors together. Ranked on the fitted degrees; the
    // best few are judged on every degree.
    if (std::none_of(out.begin(), out.end(), [](const Hypothesis& h) { return h.explains; })) {
      std::vector<Fit> pairs;
      for (const Mistake& mistake : mistakes)
        for (Scale scale : {Scale::radius, Scale::gm})
          if (auto fit = fit_scale(mistake.b, scale)) {
            fit->hypothesis.mistakes.insert(fit->hypothesis.mistakes.begin(), mistake.kind);
            fit->hypothesis.description = mistake.description + "; and " + fit->hypothesis.description;
            pairs.push_back(std::move(*fit));
          }
      if (auto fit = fit_radius_and_gm(b)) pairs.push_back(std::move(*fit));
      std::stable_sort(pairs.begin(), pairs.end(),
                       [](const Fit& x, const Fit& y) { return x.hypothesis.misfit < y.hypothesis.misfit; });
      constexpr size_t judged_pairs = 3;
      for (size_t i = 0; i < pairs.size() && i < judged_pairs; ++i) out.push_back(judge(pairs[i]));
    }
    // Hypotheses that explain everything come first, in the order tested (simplest first: labels, scale
    // factors, geometry, then pairs), e.g. a Condon-Shortley phase before the equivalent 180-degree turn
    // about z; the rest by the misfit they leave.
    std::stable_sort(out.begin(), out.end(), [](const Hypothesis& x, const Hypothesis& y) {
      if (x.explains != y.explains) return x.explains;
      return !x.explains && x.misfit < y.misfit;
    });
    return out;
  }

 private:
  // Parameters are fitted on degrees 0..16 (or the set's degree): the low degrees fix them well, and each
  // trial then costs little even when bringing B to A involves an O(degree^4) origin shift.
  int fit_degree() const { return std::min(degree_, 16); }

  // Keeps the better of a closed-form estimate and a golden-section refinement around it.
  double refine(double estimate, const std::function<double(double)>& misfit, double min_width = 0) const {
    const double width = std::max(min_width, 0.02 + 0.1 * std::abs(estimate));
    const double refined = golden_minimum(misfit, estimate - width, estimate + width);
    return misfit(refined) < misfit(estimate) ? refined : estimate;
  }

  // Convention, longitude-sign and C/S-swap mistakes: B's numbers read another way.
  std::vector<Mistake> label_mistakes(const CoefficientSet& b) const {
    std::vector<Mistake> out;
    for (const Convention& c : all_conventions()) {
      if (c == b.convention) continue;
      CoefficientSet relabeled = b;
      relabeled.convention = c;
      const bool same_norm = c.normalization == b.convention.normalization;
      const MistakeKind kind =
          same_norm && c.condon_shortley == b.convention.condon_shortley ? MistakeKind::j_sign
          : same_norm && c.zonal_as_j == b.convention.zonal_as_j         ? MistakeKind::phase
                                                                         : MistakeKind::normalization;
      const std::string description =
          kind == MistakeKind::j_sign
              ? fmt::format("B's zonal terms have the opposite sign: they are {}, not {} as declared",
                            c.zonal_as_j ? "J_n = -C_n0" : "C_n0", b.convention.zonal_as_j ? "J_n" : "C_n0")
              : fmt::format("B's numbers use {} (declared: {})", convention_difference(c, b.convention),
                            convention_difference(b.convention, c));
      out.push_back({kind, description, relabeled});
    }
    {
      CoefficientSet flipped = b;
      flipped.S = -b.S;
      out.push_back({MistakeKind::longitude_sign,
                     "B's longitudes run the other way (S -> -S, a y -> -y reflection)", flipped});
    }
    {
      CoefficientSet swapped = b;
      for (int n = 1; n <= b.degree; ++n)
        for (int m = 1; m <= n; ++m) {
          std::swap(swapped.C(n, m), swapped.S(n, m));
          std::swap(swapped.sigma_C(n, m), swapped.sigma_S(n, m));
        }
      out.push_back({MistakeKind::swapped_cs, "B's C and S columns are swapped (m >= 1)", swapped});
    }
    return out;
  }

  // y_n = log(RMS A_n / RMS B_n at A's radius and GM) on the degrees where both spectra stand out of
  // rounding, each by its own envelope; y_n = n log k for a radius factor k, log g for a GM factor g.
  std::vector<std::pair<int, double>> log_spectrum_ratio(const CoefficientSet& b) const {
    Scaling scaling;
    const int top = std::min(fit_degree(), b.degree);
    const CoefficientSet fb = expressed_in(bring(truncate_degree(b, top), &scaling, nullptr), Convention{});
    const LogSpectrum spectrum_b = log_spectrum(fb, top, options_);
    std::vector<std::pair<int, double>> out;
    for (int n = 0; n <= top; ++n)
      if (spectrum_a_.significant[size_t(n)] && spectrum_b.significant[size_t(n)])
        out.emplace_back(
            n, spectrum_a_.log_rms[size_t(n)] - spectrum_b.log_rms[size_t(n)] - scaling.log_factor(n));
    return out;
  }

  static CoefficientSet with_scales(const CoefficientSet& b, double log_radius, double log_gm) {
    CoefficientSet scaled_b = b;
    scaled_b.reference_radius = b.reference_radius * std::exp(log_radius);
    scaled_b.gm = b.gm * std::exp(log_gm);
    return scaled_b;
  }

  // Fits one factor on B's declared radius or GM: from the closed-form estimate or a scan of factors
  // 1e-4..1e4 (a radius or GM given in the wrong unit), whichever leaves less misfit, refined by
  // golden-section search.
  std::optional<Fit> fit_scale(const CoefficientSet& b, Scale scale) const {
    const auto ratio = log_spectrum_ratio(b);
    double sum_ny = 0, sum_nn = 0, sum_y = 0;
    for (const auto& [n, y] : ratio) {
      sum_ny += n * y;
      sum_nn += double(n) * n;
      sum_y += y;
    }
    const bool radius = scale == Scale::radius;
    if (radius ? !(sum_nn > 0) : ratio.empty()) return std::nullopt;
    const auto with = [&](double t) { return radius ? with_scales(b, t, 0) : with_scales(b, 0, t); };
    const auto misfit = [&](double t) { return stats_of_raw(with(t), fit_degree()).misfit; };
    double start = radius ? sum_ny / sum_nn : sum_y / double(ratio.size());
    double best = misfit(start);
    const double step = std::log(10.0) / 4;
    for (int i = -16; i <= 16; ++i)
      if (const double value = misfit(i * step); value < best) {
        best = value;
        start = i * step;
      }
    const double t = refine(start, misfit, step);
    const double factor = std::exp(t);
    Fit fit{Hypothesis{}, with(t)};
    fit.hypothesis.mistakes = {radius ? MistakeKind::radius : MistakeKind::gm};
    fit.hypothesis.description =
        radius ? radius_description(factor, b.reference_radius) : gm_description(factor, b.gm);
    fit.hypothesis.parameter = factor;
    fit.hypothesis.misfit = misfit(t);
    return fit;
  }

  // Radius and GM factors together: the line y_n = log g + n log k through the log spectra ratio, then
  // alternating golden-section refinements of each.
  std::optional<Fit> fit_radius_and_gm(const CoefficientSet& b) const {
    const auto ratio = log_spectrum_ratio(b);
    if (ratio.size() < 2) return std::nullopt;
    double sn = 0, sy = 0, snn = 0, sny = 0;
    for (const auto& [n, y] : ratio) {
      sn += n;
      sy += y;
      snn += double(n) * n;
      sny += n * y;
    }
    const double count = double(ratio.size()), denominator = count * snn - sn * sn;
    if (!(denominator > 0)) return std::nullopt;
    double log_k = (count * sny - sn * sy) / denominator, log_g = (sy - log_k * sn) / count;
    const auto misfit = [&](double k, double g) {
      return stats_of_raw(with_scales(b, k, g), fit_degree()).misfit;
    };
    for (int round = 0; round < 3; ++round) {
      log_k = refine(log_k, [&](double t) { return misfit(t, log_g); });
      log_g = refine(log_g, [&](double t) { return misfit(log_k, t); });
    }
    const double k = std::exp(log_k), g = std::exp(log_g);
    Fit fit{Hypothesis{}, with_scales(b, log_k, log_g)};
    fit.hypothesis.mistakes = {MistakeKind::radius, MistakeKind::gm};
    fit.hypothesis.description =
        radius_description(k, b.reference_radius) + "; and " + gm_description(g, b.gm);
    fit.hypothesis.parameter = k;
    fit.hypothesis.second_parameter = g;
    fit.hypothesis.misfit = misfit(log_k, log_g);
    return fit;
  }

  // The angle about z that best matches A: a 0.5-degree grid on the low degrees (smooth in the angle), then
  // golden-section refinement with more and more degrees (up to fit_degree) in brackets narrower than their
  // oscillation.
  double fit_z_rotation(const CoefficientSet& b) const {
    int top = std::min(degree_, 4);
    auto misfit_at = [&](double angle, int up_to) {
      return stats_of_raw(rotate_about_z(b, angle), up_to).misfit;
    };
    double best = 0, best_misfit = std::numeric_limits<double>::infinity();
    for (int i = 0; i < 720; ++i) {
      const double angle = -M_PI + i * M_PI / 360.0;
      const double value = misfit_at(angle, top);
      if (value < best_misfit) {
        best_misfit = value;
        best = angle;
      }
    }
    double half_width = M_PI / 360.0;
    while (true) {
      best =
          golden_minimum([&](double x) { return misfit_at(x, top); }, best - half_width, best + half_width);
      if (top == fit_degree()) break;
      top = std::min(fit_degree(), 2 * top);
      half_width = M_PI / (4.0 * top);
    }
    return best;
  }

  const CoefficientSet& a_;
  CompareOptions options_;
  int degree_;
  CoefficientSet fully_a_;
  std::vector<double> scale_floor_;  // per degree, see the constructor
  LogSpectrum spectrum_a_;
  // The alignment applied to B (zero and identity unless asked for and known).
  Eigen::Vector3d shift_ = Eigen::Vector3d::Zero();
  Eigen::Matrix3d rotation_ = Eigen::Matrix3d::Identity();
};

}  // namespace

Comparison compare_sets(const CoefficientSet& a, const CoefficientSet& b, const CompareOptions& options,
                        const CoefficientCovariance* covariance_a,
                        const CoefficientCovariance* covariance_b) {
  check_set(a, "A");
  check_set(b, "B");
  if (!(options.tolerance >= 0) || !(options.absolute_floor >= 0) || !(options.relative_floor >= 0))
    throw ConventionError("tolerances must be non-negative");
  Comparison out;
  out.degree_a = a.degree;
  out.degree_b = b.degree;
  out.degree = std::min(a.degree, b.degree);
  if (options.max_degree >= 0) out.degree = std::min(out.degree, options.max_degree);
  out.tolerance = options.tolerance;
  if (a.degree != b.degree)
    out.alignment.push_back(
        fmt::format("compared to degree {} (A has degree {}, B degree {})", out.degree, a.degree, b.degree));
  const FrameRelation relation = relate_frames(a, b);
  describe_frames(a, relation, options.align_frame, out);
  out.frame_a = describe(a.frame_metadata);
  out.frame_b = describe(b.frame_metadata);
  if (a.frame_metadata.name && b.frame_metadata.name && *a.frame_metadata.name != *b.frame_metadata.name)
    out.alignment.push_back(fmt::format("the sets name different frames: A '{}', B '{}'",
                                        *a.frame_metadata.name, *b.frame_metadata.name));
  const Comparer comparer(a, options, out.degree, relation);
  Scaling scaling;
  const CoefficientSet b_brought = comparer.bring(b, &scaling, &out.alignment);
  const Stats stats = comparer.stats(b_brought, scaling);
  const CoefficientSet b_in_a = Comparer::materialize(b_brought, scaling);
  out.degrees = stats.degrees;
  out.agree_degree = stats.agree_degree;
  out.agree = stats.agree;
  out.misfit = stats.misfit;

  for (int n = 0; n <= out.degree; ++n)
    for (int m = 0; m <= n; ++m)
      for (bool sine : {false, true}) {
        if (sine && m == 0) continue;
        CoefficientDifference d{n, m, sine, (sine ? a.S : a.C)(n, m), (sine ? b_in_a.S : b_in_a.C)(n, m)};
        if (d.a != d.b) out.largest.push_back(d);
      }
  const size_t keep = std::min(out.largest.size(), size_t(std::max(0, options.largest_count)));
  std::partial_sort(out.largest.begin(), out.largest.begin() + long(keep), out.largest.end(),
                    [](const CoefficientDifference& x, const CoefficientDifference& y) {
                      return std::abs(x.a - x.b) > std::abs(y.a - y.b);
                    });
  out.largest.resize(keep);

  if (!out.agree && options.diagnose) out.hypotheses = comparer.diagnose(b);

  if (covariance_a || covariance_b || has_sigmas(a, out.degree) || has_sigmas(b, out.degree)) {
    const Convention fully{};
    std::optional<CoefficientCovariance> ca, cb;
    if (covariance_a)
      ca = transform_covariance(*covariance_a, a,
                                [&](const CoefficientSet& s) { return expressed_in(s, fully); });
    if (covariance_b)
      cb = transform_covariance(*covariance_b, b, [&](const CoefficientSet& s) {
        Scaling unit_scaling;
        const CoefficientSet brought = comparer.bring(s, &unit_scaling, nullptr);
        return expressed_in(Comparer::materialize(brought, unit_scaling), fully);
      });
    out.uncertainty =
        compare_uncertainty(expressed_in(a, fully), expressed_in(b_in_a, fully), ca, cb, out.degree);
  }

  if (out.agree) {
    const auto worst = std::max_element(
        out.degrees.begin(), out.degrees.end(),
        [](const DegreeComparison& x, const DegreeComparison& y) { return x.relative < y.relative; });
    out.verdict = worst->relative == 0
                      ? fmt::format(
                            "AGREE: A and B agree within {:.3g} at every degree 0..{} (every RMS difference "
                            "is within the rounding floor {:.3g})",
                            options.tolerance, out.degree, options.absolute_floor)
                      : fmt::format(
                            "AGREE: A and B agree within {:.3g} at every degree 0..{} (largest relative RMS "
                            "difference {:.3g} at degree {})",
                            options.tolerance, out.degree, worst->relative, worst->degree);
  } else {
    const DegreeComparison& first = out.degrees[size_t(out.agree_degree + 1)];
    std::string text =
        out.agree_degree >= 0
            ? fmt::format(
                  "DIFFER: A and B agree within {:.3g} up to degree {}; degree {} differs by "
                  "{:.3g} (relative RMS)",
                  options.tolerance, out.agree_degree, first.degree, first.relative)
            : fmt::format("DIFFER: A and B differ from degree 0 on (relative RMS {:.3g} at degree 0)",
                          first.relative);
    if (!out.hypotheses.empty()) {
      const Hypothesis& best = out.hypotheses.front();
      std::string equivalents;
      for (size_t i = 1; i < out.hypotheses.size() && out.hypotheses[i].explains && best.explains; ++i)
        equivalents += (equivalents.empty() ? "" : ", ") + out.hypotheses[i].kind();
      if (best.explains)
        text += fmt::format("; most likely {}: {} (misfit {:.3g} -> {:.3g}, agreeing at every degree{})",
                            best.kind(), best.description, out.misfit, best.misfit,
                            equivalents.empty() ? "" : "; equally explained by " + equivalents);
      else if (best.misfit < 0.5 * out.misfit)
        text += fmt::format(
            "; the best explanation, {}, only partly explains it: {} (misfit {:.3g} -> {:.3g}, agreeing up "
            "to degree {} of {}); something else differs as well",
            best.kind(), best.description, out.misfit, best.misfit, best.agree_degree, out.degree);
      else
        text += fmt::format(
            "; none of the usual mismatches explains it (best, {}, only takes the misfit from {:.3g} "
            "to {:.3g})",
            best.kind(), out.misfit, best.misfit);
    }
    out.verdict = text;
  }
  if (out.uncertainty) out.verdict += uncertainty_verdict(*out.uncertainty);
  return out;
}

}  // namespace polystokes
