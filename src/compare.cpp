#include "compare.h"

#include <fmt/format.h>

#include <Eigen/Dense>
#include <algorithm>
#include <cmath>
#include <functional>
#include <limits>
#include <nlohmann/json.hpp>

#include "conventions.h"
#include "errors.h"
#include "transforms.h"

namespace polystokes {

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
    const std::string full = describe(Convention{x.normalization, false, false});
    parts.push_back(full.substr(0, full.find(',')) + " functions");
  }
  if (x.condon_shortley != y.condon_shortley)
    parts.push_back(x.condon_shortley ? "the Condon-Shortley phase" : "no Condon-Shortley phase");
  if (x.zonal_as_j != y.zonal_as_j)
    parts.push_back(x.zonal_as_j ? "J_n in the zonal column" : "C_n0 in the zonal column");
  std::string text;
  for (size_t i = 0; i < parts.size(); ++i) text += (i ? ", " : "") + parts[i];
  return text;
}

class Comparer {
 public:
  Comparer(const CoefficientSet& a, const CompareOptions& options, int degree)
      : a_(a), options_(options), degree_(degree), fully_a_(expressed_in(a, Convention{})) {
    // floor_n = relative_floor * max over k >= max(n, 1) of RMS_A,k: an upper envelope of A's spectrum from
    // above (|C00| if A has no terms beyond degree 0).
    scale_floor_.assign(size_t(degree_ + 1), 0.0);
    double envelope = 0;
    for (int n = degree_; n >= 0; --n) {
      if (n >= 1) {
        double sum = 0;
        for (int m = 0; m <= n; ++m)
          sum += fully_a_.C(n, m) * fully_a_.C(n, m) + fully_a_.S(n, m) * fully_a_.S(n, m);
        envelope = std::max(envelope, std::sqrt(sum / (2.0 * n + 1.0)));
      }
      scale_floor_[size_t(n)] =
          options_.relative_floor * (envelope > 0 ? envelope : std::abs(fully_a_.C(0, 0)));
    }
  }

  // B in A's conventions (and frame, if asked); `steps` receives what was done.
  CoefficientSet bring(const CoefficientSet& b, std::vector<std::string>* steps) const {
    CoefficientSet out = b;
    if (options_.align_frame) {
      const Eigen::Vector3d d = b.axes_in_mesh * (a_.origin_in_mesh - b.origin_in_mesh);
      if (d.norm() > 1e-12 * a_.reference_radius) {
        out = shift_origin(out, d, ShiftOptions{true});
        if (steps)
          steps->push_back(fmt::format("origin shifted by {} m (B's frame) to A's origin", vector_text(d)));
      }
      const Eigen::Matrix3d q = a_.axes_in_mesh * b.axes_in_mesh.transpose();
      if ((q - Eigen::Matrix3d::Identity()).cwiseAbs().maxCoeff() > 1e-15) {
        out = rotate_set(out, q, a_.frame);
        if (steps) steps->push_back("axes rotated to A's axes");
      }
    }
    if (out.reference_radius != a_.reference_radius) {
      if (steps)
        steps->push_back(
            fmt::format("reference radius {} m -> {} m", out.reference_radius, a_.reference_radius));
      out = rescale_reference_radius(out, a_.reference_radius);
    }
    if (out.gm != a_.gm) {
      if (steps) steps->push_back(fmt::format("GM {} -> {} m^3 s^-2", out.gm, a_.gm));
      out = rescale_gm(out, a_.gm);
    }
    if (out.convention != a_.convention) {
      if (steps)
        steps->push_back(
            fmt::format("convention {} -> {}", describe(out.convention), describe(a_.convention)));
      out = expressed_in(out, a_.convention);
    }
    return out;
  }

  // Per-degree statistics of B (already in A's conventions) against A, degrees 0..top.
  Stats stats(const CoefficientSet& b_in_a, int top = -1) const {
    if (top < 0) top = degree_;
    const CoefficientSet fb = expressed_in(b_in_a, Convention{});
    Stats out;
    double sum_relative = 0;
    bool failed = false;
    for (int n = 0; n <= top; ++n) {
      double aa = 0, bb = 0, ab = 0, dd = 0;
      for (int m = 0; m <= n; ++m) {
        const double ca = fully_a_.C(n, m), sa = fully_a_.S(n, m), cb = fb.C(n, m), sb = fb.S(n, m);
        aa += ca * ca + sa * sa;
        bb += cb * cb + sb * sb;
        ab += ca * cb + sa * sb;
        dd += (ca - cb) * (ca - cb) + (sa - sb) * (sa - sb);
      }
      DegreeComparison degree;
      degree.degree = n;
      degree.rms_a = std::sqrt(aa / (2.0 * n + 1.0));
      degree.rms_b = std::sqrt(bb / (2.0 * n + 1.0));
      degree.rms_difference = std::sqrt(dd / (2.0 * n + 1.0));
      // Relative to A (the reference), not to max(A, B): then a term that A lacks gives a difference that
      // grows with B's term instead of saturating at 1, which keeps the diagnosis fits smooth.
      degree.scale = std::max(degree.rms_a, scale_floor_[size_t(n)]);
      const double scale = degree.scale;
      degree.relative =
          degree.rms_difference <= options_.absolute_floor ? 0.0 : degree.rms_difference / scale;
      degree.correlation =
          aa > 0 && bb > 0 ? ab / std::sqrt(aa * bb) : std::numeric_limits<double>::quiet_NaN();
      degree.agrees = degree.relative <= options_.tolerance;
      if (!degree.agrees && !failed) {
        failed = true;
        out.agree_degree = n - 1;
      }
      sum_relative += degree.relative * degree.relative;
      out.degrees.push_back(degree);
    }
    if (!failed) out.agree_degree = top;
    out.agree = !failed;
    out.misfit = std::sqrt(sum_relative / (top + 1.0));
    return out;
  }

  // Statistics to degree `top` of a raw B. Every step of bring() maps degrees 0..n to degree n only, so
  // degrees above `top` are dropped first: fits on the low degrees stay cheap at any set degree.
  Stats stats_of_raw(const CoefficientSet& b_raw, int top = -1) const {
    if (top < 0 || top >= b_raw.degree) return stats(bring(b_raw, nullptr), top);
    CoefficientSet low = b_raw;
    low.degree = top;
    low.C = b_raw.C.topLeftCorner(top + 1, top + 1);
    low.S = b_raw.S.topLeftCorner(top + 1, top + 1);
    low.sigma_C = b_raw.sigma_C.topLeftCorner(top + 1, top + 1);
    low.sigma_S = b_raw.sigma_S.topLeftCorner(top + 1, top + 1);
    return stats(bring(low, nullptr), top);
  }

  Hypothesis judge(const std::string& kind, const std::string& description, double parameter,
                   const CoefficientSet& b_raw) const {
    const Stats s = stats_of_raw(b_raw);
    Hypothesis h;
    h.kind = kind;
    h.description = description;
    h.parameter = parameter;
    h.misfit = s.misfit;
    h.agree_degree = s.agree_degree;
    h.explains = s.agree;
    return h;
  }

  std::vector<Hypothesis> diagnose(const CoefficientSet& b, const Stats& baseline) const {
    std::vector<Hypothesis> out;
    // Conventions other than the declared one (numbers kept, label changed).
    for (const Convention& c : all_conventions()) {
      if (c == b.convention) continue;
      CoefficientSet relabeled = b;
      relabeled.convention = c;
      // J_n confusions concern n >= 1; C00 is positive in every convention, so its reading is kept.
      if (c.zonal_as_j != b.convention.zonal_as_j) relabeled.C(0, 0) = -b.C(0, 0);
      const bool same_norm = c.normalization == b.convention.normalization;
      const std::string kind = same_norm && c.condon_shortley == b.convention.condon_shortley ? "j_sign"
                               : same_norm && c.zonal_as_j == b.convention.zonal_as_j         ? "phase"
                                                                                      : "normalization";
      const std::string description =
          kind == "j_sign"
              ? fmt::format("B's zonal terms have the opposite sign: they are {}, not {} as declared",
                            c.zonal_as_j ? "J_n = -C_n0" : "C_n0", b.convention.zonal_as_j ? "J_n" : "C_n0")
              : fmt::format("B's numbers use {} (declared: {})", convention_difference(c, b.convention),
                            convention_difference(b.convention, c));
      out.push_back(judge(kind, description, 0, relabeled));
    }
    // Spectra ratio per degree: log(rms_a / rms_b) = n log k for a radius factor k, = log g for a GM factor
    // g.
    double sum_ny = 0, sum_nn = 0, sum_y = 0;
    int count = 0;
    for (const auto& d : baseline.degrees) {
      const double floor = std::max(options_.absolute_floor, scale_floor_[size_t(d.degree)]);
      if (d.rms_a <= floor || d.rms_b <= floor) continue;
      const double y = std::log(d.rms_a / d.rms_b);
      sum_ny += d.degree * y;
      sum_nn += double(d.degree) * d.degree;
      sum_y += y;
      ++count;
    }
    // A candidate that scales one declared number of B by e^t, t fitted from `start`.
    auto scale_candidate = [&](const char* kind, double CoefficientSet::*field, double start, auto describe) {
      auto with_factor = [&](double t) {
        CoefficientSet scaled = b;
        scaled.*field = b.*field * std::exp(t);
        return scaled;
      };
      const double t =
          refine(start, [&](double x) { return stats_of_raw(with_factor(x), fit_degree()).misfit; });
      const double factor = std::exp(t);
      out.push_back(judge(kind, describe(factor), factor, with_factor(t)));
    };
    if (sum_nn > 0)
      scale_candidate("radius", &CoefficientSet::reference_radius, sum_ny / sum_nn, [&](double k) {
        return fmt::format(
            "B's coefficients refer to a reference radius {:.9g} times the declared one, "
            "i.e. {:.9g} m instead of {:.9g} m",
            k, k * b.reference_radius, b.reference_radius);
      });
    if (count > 0)
      scale_candidate("gm", &CoefficientSet::gm, sum_y / count, [&](double g) {
        return fmt::format(
            "B's coefficients are scaled for a GM {:.9g} times the declared one, i.e. "
            "{:.9g} instead of {:.9g} m^3 s^-2",
            g, g * b.gm, b.gm);
      });
    {
      CoefficientSet flipped = b;
      flipped.S = -b.S;
      out.push_back(judge("longitude_sign",
                          "B's longitudes run the other way (S -> -S, a y -> -y reflection)", 0, flipped));
    }
    if (degree_ >= 1) {
      const double angle = fit_z_rotation(b);
      out.push_back(
          judge("z_rotation",
                fmt::format("B's axes are turned about z: rotating B by {:.9g} deg about z matches A "
                            "(longitude origins differ)",
                            angle * 180.0 / M_PI),
                angle * 180.0 / M_PI, rotate_about_z(b, angle)));
    }
    {
      CoefficientSet swapped = b;
      for (int n = 1; n <= b.degree; ++n)
        for (int m = 1; m <= n; ++m) {
          std::swap(swapped.C(n, m), swapped.S(n, m));
          std::swap(swapped.sigma_C(n, m), swapped.sigma_S(n, m));
        }
      out.push_back(judge("swapped_cs", "B's C and S columns are swapped (m >= 1)", 0, swapped));
    }
    if (degree_ >= 1 && b.degree >= 1 && b.C(0, 0) != 0 && a_.C(0, 0) != 0) {
      const Eigen::Vector3d com_b = center_of_mass_offset(b);
      const Eigen::Vector3d com_a = center_of_mass_offset(a_);
      // A's centre of mass in B's frame about B's declared origin.
      const Eigen::Vector3d com_a_in_b =
          options_.align_frame
              ? Eigen::Vector3d(b.axes_in_mesh *
                                (a_.origin_in_mesh + a_.axes_in_mesh.transpose() * com_a - b.origin_in_mesh))
              : com_a;
      const Eigen::Vector3d d = com_b - com_a_in_b;
      if (d.norm() > 1e-12 * b.reference_radius) {
        CoefficientSet moved = shift_origin(b, d, ShiftOptions{true});
        moved.origin_in_mesh =
            b.origin_in_mesh;  // the hypothesis: B's coefficients were not about its stated origin
        out.push_back(
            judge("origin",
                  fmt::format("B is expanded about another point: its degree-1 terms put the centre of mass "
                              "{} m from its origin, A's at {} m; moving B's origin by {} m ({:.6g} m) "
                              "matches A",
                              vector_text(com_b), vector_text(com_a_in_b), vector_text(d), d.norm()),
                  d.norm(), moved));
      }
    }
    // Hypotheses that explain everything come first, in the order tested (simplest first: labels, scale
    // factors, then geometry), e.g. a Condon-Shortley phase before the equivalent 180-degree turn about z;
    // the rest by the misfit they leave.
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
  double refine(double estimate, const std::function<double(double)>& misfit) const {
    const double width = 0.02 + 0.1 * std::abs(estimate);
    const double refined = golden_minimum(misfit, estimate - width, estimate + width);
    return misfit(refined) < misfit(estimate) ? refined : estimate;
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
};

std::string coefficient_name(const CoefficientDifference& d) {
  return fmt::format("{}({},{})", d.sine ? "S" : "C", d.n, d.m);
}

}  // namespace

Comparison compare_sets(const CoefficientSet& a, const CoefficientSet& b, const CompareOptions& options) {
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
  const Comparer comparer(a, options, out.degree);
  const CoefficientSet b_in_a = comparer.bring(b, &out.alignment);
  if (!options.align_frame && ((a.origin_in_mesh - b.origin_in_mesh).norm() > 1e-9 * a.reference_radius ||
                               (a.axes_in_mesh - b.axes_in_mesh).cwiseAbs().maxCoeff() > 1e-12))
    out.alignment.push_back(
        "origins or axes recorded in the sets differ; not aligned (ask for frame alignment)");
  const Stats stats = comparer.stats(b_in_a);
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

  if (!out.agree && options.diagnose) out.hypotheses = comparer.diagnose(b, stats);

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
        equivalents += (equivalents.empty() ? "" : ", ") + out.hypotheses[i].kind;
      if (best.misfit < 0.5 * out.misfit)
        text += fmt::format("; most likely {}: {} (misfit {:.3g} -> {:.3g}{}{})", best.kind, best.description,
                            out.misfit, best.misfit, best.explains ? ", agreeing at every degree" : "",
                            equivalents.empty() ? "" : "; equally explained by " + equivalents);
      else
        text += fmt::format(
            "; none of the usual mismatches explains it (best, {}, only takes the misfit from {:.3g} "
            "to {:.3g})",
            best.kind, out.misfit, best.misfit);
    }
    out.verdict = text;
  }
  return out;
}

std::string comparison_text(const Comparison& c) {
  std::string out;
  if (!c.alignment.empty()) {
    out += "B brought to A:\n";
    for (const auto& step : c.alignment) out += "  " + step + "\n";
  }
  out += "per degree (fully normalized; RMS per coefficient; relative = RMS(A-B) / RMS A):\n";
  out += fmt::format("  {:>5} {:>12} {:>12} {:>12} {:>10} {:>12}  {}\n", "n", "RMS A", "RMS B", "RMS A-B",
                     "relative", "correlation", "agree");
  for (const auto& d : c.degrees) {
    const std::string correlation = std::isnan(d.correlation) ? "-" : fmt::format("{:.9f}", d.correlation);
    out += fmt::format("  {:>5} {:>12.5e} {:>12.5e} {:>12.5e} {:>10.3e} {:>12}  {}\n", d.degree, d.rms_a,
                       d.rms_b, d.rms_difference, d.relative, correlation, d.agrees ? "yes" : "NO");
  }
  if (!c.largest.empty()) {
    out += "largest differences (A's convention):\n";
    for (const auto& d : c.largest)
      out += fmt::format("  {:<10} A {:>24} B {:>24} A-B {:.5e}\n", coefficient_name(d),
                         fmt::format("{}", d.a), fmt::format("{}", d.b), d.a - d.b);
  }
  if (!c.hypotheses.empty()) {
    out += fmt::format(
        "diagnosis (misfit = RMS over degrees of the relative difference; as given: {:.3e}):\n", c.misfit);
    constexpr size_t shown = 6;
    for (size_t i = 0; i < c.hypotheses.size() && i < shown; ++i) {
      const Hypothesis& h = c.hypotheses[i];
      out += fmt::format("  {:<15} misfit {:.3e} (x{:<9.3g}) agree to degree {:>3}{}  {}\n", h.kind, h.misfit,
                         h.misfit > 0 ? c.misfit / h.misfit : std::numeric_limits<double>::infinity(),
                         h.agree_degree, h.explains ? " ALL" : "    ", h.description);
    }
    if (c.hypotheses.size() > shown)
      out += fmt::format("  ({} less likely explanations tested; all are in the JSON report)\n",
                         c.hypotheses.size() - shown);
  }
  out += "verdict: " + c.verdict + "\n";
  return out;
}

std::string comparison_json(const Comparison& c) {
  using nlohmann::json;
  auto number = [](double x) { return std::isfinite(x) ? json(x) : json(nullptr); };
  json root;
  root["degree"] = c.degree;
  root["degree_a"] = c.degree_a;
  root["degree_b"] = c.degree_b;
  root["tolerance"] = c.tolerance;
  root["alignment"] = c.alignment;
  root["agree"] = c.agree;
  root["agree_degree"] = c.agree_degree;
  root["misfit"] = number(c.misfit);
  root["verdict"] = c.verdict;
  json degrees = json::array();
  for (const auto& d : c.degrees)
    degrees.push_back({{"n", d.degree},
                       {"rms_a", d.rms_a},
                       {"rms_b", d.rms_b},
                       {"rms_difference", d.rms_difference},
                       {"scale", d.scale},
                       {"relative", d.relative},
                       {"correlation", number(d.correlation)},
                       {"agrees", d.agrees}});
  root["degrees"] = degrees;
  json largest = json::array();
  for (const auto& d : c.largest)
    largest.push_back({{"coefficient", d.sine ? "S" : "C"}, {"n", d.n}, {"m", d.m}, {"a", d.a}, {"b", d.b}});
  root["largest_differences"] = largest;
  json hypotheses = json::array();
  for (const auto& h : c.hypotheses)
    hypotheses.push_back({{"kind", h.kind},
                          {"description", h.description},
                          {"parameter", number(h.parameter)},
                          {"misfit", number(h.misfit)},
                          {"agree_degree", h.agree_degree},
                          {"explains", h.explains}});
  root["diagnosis"] = hypotheses;
  return root.dump(2) + "\n";
}

}  // namespace polystokes
