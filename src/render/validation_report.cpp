#include "polystokes/render/validation_report.h"

#include <fmt/format.h>

#include <algorithm>
#include <cmath>
#include <limits>
#include <nlohmann/json.hpp>

namespace polystokes {

std::string format_validation_text(const ValidationReport& report) {
  std::string out;
  out += "polystokes validate: series against exact constant-density polyhedron gravity\n";
  out += fmt::format(
      "  degree {}, reference radius {:.9g} m, Brillouin radius R_B {:.9g} m (about the expansion "
      "origin)\n",
      report.degree, report.reference_radius, report.brillouin_radius);
  out += fmt::format("  GM set {:.12g}, mesh {:.12g} m^3 s^-2; {} faces; {} sample directions per shell\n",
                     report.gm_set, report.gm_mesh, report.faces, report.samples);
  out +=
      "  error = largest |a_series - a_exact| / |a_exact| over the shell's points, series truncated at "
      "degree L\n\n";

  // Rows: all degrees up to 40, else a thinned set that keeps the ends and every recommended degree.
  std::vector<int> rows;
  const int step = report.degree <= 40 ? 1 : (report.degree + 29) / 30;
  for (int L = 0; L <= report.degree; ++L) {
    bool keep = L % step == 0 || L == report.degree || L <= 4;
    for (const auto& shell : report.shells) keep = keep || shell.recommended_degree == L;
    if (keep) rows.push_back(L);
  }
  out += fmt::format("  {:>6}", "degree");
  for (const auto& shell : report.shells) out += fmt::format(" {:>11}", shell.label);
  out += "\n";
  for (const int L : rows) {
    out += fmt::format("  {:>6}", L);
    for (const auto& shell : report.shells) {
      const bool mark = shell.recommended_degree == L;
      out += fmt::format(" {:>10.2e}{}", shell.max_error[size_t(L)], mark ? "*" : " ");
    }
    out += "\n";
  }
  out += fmt::format("  (* = recommended: lowest degree meeting the target {:.1e})\n\n", report.target);

  out += fmt::format("  {:<12} {:>23} {:>12} {:>12} {:>16}\n", "shell", "radius [m]", "inside R_B",
                     "recommended", "error there");
  for (const auto& shell : report.shells) {
    const std::string radius = shell.radius_max - shell.radius_min <= 1e-9 * shell.radius_max
                                   ? fmt::format("{:.6g}", shell.radius_min)
                                   : fmt::format("{:.6g}..{:.6g}", shell.radius_min, shell.radius_max);
    const std::string inside = fmt::format("{}/{}", shell.inside_brillouin, shell.points);
    const std::string degree =
        shell.recommended_degree >= 0 ? fmt::format("{}", shell.recommended_degree) : std::string("none");
    const double error = shell.recommended_degree >= 0
                             ? shell.max_error[size_t(shell.recommended_degree)]
                             : (shell.points ? shell.max_error[size_t(shell.best_degree)] : 0.0);
    out += fmt::format("  {:<12} {:>23} {:>12} {:>12} {:>16.2e}{}\n", shell.label, radius, inside, degree,
                       error, shell.inside_brillouin > 0 ? "  WARNING: inside Brillouin sphere" : "");
  }
  if (!report.warnings.empty() || !report.notes.empty()) out += "\n";
  for (const auto& warning : report.warnings) out += "  WARNING: " + warning + "\n";
  for (const auto& note : report.notes) out += "  note: " + note + "\n";
  return out;
}

std::string format_validation_json(const ValidationReport& report) {
  nlohmann::json j;
  j["degree"] = report.degree;
  j["target"] = report.target;
  j["brillouin_radius_m"] = report.brillouin_radius;
  j["reference_radius_m"] = report.reference_radius;
  j["gm_set_m3_s2"] = report.gm_set;
  j["gm_mesh_m3_s2"] = report.gm_mesh;
  j["gm_times_c00_m3_s2"] = report.gm_field;
  j["faces"] = report.faces;
  j["samples"] = report.samples;
  j["error_definition"] = "max (and rms) over the shell's points of |a_series(L) - a_exact| / |a_exact|";
  j["shells"] = nlohmann::json::array();
  for (const auto& shell : report.shells) {
    nlohmann::json s;
    s["label"] = shell.label;
    s["kind"] = shell.altitude ? "altitude" : "sphere";
    s[shell.altitude ? "altitude_m" : "radius_factor"] = shell.value;
    s["radius_min_m"] = shell.radius_min;
    s["radius_max_m"] = shell.radius_max;
    s["points"] = shell.points;
    s["inside_brillouin"] = shell.inside_brillouin;
    s["recommended_degree"] =
        shell.recommended_degree >= 0 ? nlohmann::json(shell.recommended_degree) : nlohmann::json();
    s["best_degree"] = shell.best_degree;
    s["max_error"] = shell.max_error;
    s["rms_error"] = shell.rms_error;
    j["shells"].push_back(s);
  }
  j["warnings"] = report.warnings;
  j["notes"] = report.notes;
  return j.dump(2) + "\n";
}

}  // namespace polystokes
