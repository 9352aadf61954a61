#include "polystokes/render/comparison.h"

#include <fmt/format.h>

#include <cmath>
#include <limits>
#include <nlohmann/json.hpp>

namespace polystokes {

namespace {

std::string coefficient_name(const CoefficientDifference& d) {
  return fmt::format("{}({},{})", d.sine ? "S" : "C", d.n, d.m);
}

}  // namespace

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
      out +=
          fmt::format("  {:<22} misfit {:.3e} (x{:<9.3g}) agree to degree {:>3}{}  {}\n", h.kind(), h.misfit,
                      h.misfit > 0 ? c.misfit / h.misfit : std::numeric_limits<double>::infinity(),
                      h.agree_degree, h.explains ? " ALL" : "    ", h.description);
    }
    if (c.hypotheses.size() > shown)
      out += fmt::format("  ({} less likely explanations tested; all are in the JSON report)\n",
                         c.hypotheses.size() - shown);
  }
  if (c.uncertainty) {
    const UncertaintyComparison& u = *c.uncertainty;
    auto covered = [](int degree) {
      return degree >= 0 ? fmt::format("covariance to degree {}", degree) : std::string("sigmas only");
    };
    out += fmt::format(
        "per degree in units of the combined uncertainty (A: {}, B: {}; chi-square of A-B with the summed "
        "covariance, pseudo-inverse; 99% quantile by Wilson-Hilferty):\n",
        covered(u.covariance_degree_a), covered(u.covariance_degree_b));
    out += fmt::format("  {:>5} {:>6} {:>14} {:>12} {:>12}  {}\n", "n", "dof", "RMS (A-B)/sig", "chi-square",
                       "99% quantile", "consistent");
    for (const auto& d : u.degrees) {
      if (d.parameters == 0) {
        out += fmt::format("  {:>5} {:>6} {:>14} {:>12} {:>12}  {}\n", d.degree, 0, "-", "-", "-",
                           "no uncertainty");
        continue;
      }
      out += fmt::format("  {:>5} {:>6} {:>14.4g} {:>12.4g} {:>12.4g}  {}\n", d.degree, d.parameters,
                         d.rms_sigmas, d.chi_square, d.quantile, d.consistent ? "yes" : "NO");
    }
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
  root["origin"] = to_string(c.origin_relation);
  root["axes"] = to_string(c.axes_relation);
  // Only when a set carries frame metadata, so comparisons of sets without it read as before.
  if (!c.frame_a.empty()) root["frame_a"] = c.frame_a;
  if (!c.frame_b.empty()) root["frame_b"] = c.frame_b;
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
  for (const auto& h : c.hypotheses) {
    json entry = {
        {"kind", h.kind()},           {"description", h.description},   {"parameter", number(h.parameter)},
        {"misfit", number(h.misfit)}, {"agree_degree", h.agree_degree}, {"explains", h.explains}};
    if (h.second_parameter != 0) entry["gm_factor"] = number(h.second_parameter);
    hypotheses.push_back(entry);
  }
  root["diagnosis"] = hypotheses;
  if (c.uncertainty) {
    json degrees_u = json::array();
    for (const auto& d : c.uncertainty->degrees)
      degrees_u.push_back({{"n", d.degree},
                           {"dof", d.parameters},
                           {"rms_sigmas", d.rms_sigmas},
                           {"chi_square", d.chi_square},
                           {"quantile_99", d.quantile},
                           {"consistent", d.consistent},
                           {"from_covariance", d.from_covariance}});
    root["uncertainty"] = {{"consistent", c.uncertainty->consistent},
                           {"covariance_degree_a", c.uncertainty->covariance_degree_a},
                           {"covariance_degree_b", c.uncertainty->covariance_degree_b},
                           {"degrees", degrees_u}};
  }
  return root.dump(2) + "\n";
}

}  // namespace polystokes
